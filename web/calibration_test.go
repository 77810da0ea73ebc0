package web

import (
	"context"
	"html"
	"math"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"coeval/stats"
	"coeval/store"
)

// TestRenneCovarianceOnPages: on a Renne et al. calibration the date page's full external ± uses the
// covariance of λ and the monitor age and says so; the calibrations page lists the correlation; the
// unit summary's level says so too; a calibration from independent sources says nothing of a covariance.
func TestRenneCovarianceOnPages(t *testing.T) {
	h, db := summaryTestServer(t)
	ds, _, err := db.Dates(context.Background(), store.DateFilter{Text: "HV-03-03"})
	if err != nil || len(ds) != 1 {
		t.Fatalf("demo date HV-03-03: %v, %v", ds, err)
	}
	d := ds[0]
	// testdata/demo/dates.csv: HV-03-03, 154.375 ± 0.234 Ma (1σ analytical) on FCs 28.02 Ma, λ 5.543e-10.
	from := stats.Calibration{LambdaPerA: 5.543e-10, MonitorAgeMa: 28.02}
	// migrations/008_calibration_covariance.sql (derivation in stats.Calibrations): Renne et al. 2011,
	// λ 5.5305e-10 ± 0.0132e-10, FCs 28.294 ± 0.0183 Ma, correlation 0.25 (1σ).
	const lam, sLam, mon, sMon, rho = 5.5305e-10, 0.0132e-10, 28.294, 0.0183, 0.25
	to := stats.Calibration{LambdaPerA: lam, MonitorAgeMa: mon}
	age := stats.RecalculateAgeMa(d.AgeMa, from, to) // REFERENCES §3 relation, checked in stats
	// Closed form from the raw inputs: the recalculated age's partial derivatives with respect to the
	// input age, λ' and t_s' by central differences of the exact relation, then
	// σ² = σ_a² + a² + b² + 2ρab (first-order propagation with correlated inputs, common practice).
	moved := func(dAge, dLam, dMon float64) float64 {
		c := to
		c.LambdaPerA += dLam
		c.MonitorAgeMa += dMon
		return stats.RecalculateAgeMa(d.AgeMa+dAge, from, c)
	}
	ana := (moved(1e-4, 0, 0) - moved(-1e-4, 0, 0)) / 2e-4 * d.SigmaMa
	a := (moved(0, 0, 1e-4) - moved(0, 0, -1e-4)) / 2e-4 * sMon
	b := (moved(0, lam*1e-5, 0) - moved(0, -lam*1e-5, 0)) / (2 * lam * 1e-5) * sLam
	full := math.Sqrt(ana*ana + a*a + b*b + 2*rho*a*b)
	indep := math.Sqrt(ana*ana + a*a + b*b)
	t.Logf("HV-03-03 on renne11: %.4f Ma, 1σ analytical %.4f, full %.4f (independent terms %.4f, monitor alone at 0.036 %.4f)",
		age, ana, full, indep, math.Hypot(ana, a/sMon*0.036))

	fullRe := regexp.MustCompile(`^([0-9.]+) Ma \(2σ, (.*)\)$`)
	g := groups(mustFetch(t, h, idURL("/dates", d.ID)+"?cal=renne11-fcs28294"))["Recalculated to Renne et al. 2011, FCs 28.294 Ma"]
	m := fullRe.FindStringSubmatch(strings.Join(g["± full external"], ""))
	if m == nil {
		t.Fatalf("± full external %q", g["± full external"])
	}
	decimals := len(m[1]) - strings.Index(m[1], ".") - 1
	if got, want := m[1], strconv.FormatFloat(2*full, 'f', decimals, 64); got != want {
		t.Errorf("full external ± %s Ma (2σ), want %s from the closed form with the covariance", got, want)
	}
	if !strings.Contains(m[2], "their covariance (correlation 0.25") {
		t.Errorf("full external ± does not say the covariance is used: %q", m[2])
	}
	if c := strings.Join(g["Caution"], ""); c != "" {
		t.Errorf("caution %q on a calibration that stores both σ", c)
	}

	g = groups(mustFetch(t, h, idURL("/dates", d.ID)+"?cal=min00-fcs28201"))["Recalculated to Min et al. 2000 λ, FCs 28.201 Ma"]
	if f := strings.Join(g["± full external"], ""); !strings.HasSuffix(f, "(2σ, with the calibration's monitor-age and decay-constant terms)") {
		t.Errorf("independent calibration: ± full external %q", f)
	}

	want := map[string]string{"Renne et al. 2011, FCs 28.294 Ma": "0.25", "Renne et al. 2010, FCs 28.305 Ma": "0.25",
		"Min et al. 2000 λ, FCs 28.201 Ma": "0.00", "Steiger & Jäger 1977 λ, FCs 28.02 Ma": "0.00"}
	page := mustFetch(t, h, "/calibrations")
	for _, r := range htmlTable(t, page, "calibrations") {
		if w, ok := want[r.cells[0]]; !ok || r.cells[6] != w {
			t.Errorf("calibrations page: %q correlation %q, want %q", r.cells[0], r.cells[6], w)
		}
	}
	if !strings.Contains(html.UnescapeString(page), "their covariance is used") {
		t.Error("calibrations page does not say the covariance is used")
	}

	prov := provinceURL(t, db)
	if p := html.UnescapeString(mustFetch(t, h, prov+"/summary?level=full&cal=renne11-fcs28294")); !strings.Contains(p, "full external (⊕ monitor age and λ, with their covariance (correlation 0.25))") {
		t.Error("summary on renne11 at full level does not say the covariance is used")
	}
	if p := html.UnescapeString(mustFetch(t, h, prov+"/summary?level=full&cal=min00-fcs28201")); strings.Contains(p, "with their covariance (correlation") {
		t.Error("summary on an independent calibration speaks of a covariance")
	}
}

