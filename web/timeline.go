package web

import (
	"context"
	"fmt"
	"math"
	"net/http"
	"net/url"
	"slices"
	"strconv"

	"github.com/go-chi/chi/v5"

	"coeval/stats"
	"coeval/store"
	"coeval/views"
)

// The eruptive history of a province as a density through time: what is counted (one value per unit,
// its weighted mean from the unit summaries, or every date), the KDE with its bandwidth rule, its
// bootstrap band, the pulses with their uncertain edges, and an optional PDP. Every choice is in the
// URL (densityChoice); the numerics are stats'.

func (s *Server) registerTimelineRoutes(r chi.Router) {
	r.Get("/provinces/{id}/timeline", s.handle(s.handleTimeline))
	r.With(s.requireRole(store.RoleContributor)).Post("/provinces/{id}/pulses", s.handle(s.handlePulsesSave))
	r.Get("/timescale", s.handle(s.handleTimescale))
}

// timelineURL is the province's timeline with the summary choices of the current view kept.
func timelineURL(r *http.Request, id int64) string {
	q := url.Values{}
	for _, k := range []string{"cal", "level", "sigma", "policy", "rule", "mswd_range", "include"} {
		if v := r.URL.Query().Get(k); v != "" {
			q.Set(k, v)
		}
	}
	u := idURL("/provinces", id) + "/timeline"
	if len(q) > 0 {
		u += "?" + q.Encode()
	}
	return u
}

// densityChoice is every choice of the density and its figure, read from the URL.
type densityChoice struct {
	stop     func() error        // asked between replicates: the request's context's Err (nil: never stops)
	Sum      summaryChoice       // cal, level, sigma, policy, rule, include: how unit means are made
	Count    string              // count=unit|date (default unit)
	Weight   string              // weight=none|volume (default none)
	Rule     stats.BandwidthRule // bw=isj|scott|silverman|silverman-robust|user (default isj)
	UserHMa  float64             // h= (Ma), with bw=user
	Adaptive bool                // adaptive=1: Abramson's per-value bandwidths, the rule's h as pilot
	PDP      bool                // pdp=1: draw the PDP too
	FromMa   *float64            // from=, to=: the age window in Ma (either order; either may be left out)
	ToMa     *float64
	Seed     uint64 // seed= (default 1)
	Reps     int    // reps= bootstrap replicates (default 1000)
	BWEach   bool   // bw_each=1: the rule applied afresh in every replicate (closed-form rules only: see densityChoice)
	Format   string // format=html|svg|png|pdf|csv|json
	Table    string // table=pulses|density|values, for format=csv
}

const (
	defaultSeed = 1
	defaultReps = 1000
	maxReps     = 10000
	// minPoints and maxPoints bound the density grid; between them it has 8 points per bandwidth (or
	// per smallest σ of a PDP), enough for a smooth curve and no more: every bootstrap replicate is
	// evaluated on it.
	minPoints = 256
	maxPoints = 2048
)

// densityPoints is the number of grid points over a window of spanMa for a bandwidth hMa.
func densityPoints(spanMa, hMa float64, ch densityChoice, sigmas []float64) int {
	finest := hMa
	if ch.PDP {
		finest = math.Min(finest, slices.Min(sigmas))
	}
	n := int(math.Ceil(8 * spanMa / finest))
	return min(max(n, minPoints), maxPoints)
}

var bandwidthRules = []string{"isj", "scott", "silverman", "silverman-robust", "user"}

func onOff(p *params, name string) bool { return p.oneOf(name, []string{"0", "1"}, "0") == "1" }

