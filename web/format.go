package web

import (
	"fmt"
	"math"
	"strconv"
	"strings"
	"time"
)

// sigmaDecimals is the number of decimals that shows σ with two significant figures (common practice:
// quote the uncertainty to two significant figures and the value to the same decimal place).
func sigmaDecimals(sigma float64) int {
	if sigma <= 0 || math.IsNaN(sigma) || math.IsInf(sigma, 0) {
		return 3
	}
	d := 1 - int(math.Floor(math.Log10(sigma)))
	return min(max(d, 0), 8)
}

// ageSigma formats an age and its 1σ uncertainty shown at the given σ level, to matching decimals.
func ageSigma(ageMa, sigma1s float64, level int) (string, string) {
	s := sigma1s * float64(level)
	d := sigmaDecimals(s)
	return strconv.FormatFloat(ageMa, 'f', d, 64), strconv.FormatFloat(s, 'f', d, 64)
}

// plusMinus writes "age ± σ (Nσ)".
func plusMinus(ageMa, sigma1s float64, level int) string {
	a, s := ageSigma(ageMa, sigma1s, level)
	return fmt.Sprintf("%s ± %s (%dσ)", a, s, level)
}

func num(v float64) string { return strconv.FormatFloat(v, 'f', -1, 64) }

// asEntered writes a published value with the digits it was entered with: the shortest decimal that
// rounds to it at 12 significant digits, so 0.025 × 2 shows as 0.05, not 0.05000000000000000277. (Trailing
// zeros typed after the last digit are not kept: the value is stored as a number.)
func asEntered(v float64) string {
	x, _ := strconv.ParseFloat(strconv.FormatFloat(v, 'g', 12, 64), 64)
	return strconv.FormatFloat(x, 'f', -1, 64)
}

func optNum(v *float64) string {
	if v == nil {
		return "—"
	}
	return num(*v)
}

func fixed(v float64, d int) string { return strconv.FormatFloat(v, 'f', d, 64) }

func optFixed(v *float64, d int) string {
	if v == nil {
		return "—"
	}
	return fixed(*v, d)
}

func orDash(s string) string {
	if strings.TrimSpace(s) == "" {
		return "—"
	}
	return s
}

func itoa(n int) string { return strconv.Itoa(n) }

func idURL(prefix string, id int64) string { return prefix + "/" + strconv.FormatInt(id, 10) }

// lambda writes a decay constant in units of 10⁻¹⁰ a⁻¹ as the literature does.
func lambda(v float64) string {
	return strconv.FormatFloat(v*1e10, 'f', -1, 64) + "×10⁻¹⁰ a⁻¹"
}

// coord writes a latitude/longitude pair.
func coord(lat, lon *float64) string {
	if lat == nil || lon == nil {
		return "—"
	}
	ns, ew := "N", "E"
	if *lat < 0 {
		ns = "S"
	}
	if *lon < 0 {
		ew = "W"
	}
	return fmt.Sprintf("%.3f° %s, %.3f° %s", math.Abs(*lat), ns, math.Abs(*lon), ew)
}

// when writes a stored UTC timestamp for people: "2026-12-01 22:32 UTC".
func when(stamp string) string {
	t, err := time.Parse(time.RFC3339, stamp)
	if err != nil {
		return stamp
	}
	return t.UTC().Format("2006-01-02 15:04 UTC")
}

// decimals is the number of decimals of v's shortest exact representation, at most 6.
func decimals(v float64) int {
	s := strconv.FormatFloat(v, 'f', -1, 64)
	if i := strings.IndexByte(s, '.'); i >= 0 {
		return min(len(s)-i-1, 6)
	}
	return 0
}