// The calibrations page says once, plainly, which values are not checked against their papers, never
// "from memory" nor a bare "not given"; and the values it says were checked are those stored.
func TestCalibrationsPageSaysWhatIsChecked(t *testing.T) {
	h, db := summaryTestServer(t)
	page := html.UnescapeString(mustFetch(t, h, "/calibrations"))
	for _, bad := range []string{"from memory", "not given"} {
		if strings.Contains(page, bad) {
			t.Errorf("calibrations page says %q", bad)
		}
	}
	if n := strings.Count(page, "Not every value here has been checked against its paper"); n != 1 {
		t.Errorf("the unchecked values are named %d times, want once", n)
	}
	if !strings.Contains(page, "Steiger & Jäger 1977, EPSL 36:359, who give no uncertainty for it") {
		t.Error("σ(λ) of Steiger & Jäger is not said in words")
	}
	cals, err := db.Calibrations(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	byCode := map[string]store.Calibration{}
	for _, c := range cals {
		byCode[c.Code] = c
	}
	// Renne et al. 2010, GCA 74:5349, abstract: λε = 0.5755e-10 a⁻¹, λβ = 4.9737e-10 a⁻¹, FCs 28.305 ± 0.036 Ma.
	r10 := byCode["renne10-fcs28305"]
	if got, want := r10.LambdaPerA, 0.5755e-10+4.9737e-10; math.Abs(got-want) > 1e-16 {
		t.Errorf("Renne et al. 2010 λ %g, want λε + λβ = %g", got, want)
	}
	if r10.MonitorAgeMa != 28.305 || r10.MonitorSigmaMa == nil || math.Abs(*r10.MonitorSigmaMa-0.036/2) > 1e-12 {
		t.Errorf("Renne et al. 2010 FCs %g ± %v, want 28.305 with 1σ = 0.036/2", r10.MonitorAgeMa, r10.MonitorSigmaMa)
	}
	// Kuiper et al. 2008, Science 320:500, abstract: FCs 28.201 ± 0.046 Ma (read as 2σ).
	k08 := byCode["min00-fcs28201"]
	if k08.MonitorAgeMa != 28.201 || k08.MonitorSigmaMa == nil || math.Abs(*k08.MonitorSigmaMa-0.046/2) > 1e-12 {
		t.Errorf("Kuiper et al. 2008 FCs %g ± %v, want 28.201 with 1σ = 0.046/2", k08.MonitorAgeMa, k08.MonitorSigmaMa)
	}
	for _, c := range cals {
		if st := calibrationStandingOf(c); st.Source == c.Source && st.Checked == "—" {
			t.Errorf("calibration %s has no standing on the page", c.Code)
		}
		// The stored source (which the JSON and the downloads carry) says the same (migration 016).
		if strings.Contains(c.Source, "from memory") {
			t.Errorf("calibration %s: its stored source still says “from memory”: %s", c.Code, c.Source)
		}
	}
	if !strings.Contains(byCode["renne10-fcs28305"].Source, "as in its abstract") || !strings.Contains(byCode["renne11-fcs28294"].Source, "not yet checked") {
		t.Error("the stored sources do not say which values were checked against the papers")
	}
}
