package analysis

import (
	"fmt"
	"strconv"
	"strings"

	"coeval/stats"
)

// How numbers and choices are told in the notes and accounts the pipelines write.

func fixed(v float64, d int) string { return strconv.FormatFloat(v, 'f', d, 64) }

func orDash(s string) string {
	if strings.TrimSpace(s) == "" {
		return "—"
	}
	return s
}

// FormatP writes a p-value as the pages give it: three decimals, or in e-notation below 0.001.
func FormatP(p float64) string {
	if p < 0.001 {
		return fmt.Sprintf("%.1e", p)
	}
	return fmt.Sprintf("%.3f", p)
}

// FlaggedCodes are the sample codes of the dates the outlier rule flagged in a system's summary.
func FlaggedCodes(s SystemSummary) []string {
	var out []string
	for _, e := range s.Entries {
		if e.Flagged {
			out = append(out, e.D.SampleCode)
		}
	}
	return out
}

// CalDrawn says how an ⁴⁰Ar/³⁹Ar calibration's terms are drawn, once per per.
func CalDrawn(c stats.Calibration, per string) string {
	if Correlated(c) {
		return fmt.Sprintf("(monitor age and λ drawn together, with their correlation %.2f, once per %s)", c.LambdaMonitorCorrelation, per)
	}
	return "(monitor age and λ drawn once per " + per + ")"
}

// SmoothingWords names a smoothing-width rule in the words of the pages and figures (the rule's code stays
// in addresses and downloads).
func SmoothingWords(r stats.BandwidthRule) string {
	switch r {
	case stats.RuleISJ:
		return "automatic width (Botev's diffusion method)"
	case stats.RuleScott:
		return "Scott's rule of thumb"
	case stats.RuleSilverman:
		return "Silverman's rule of thumb"
	case stats.RuleSilvermanRobust:
		return "Silverman's rule of thumb, robust to outliers"
	case stats.RuleUser:
		return "width set by hand"
	}
	return r.Label()
}
