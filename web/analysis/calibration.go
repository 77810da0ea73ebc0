package analysis

import (
	"fmt"

	"coeval/stats"
	"coeval/store"
)

// CalibrationOf maps a stored calibration to the numerics' one. A σ the store does not hold (NULL)
// becomes 0, which stats reads as "contributes no systematic term".
func CalibrationOf(c store.Calibration) stats.Calibration {
	sc := stats.Calibration{Code: c.Code, Name: c.Name, Source: c.Source, LambdaPerA: c.LambdaPerA,
		MonitorName: c.Monitor, MonitorAgeMa: c.MonitorAgeMa, LambdaMonitorCorrelation: c.LambdaMonitorCorrelation}
	if c.LambdaSigmaPerA != nil {
		sc.LambdaSigmaPerA = *c.LambdaSigmaPerA
	}
	if c.MonitorSigmaMa != nil {
		sc.MonitorSigmaMa = *c.MonitorSigmaMa
	}
	return sc
}

// Recalc is an ⁴⁰Ar/³⁹Ar date on a chosen calibration, 1σ.
type Recalc struct {
	Applies bool   // the date is ⁴⁰Ar/³⁹Ar: calibrations matter
	OK      bool   // it could be recalculated
	Reason  string // why not, when Applies and not OK
	stats.Recalculated
}

// NotRecalculable is what the pages and downloads say of an ⁴⁰Ar/³⁹Ar date without calibration details.
const NotRecalculable = "not recalculable: published without monitor age or decay constant — listed, not guessed"

// publishedCalibration is the calibration an ⁴⁰Ar/³⁹Ar date was published against, if it says.
func publishedCalibration(d store.Date) (stats.Calibration, bool) {
	if d.MonitorAgeMa == nil || d.LambdaPerA == nil {
		return stats.Calibration{}, false
	}
	return stats.Calibration{Code: "published", Name: "as published", LambdaPerA: *d.LambdaPerA,
		MonitorName: d.Monitor, MonitorAgeMa: *d.MonitorAgeMa}, true
}

// Recalculate moves an ⁴⁰Ar/³⁹Ar date to the calibration to (stats.Recalculate: exact relation,
// analytical σ through the ratio, full external σ with to's monitor and λ terms). Other methods do not
// apply; dates without monitor details are not recalculable.
func Recalculate(d store.Date, to stats.Calibration) Recalc {
	if !store.IsArAr(d.Method) {
		return Recalc{}
	}
	from, ok := publishedCalibration(d)
	if !ok {
		return Recalc{Applies: true, Reason: NotRecalculable}
	}
	r, err := stats.Recalculate(d.AgeMa, d.SigmaMa, from, to)
	if err != nil {
		return Recalc{Applies: true, Reason: "not recalculable: the published calibration or age is not usable"}
	}
	return Recalc{Applies: true, OK: true, Recalculated: r}
}

// MissingSystematics says which systematic σ a calibration does not store ("" when it has both).
func MissingSystematics(c stats.Calibration) string {
	switch {
	case c.MonitorSigmaMa == 0 && c.LambdaSigmaPerA == 0:
		return "this calibration stores no σ for its monitor age or decay constant, so its full external ± equals the analytical one"
	case c.LambdaSigmaPerA == 0:
		return "this calibration stores no σ for its decay constant, so the full external ± holds the monitor-age term only"
	case c.MonitorSigmaMa == 0:
		return "this calibration stores no σ for its monitor age, so the full external ± holds the decay-constant term only"
	}
	return ""
}

// Correlated reports whether a calibration's monitor age and decay constant both have a σ and are
// correlated in its source (Renne et al. 2010, 2011), so that their covariance enters the full external σ.
func Correlated(c stats.Calibration) bool {
	return c.LambdaMonitorCorrelation != 0 && c.MonitorSigmaMa > 0 && c.LambdaSigmaPerA > 0
}

// CalTerms names the systematic terms of a calibration for a level's label: "monitor age and λ", with
// their covariance when the source gives a correlation.
func CalTerms(c stats.Calibration) string {
	if Correlated(c) {
		return fmt.Sprintf("monitor age and λ, with their covariance (correlation %.2f)", c.LambdaMonitorCorrelation)
	}
	return "monitor age and λ"
}