func (s *Server) densityChoice(ctx context.Context, p *params) (densityChoice, error) {
	sum, err := s.summaryChoice(ctx, p)
	if err != nil {
		return densityChoice{}, err
	}
	ch := densityChoice{Sum: sum}
	ch.Format = p.oneOf("format", []string{"html", "svg", "png", "pdf", "csv", "json"}, "html")
	ch.Table = p.oneOf("table", []string{"pulses", "density", "values"}, "pulses")
	ch.Count = p.oneOf("count", []string{"unit", "date"}, "unit")
	ch.Weight = p.oneOf("weight", []string{"none", "volume"}, "none")
	ch.Rule, _ = stats.ParseBandwidthRule(p.oneOf("bw", bandwidthRules, "isj"))
	h := p.optFloat("h", "a bandwidth in Ma")
	if ch.Rule == stats.RuleUser {
		switch {
		case h == nil:
			p.problems = append(p.problems, "h: bw=user needs a bandwidth h in Ma (a number > 0)")
		case !(*h > 0):
			p.problems = append(p.problems, fmt.Sprintf("h: want a bandwidth in Ma > 0, got %s", num(*h)))
		default:
			ch.UserHMa = *h
		}
	}
	ch.Adaptive = onOff(p, "adaptive")
	ch.PDP = onOff(p, "pdp")
	for _, w := range []struct {
		name string
		dst  **float64
	}{{"from", &ch.FromMa}, {"to", &ch.ToMa}} {
		v := p.optFloat(w.name, "an age in Ma")
		if v != nil && (*v < 0 || *v > 4600) {
			p.problems = append(p.problems, fmt.Sprintf("%s: want an age in Ma from 0 to 4600, got %s", w.name, num(*v)))
			v = nil
		}
		*w.dst = v
	}
	if ch.FromMa != nil && ch.ToMa != nil && *ch.FromMa == *ch.ToMa {
		p.problems = append(p.problems, "from, to: the window needs two different ages")
	}
	// bw_each=1 lets the band carry the bandwidth's own uncertainty. ISJ is refused there: its root search
	// on a 2¹⁴-point grid costs milliseconds, seconds over a page's replicates.
	ch.BWEach = onOff(p, "bw_each")
	if ch.BWEach && (ch.Rule == stats.RuleISJ || ch.Rule == stats.RuleUser) {
		p.problems = append(p.problems, fmt.Sprintf("bw_each: re-estimating the bandwidth in every replicate needs bw=scott, silverman or silverman-robust, not %s (ISJ in every replicate would take seconds; a set h has nothing to re-estimate)", ch.Rule))
	}
	ch.Seed = uint64(p.int("seed", defaultSeed, 0, math.MaxInt32))
	ch.Reps = p.int("reps", defaultReps, 100, maxReps)
	return ch, nil
}

// densityValue is one value counted in the density: a unit's weighted mean, or one date.
type densityValue struct {
	UnitID  int64   `json:"unit_id"`
	Unit    string  `json:"unit"`
	DateIDs []int64 `json:"date_ids"`
	Sample  string  `json:"sample_code,omitempty"` // count=date
	System  string  `json:"system"`
	AgeMa   float64 `json:"age_ma"`
	Sigma1s float64 `json:"sigma_ma_1s"`
	Weight  float64 `json:"weight"`
	N       int     `json:"n_dates"`
	// Random1s is the part of Sigma1s that is the value's own (the bootstrap's jitter); syst and cal
	// are the components the level puts in common with other values, drawn once per replicate.
	Random1s float64            `json:"-"`
	syst     []stats.Systematic `json:"-"`
	cal      *stats.Calibration `json:"-"`
}

// withParts sets the value's random 1σ and the components its level shares with other values: at the
// tracer level a U–Pb value's tracer (when its dates name one), at full also λ238, and an ⁴⁰Ar/³⁹Ar
// value's calibration. A term the level includes but no component names (a tracer not named, a system
// without stored components) stays in the value's own σ. analytical is the value's analytical 1σ.
func (v densityValue) withParts(sys *systemSummary, analytical float64, ch summaryChoice) densityValue {
	v.Random1s = v.Sigma1s
	switch {
	case ch.Level == stats.Analytical:
		v.Random1s = analytical
	case sys.Key == "upb":
		tracer := sys.tracerName()
		v.Random1s = analytical
		if tracer == "" {
			v.Random1s = math.Hypot(analytical, sys.TracerRel*v.AgeMa)
		}
		syst := stats.UPbSystematics(tracer, sys.TracerRel)
		if ch.Level == stats.WithTracer {
			syst = slices.DeleteFunc(syst, func(s stats.Systematic) bool { return s.Key == stats.KeyLambda238 })
		}
		v.syst = syst
	case sys.Key == "arar" && ch.Level == stats.FullExternal:
		cal := ch.Cal.Stats
		v.Random1s, v.cal = analytical, &cal
	case sys.Key == "arar":
		v.Random1s = analytical
	}
	return v
}

