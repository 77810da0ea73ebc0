package web

import (
	"context"
	"fmt"
	"io"
	"math"
	"net/http"
	"strconv"

	"coeval/store"
)

// writeDatesCSV writes dates in the import format (store.DateCSVRecord, columns first and unchanged) with
// store.DerivedDateColumns appended: for ⁴⁰Ar/³⁹Ar dates, the age recalculated to the view's calibration,
// its analytical and full external σ at the row's sigma_level (like sigma_ma), the calibration code, and
// a note when the date is not recalculable; empty for other methods. The importer accepts and ignores
// exactly these columns, so the file still re-imports.
func writeDatesCSV(w io.Writer, ds []store.Date, cal calChoice) error {
	cw := store.NewCSVWriter(w)
	if err := cw.Write(append(store.DateCSVColumns(), store.DerivedDateColumns...)); err != nil {
		return err
	}
	for _, d := range ds {
		if err := cw.Write(append(store.DateCSVRecord(d), derivedCells(d, cal)...)); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}

// writeDatesCSVStream writes the dates f selects as writeDatesCSV does, straight to the response one row
// at a time (memory stays flat in the number of dates). A failure before the first row is an ordinary
// error page; after it, the response is cut off (the client sees an incomplete download, never a file
// that looks whole).
func writeDatesCSVStream(ctx context.Context, st Store, w http.ResponseWriter, f store.DateFilter, cal calChoice) error {
	f.Limit, f.Offset, f.After, f.Before = 0, 0, "", ""
	cw := store.NewCSVWriter(w)
	started := false
	err := st.EachDate(ctx, f, func(d store.Date) error {
		if !started {
			started = true
			w.Header().Set("Content-Type", "text/csv; charset=utf-8")
			w.Header().Set("Content-Disposition", `attachment; filename="dates.csv"`)
			if err := cw.Write(append(store.DateCSVColumns(), store.DerivedDateColumns...)); err != nil {
				return err
			}
		}
		return cw.Write(append(store.DateCSVRecord(d), derivedCells(d, cal)...))
	})
	if err == nil && !started { // no date matches: the header alone
		return writeDownload(w, "dates.csv", func(w io.Writer) error { return writeDatesCSV(w, nil, cal) })
	}
	if err != nil && !started {
		return fmt.Errorf("write dates.csv: %w", err)
	}
	if err == nil {
		cw.Flush()
		err = cw.Error()
	}
	if err != nil {
		if ctx.Err() != nil { // the client went away
			return ctx.Err()
		}
		panic(http.ErrAbortHandler) // headers and part of the file are sent: cut the response off
	}
	return nil
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
