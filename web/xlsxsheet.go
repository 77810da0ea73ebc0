package web

import (
	"math"
	"strconv"

	"github.com/xuri/excelize/v2"
)

// sheetRow writes vals as row r (from 1) of sheet.
func sheetRow(f *excelize.File, sheet string, r int, vals []any) error {
	cell, err := excelize.CoordinatesToCellName(1, r)
	if err != nil {
		return err
	}
	return f.SetSheetRow(sheet, cell, &vals)
}

// sheetTable writes a download's header and records to sheet: a cell that reads as a number is written as
// one, unless text(i) says column i stays text (names, codes, bounds written "> 0.9997").
func sheetTable(f *excelize.File, sheet string, cols []string, recs [][]string, text func(i int) bool) error {
	hdr := make([]any, len(cols))
	for i, c := range cols {
		hdr[i] = c
	}
	if err := sheetRow(f, sheet, 1, hdr); err != nil {
		return err
	}
	for r, rec := range recs {
		vals := make([]any, len(rec))
		for i, v := range rec {
			if x, err := strconv.ParseFloat(v, 64); err == nil && !math.IsNaN(x) && !text(i) {
				vals[i] = x
			} else {
				vals[i] = v
			}
		}
		if err := sheetRow(f, sheet, r+2, vals); err != nil {
			return err
		}
	}
	return nil
}

// sheetSettings writes a sheet of setting–value pairs under a header.
func sheetSettings(f *excelize.File, sheet string, kvs [][2]string) error {
	if err := sheetRow(f, sheet, 1, []any{"setting", "value"}); err != nil {
		return err
	}
	for i, kv := range kvs {
		if err := sheetRow(f, sheet, i+2, []any{kv[0], kv[1]}); err != nil {
			return err
		}
	}
	return nil
}