// sharedComponents gathers the values' components, one per key with the values that carry it (the
// largest σ where two values describe one key differently).
func sharedComponents(vals []densityValue) []stats.SharedComponent {
	return stats.GatherShared(len(vals), func(i int) ([]stats.Systematic, *stats.Calibration) { return vals[i].syst, vals[i].cal })
}

// densityResult is the density of a province and what went into it.
type densityResult struct {
	Values    []densityValue
	Left      []string // what was left out of the count, and why
	NoVolume  []string // units without a volume (weight=volume leaves them out)
	SetAside  map[int64]string
	Bandwidth stats.Bandwidth
	Band      *stats.DensityBand // nil when there is no density
	PDP       *stats.Density
	Pulses    []stats.PulseSummary
	Shared    []stats.SharedComponent // drawn once per bootstrap replicate
	MinMa     float64
	MaxMa     float64
	Message   string // why there is no density, when there is none
}

// countedValues collects what the density counts from the unit summaries.
func countedValues(sums []unitSummary, ch densityChoice, res *densityResult) {
	res.SetAside = map[int64]string{}
	for _, us := range sums {
		u := us.Unit
		var vals []densityValue
		if ch.Count == "unit" {
			first := -1
			for i, sys := range us.Systems {
				if sys.Computed && first < 0 {
					first = i
				} else if sys.Computed {
					res.SetAside[u.ID] = sys.Key
					res.Left = append(res.Left, fmt.Sprintf("%s: its %s mean is set aside; the %s mean is counted (one value per unit, first in the order U–Pb, ⁴⁰Ar/³⁹Ar, K–Ar, Re–Os)",
						u.Name, sys.Label, us.Systems[first].Label))
				}
			}
			if first < 0 {
				if len(us.Systems) > 0 {
					res.Left = append(res.Left, u.Name+": no date enters a mean (see the unit summaries)")
				}
				continue
			}
			sys := us.Systems[first]
			v := densityValue{UnitID: u.ID, Unit: u.Name, System: sys.Label, AgeMa: sys.All.MeanMa, Sigma1s: sys.All.Sigma1s, N: sys.All.N, Weight: 1}
			v = v.withParts(&sys, sys.Report.All.SigmaReported, ch.Sum)
			for _, e := range sys.Entries {
				v.DateIDs = append(v.DateIDs, e.D.ID)
			}
			vals = append(vals, v)
		} else {
			for _, sys := range us.Systems {
				for _, e := range sys.Entries {
					vals = append(vals, densityValue{UnitID: u.ID, Unit: u.Name, DateIDs: []int64{e.D.ID}, Sample: e.D.SampleCode,
						System: sys.Label, AgeMa: e.AgeMa, Sigma1s: e.Sigma1s, N: 1, Weight: 1}.withParts(&sys, e.Sigma1s, ch.Sum))
				}
			}
		}
		if len(vals) == 0 {
			continue
		}
		if u.VolumeKm3 == nil {
			res.NoVolume = append(res.NoVolume, u.Name)
		}
		if ch.Weight == "volume" {
			if u.VolumeKm3 == nil {
				continue
			}
			for i := range vals {
				vals[i].Weight = *u.VolumeKm3 / float64(len(vals)) // a unit's volume shared among its dates
			}
		}
		res.Values = append(res.Values, vals...)
	}
}

