package web

import (
	"bytes"
	"encoding/csv"
	"io"
	"math"
	"strconv"

	"coeval/store"
)

// writeDatesCSV writes dates in the import format (store.WriteDatesCSV, columns first and unchanged) with
// store.DerivedDateColumns appended: for ⁴⁰Ar/³⁹Ar dates, the age recalculated to the view's calibration,
// its analytical and full external σ at the row's sigma_level (like sigma_ma), the calibration code, and
// a note when the date is not recalculable; empty for other methods. The importer accepts and ignores
// exactly these columns, so the file still re-imports.
func writeDatesCSV(w io.Writer, ds []store.Date, cal calChoice) error {
	var buf bytes.Buffer
	if err := store.WriteDatesCSV(&buf, ds); err != nil {
		return err
	}
	recs, err := csv.NewReader(&buf).ReadAll()
	if err != nil {
		return err
	}
	cw := store.NewCSVWriter(w)
	for i, rec := range recs {
		var extra []string
		if i == 0 {
			extra = store.DerivedDateColumns
		} else {
			extra = derivedCells(ds[i-1], cal)
		}
		if err := cw.Write(append(rec, extra...)); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}

func derivedCells(d store.Date, cal calChoice) []string {
	rc := recalculate(d, cal.Stats)
	switch {
	case !rc.Applies:
		return []string{"", "", "", "", ""}
	case !rc.OK:
		return []string{"", "", "", cal.Cal.Code, rc.Reason}
	}
	k := float64(d.SigmaLevel)
	return []string{micro(rc.AgeMa), micro(rc.AnalyticalSigmaMa * k), micro(rc.FullSigmaMa * k), cal.Cal.Code, ""}
}

// micro writes a value in Ma rounded to 1e-6 Ma (one year), shortest form.
func micro(v float64) string { return strconv.FormatFloat(math.Round(v*1e6)/1e6, 'f', -1, 64) }

// dateJSON is a date with its age on the view's calibration (nil when calibrations do not apply).
type dateJSON struct {
	store.Date
	Recalculated *recalcJSON `json:"recalculated"`
}

type recalcJSON struct {
	Calibration       string   `json:"calibration"`
	AgeMa             *float64 `json:"age_ma"`
	AnalyticalSigma1s *float64 `json:"sigma_analytical_ma_1s"`
	FullSigma1s       *float64 `json:"sigma_full_ma_1s"`
	Note              string   `json:"note,omitempty"`
}

func datesJSON(ds []store.Date, cal calChoice) []dateJSON {
	out := make([]dateJSON, len(ds))
	for i, d := range ds {
		out[i].Date = d
		rc := recalculate(d, cal.Stats)
		if !rc.Applies {
			continue
		}
		j := &recalcJSON{Calibration: cal.Cal.Code, Note: rc.Reason}
		if rc.OK {
			j.AgeMa, j.AnalyticalSigma1s, j.FullSigma1s = &rc.AgeMa, &rc.AnalyticalSigmaMa, &rc.FullSigmaMa
		}
		out[i].Recalculated = j
	}
	return out
}
