package store

import (
	"fmt"
	"strings"
)

// DerivedDateColumns are the columns the app's dates download adds after the import columns: the
// ⁴⁰Ar/³⁹Ar age recalculated to the calibration of the view, its σ at the row's sigma_level, the code of
// that calibration, and a note when a date cannot be recalculated. They are computed, not data, so the
// dates importer accepts exactly these columns and ignores them (saying so in the import notes): a
// downloaded file re-imports as it is, and editing a derived cell cannot change a record.
var DerivedDateColumns = []string{"age_recalc_ma", "sigma_recalc_analytical_ma", "sigma_recalc_full_ma",
	"recalc_calibration", "recalc_note"}

// ignoredDerived returns a note naming the derived columns present in t, or "" when there are none.
func ignoredDerived(t *csvTable) string {
	var present []string
	for _, c := range DerivedDateColumns {
		if t.has(c) {
			present = append(present, c)
		}
	}
	if len(present) == 0 {
		return ""
	}
	return fmt.Sprintf("ignored the derived columns %s: they are recomputed from the calibration of each view", strings.Join(present, ", "))
}