// computeDensity counts the values and, when there are at least two with a positive total weight, computes
// the KDE on the window with its bootstrap band, the pulses and, if asked, the PDP. dateBars are the
// extents of the drawn dates (ages ± their σ at the shown level), so the automatic window holds them.
func computeDensity(sums []unitSummary, ch densityChoice, dateBars [][2]float64) (densityResult, error) {
	var res densityResult
	countedValues(sums, ch, &res)
	ages := make([]float64, len(res.Values))
	sigmas := make([]float64, len(res.Values))
	var weights []float64
	total := 0.0
	for i, v := range res.Values {
		ages[i], sigmas[i] = v.AgeMa, v.Sigma1s
		total += v.Weight
	}
	if ch.Weight == "volume" {
		weights = make([]float64, len(res.Values))
		for i, v := range res.Values {
			weights[i] = v.Weight
		}
	}
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, b := range dateBars {
		lo, hi = math.Min(lo, b[0]), math.Max(hi, b[1])
	}
	switch {
	case len(res.Values) < 2:
		res.Message = fmt.Sprintf("No density: it needs at least two values to count, and there are %d.", len(res.Values))
	case !(total > 0):
		res.Message = "No density: the units counted have a total volume of 0 km³."
	}
	if res.Message == "" {
		bwOpts := stats.BandwidthOptions{Rule: ch.Rule, UserMa: ch.UserHMa}
		bw, err := stats.SelectBandwidth(ages, bwOpts)
		if err != nil {
			return res, fmt.Errorf("density bandwidth: %w", err)
		}
		res.Bandwidth = bw
		pad := 4 * bw.Ma
		if ch.Adaptive {
			hs, _, err := stats.AbramsonBandwidthsMa(ages, weights, bw.Ma)
			if err != nil {
				return res, fmt.Errorf("adaptive bandwidths: %w", err)
			}
			pad = 4 * slices.Max(hs)
		}
		if ch.PDP {
			pad = math.Max(pad, 4*slices.Max(sigmas))
		}
		lo, hi = math.Min(lo, slices.Min(ages)-pad), math.Max(hi, slices.Max(ages)+pad)
	}
	if math.IsInf(lo, 0) { // nothing to draw at all
		lo, hi = 0, 1
	}
	if hi-lo < 1e-6 {
		lo, hi = lo-0.5, hi+0.5
	}
	margin := 0.02 * (hi - lo)
	res.MinMa, res.MaxMa = lo-margin, hi+margin
	if ch.FromMa != nil || ch.ToMa != nil {
		a, b := res.MinMa, res.MaxMa
		if ch.FromMa != nil && ch.ToMa != nil {
			a, b = min(*ch.FromMa, *ch.ToMa), max(*ch.FromMa, *ch.ToMa)
		} else {
			v := *cmpOr(ch.FromMa, ch.ToMa)
			// One end given: it replaces the nearer automatic end.
			if math.Abs(v-a) < math.Abs(v-b) {
				a = v
			} else {
				b = v
			}
		}
		if !(b > a) {
			return res, badRequest{message: "This address has parameters that cannot be used. Fix them and reload:",
				problems: []string{fmt.Sprintf("from, to: the window %s–%s Ma is empty", num(a), num(b))}}
		}
		res.MinMa, res.MaxMa = a, b
	}
	if res.Message != "" {
		return res, nil
	}
	grid := stats.AgeGrid{MinMa: res.MinMa, MaxMa: res.MaxMa, Points: densityPoints(res.MaxMa-res.MinMa, res.Bandwidth.Ma, ch, sigmas)}
	// The bandwidth chosen above, handed on as set: the rule is not run twice (ISJ is the costly one),
	// and the replicates keep the reference h. With bw_each=1 the (closed-form) rule goes to the
	// bootstrap instead, which gives the reference the same h and applies the rule to every replicate.
	bandBW := stats.BandwidthOptions{Rule: stats.RuleUser, UserMa: res.Bandwidth.Ma}
	if ch.BWEach {
		bandBW = stats.BandwidthOptions{Rule: ch.Rule}
	}
	// The bootstrap jitters each value by its own random part and draws the shared components once per
	// replicate, so a decay constant or tracer common to many units moves them together.
	randoms := make([]float64, len(res.Values))
	for i, v := range res.Values {
		randoms[i] = v.Random1s
	}
	res.Shared = sharedComponents(res.Values)
	band, err := stats.BootstrapBand(ages, randoms, stats.BandOptions{
		KDE:        stats.KDEOptions{Bandwidth: bandBW, Adaptive: ch.Adaptive, Weight: weights, Grid: grid},
		Replicates: ch.Reps, Seed: ch.Seed, ReestimateBandwidth: ch.BWEach, Shared: res.Shared, Stop: ch.stop})
	if err != nil {
		return res, fmt.Errorf("density band: %w", err)
	}
	res.Band = &band
	res.Pulses, err = stats.BootstrapPulses(band, stats.PulseOptions{})
	if err != nil {
		return res, fmt.Errorf("pulses: %w", err)
	}
	if ch.PDP {
		pdp, err := stats.PDP(ages, sigmas, stats.PDPOptions{Weight: weights, Grid: grid})
		if err != nil {
			return res, fmt.Errorf("pdp: %w", err)
		}
		res.PDP = &pdp
	}
	return res, nil
}

func cmpOr(a, b *float64) *float64 {
	if a != nil {
		return a
	}
	return b
}

// pulseName numbers pulses from the oldest: P1 is the first eruptive pulse.
func pulseName(i int) string { return "P" + strconv.Itoa(i+1) }

// oldestFirst returns the pulses oldest first (stats gives them youngest first).
func oldestFirst(ps []stats.PulseSummary) []stats.PulseSummary {
	out := slices.Clone(ps)
	slices.Reverse(out)
	return out
}

// ruleText describes the bandwidth as chosen: rule, h, and the fallback if one happened.
func ruleText(res densityResult, ch densityChoice) string {
	h := res.Bandwidth
	dec := sigmaDecimals(h.Ma) + 1
	kind := "KDE"
	if ch.Adaptive {
		kind = "adaptive KDE (Abramson 1982), pilot"
	}
	// A fallback is explained by the bandwidth's own note, shown beside this.
	return fmt.Sprintf("%s h = %s Ma, %s", kind, fixed(h.Ma, dec), h.Rule.Label())
}

// timelineProvince loads what the timeline of a province needs.
func (s *Server) timelineData(ctx context.Context, id int64, ch densityChoice) (store.Province, []unitSummary, error) {
	prov, err := s.store.Province(ctx, id)
	if err != nil {
		return prov, nil, err
	}
	units, err := s.store.Units(ctx, id)
	if err != nil {
		return prov, nil, err
	}
	ds, _, err := s.store.Dates(ctx, store.DateFilter{ProvinceID: id})
	if err != nil {
		return prov, nil, err
	}
	sums, err := summarizeUnits(units, ds, ch.Sum)
	return prov, sums, err
}

func (s *Server) handleTimeline(w http.ResponseWriter, r *http.Request) error {
	ctx := r.Context()
	id, err := pathID(r, "id")
	if err != nil {
		return err
	}
	p := newParams(r)
	ch, err := s.densityChoice(ctx, p)
	if err != nil {
		return err
	}
	if err := p.err(); err != nil {
		return err
	}
	prov, sums, err := s.timelineData(ctx, id, ch)
	if err != nil {
		return err
	}
	res, err := computeDensity(sums, ch, dateBars(sums, ch))
	if err != nil {
		return err
	}
	rows := figureRows(sums, ch, res)
	chart, err := icsChart()
	if err != nil {
		return err
	}
	fig := timelineFigure(prov, rows, res, ch, chart)
	base := fmt.Sprintf("province-%d-timeline", id)
	switch ch.Format {
	case "svg":
		return writeFile(w, "image/svg+xml", base+".svg", fig.SVG())
	case "png":
		b, err := fig.PNG()
		if err != nil {
			return err
		}
		return writeFile(w, "image/png", base+".png", b)
	case "pdf":
		b, err := fig.PDF()
		if err != nil {
			return err
		}
		return writeFile(w, "application/pdf", base+".pdf", b)
	case "csv":
		return writeTimelineCSV(w, fmt.Sprintf("province-%d-%s.csv", id, ch.Table), ch.Table, res, ch)
	case "json":
		writeJSON(w, http.StatusOK, timelineJSON(r, prov, res, ch))
		return nil
	}
	v := s.timelinePage(r, prov, fig, res, ch)
	v.Cautions = append(v.Cautions, unusableSigmaCautions(sums)...)
	saved, err := s.store.Pulses(ctx, id)
	if err != nil {
		return err
	}
	v.Tables = append(v.Tables, savedPulseTable(saved))
	if u, ok := currentUser(ctx); ok && store.RoleAtLeast(u.Role, store.RoleContributor) && len(res.Pulses) > 0 {
		v.Actions = []views.Action{{Label: fmt.Sprintf("Save these %d pulses as records of the province", len(res.Pulses)),
			URL: fmt.Sprintf("/provinces/%d/pulses?%s", id, r.URL.RawQuery)}}
	}
	s.render(w, r, http.StatusOK, views.TimelinePage(v))
	return nil
}

// writeFile sends a rendered figure as an attachment.
func writeFile(w http.ResponseWriter, contentType, name string, b []byte) error {
	w.Header().Set("Content-Type", contentType)
	w.Header().Set("Content-Disposition", fmt.Sprintf("attachment; filename=%q", name))
	w.Write(b)
	return nil
}

// handlePulsesSave saves the pulses found with the choices in the address as records of the province:
// each pulse's interval runs from its median start to its median end, its notes keep the 95 % intervals,
// the share of replicates in which it exists and the address it was found with, and its units are those
// whose counted value lies in the interval. A pulse of the same name (P1 = oldest, …) is replaced as a
// new version.
func (s *Server) handlePulsesSave(w http.ResponseWriter, r *http.Request) error {
	r = actingCtx(r)
	ctx := r.Context()
	id, err := pathID(r, "id")
	if err != nil {
		return err
	}
	p := newParams(r)
	ch, err := s.densityChoice(ctx, p)
	if err != nil {
		return err
	}
	if err := p.err(); err != nil {
		return err
	}
	_, sums, err := s.timelineData(ctx, id, ch)
	if err != nil {
		return err
	}
	res, err := computeDensity(sums, ch, dateBars(sums, ch))
	if err != nil {
		return err
	}
	if len(res.Pulses) == 0 {
		return badRequest{message: "No pulse was found with these choices, so there is nothing to save."}
	}
	source := idURL("/provinces", id) + "/timeline?" + r.URL.RawQuery
	var ps []store.Pulse
	for i, pu := range oldestFirst(res.Pulses) {
		start, end := pu.Start.MedianMa, pu.End.MedianMa
		sp := store.Pulse{Name: fmt.Sprintf("P%d", i+1), StartMa: &start, EndMa: &end,
			Notes: fmt.Sprintf("Found from the density (%s): mode %s Ma [95 %%: %s–%s], start %s [%s–%s], end %s [%s–%s] Ma; present in %.0f %% of %d replicates (seed %d).",
				ch.Rule.String(), fixed(pu.Mode.MedianMa, 3), fixed(pu.Mode.UpperMa, 3), fixed(pu.Mode.LowerMa, 3),
				fixed(start, 3), fixed(pu.Start.UpperMa, 3), fixed(pu.Start.LowerMa, 3),
				fixed(end, 3), fixed(pu.End.UpperMa, 3), fixed(pu.End.LowerMa, 3), 100*pu.Frequency, ch.Reps, ch.Seed)}
		seen := map[int64]bool{}
		for _, v := range res.Values {
			if v.AgeMa <= start && v.AgeMa >= end && !seen[v.UnitID] {
				seen[v.UnitID] = true
				sp.UnitIDs = append(sp.UnitIDs, v.UnitID)
			}
		}
		ps = append(ps, sp)
	}
	if _, err := s.store.SavePulses(ctx, id, source, ps); err != nil {
		if ve, ok := store.AsValidation(err); ok {
			return badRequest{message: "The pulses were not saved:", problems: problemTexts(ve.Problems)}
		}
		return err
	}
	http.Redirect(w, r, idURL("/provinces", id)+"/timeline?"+r.URL.RawQuery, http.StatusSeeOther)
	return nil
}

// savedPulseTable lists the pulses saved as records of the province.
func savedPulseTable(ps []store.Pulse) views.Table {
	t := views.Table{ID: "saved-pulses", Caption: "Pulses saved as records of the province",
		Columns: []views.Column{{Label: "Pulse"}, {Label: "Start", Unit: "Ma (older edge)", Num: true}, {Label: "End", Unit: "Ma", Num: true},
			{Label: "Units", Num: true}, {Label: "Version", Num: true}, {Label: "Notes"}},
		Empty: "No pulse saved yet. Contributors can save the pulses found above with the button."}
	for _, p := range ps {
		t.Rows = append(t.Rows, []views.Cell{{Text: p.Name}, {Text: optFixed(p.StartMa, 3), Num: true}, {Text: optFixed(p.EndMa, 3), Num: true},
			{Text: itoa(len(p.UnitIDs)), Num: true}, {Text: itoa(p.Version), Num: true}, {Text: p.Notes}})
	}
	return t
}
