package store

import (
	"bytes"
	"context"
	"database/sql"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"slices"
	"strconv"
)

// The CSV writers below write exactly the formats the importers read, so that import → export → import
// gives back the same records. Uncertainties are written at the σ level they were published at.

func writeCSV(w io.Writer, header []string, rows func(emit func([]string) error) error) error {
	cw := NewCSVWriter(w)
	if err := cw.Write(header); err != nil {
		return err
	}
	if err := rows(cw.Write); err != nil {
		return err
	}
	cw.Flush()
	return cw.Error()
}

// WriteProvincesCSV writes provinces in the provinces import format.
func WriteProvincesCSV(w io.Writer, ps []Province) error {
	return writeCSV(w, provinceColumns, func(emit func([]string) error) error {
		for _, p := range ps {
			if err := emit([]string{p.Name, p.Description, formatOpt(p.PoleLatitude), formatOpt(p.PoleLongitude),
				formatOpt(p.PoleA95), p.PoleSource}); err != nil {
				return err
			}
		}
		return nil
	})
}

// WriteUnitsCSV writes units in the units import format.
func WriteUnitsCSV(w io.Writer, us []Unit) error {
	return writeCSV(w, unitColumns, func(emit func([]string) error) error {
		for _, u := range us {
			if err := emit([]string{u.Province, u.Name, u.Kind, formatOptInt(u.PilePosition), formatOpt(u.VolumeKm3),
				formatOpt(u.VolumeSigmaKm3), formatOpt(u.Latitude), formatOpt(u.Longitude), u.Notes}); err != nil {
				return err
			}
		}
		return nil
	})
}

// WriteSectionsCSV writes sections in the sections import format.
func WriteSectionsCSV(w io.Writer, ss []Section) error {
	return writeCSV(w, sectionColumns, func(emit func([]string) error) error {
		for _, s := range ss {
			if err := emit([]string{s.Name, s.Kind, formatOpt(s.Latitude), formatOpt(s.Longitude),
				formatOpt(s.Palaeolatitude), s.ThermalMaturity, formatNumber(s.TocThresholdWtPct), s.Notes}); err != nil {
				return err
			}
		}
		return nil
	})
}

// WriteDatesCSV writes dates in the dates import format, uncertainties at their published σ level.
func WriteDatesCSV(w io.Writer, ds []Date) error {
	return writeCSV(w, dateColumns, func(emit func([]string) error) error {
		for _, d := range ds {
			if err := emit(DateCSVRecord(d)); err != nil {
				return err
			}
		}
		return nil
	})
}

// DateCSVColumns returns the columns of the dates import format, in order (a copy).
func DateCSVColumns() []string { return slices.Clone(dateColumns) }

// DateCSVRecord gives the cells of one date in the dates import format (DateCSVColumns), uncertainties at
// its published σ level, before CSVSafe (write them with NewCSVWriter).
func DateCSVRecord(d Date) []string {
	k := float64(d.SigmaLevel)
	return []string{d.Province, d.Unit, d.Section, formatOpt(d.HeightM), d.SampleCode, d.Method,
		d.Material, d.Interpretation, formatNumber(d.AgeMa), formatNumber(d.SigmaMa * k),
		formatOptScaled(d.SigmaYMa, k), formatOptScaled(d.SigmaZMa, k), strconv.Itoa(d.SigmaLevel), d.Tracer,
		d.Monitor, formatOpt(d.MonitorAgeMa), formatOpt(d.LambdaPerA), d.Laboratory, d.Citation, d.DOI,
		formatOpt(d.Latitude), formatOpt(d.Longitude), string(d.ReviewState), d.Notes}
}

// WriteTiesCSV writes tie points in the ties import format, with their review state.
func WriteTiesCSV(w io.Writer, ts []TiePoint) error {
	return writeCSV(w, tieColumns, func(emit func([]string) error) error {
		for _, t := range ts {
			sigma, level := "", ""
			if t.SigmaMa != nil && t.SigmaLevel != nil {
				sigma = formatNumber(*t.SigmaMa * float64(*t.SigmaLevel))
				level = strconv.Itoa(*t.SigmaLevel)
			}
			if err := emit([]string{t.Label, formatNumber(t.HeightM), t.Kind, t.Distribution, formatOpt(t.AgeMa), sigma,
				level, formatOpt(t.AgeMinMa), formatOpt(t.AgeMaxMa), t.DateSampleCode, t.DateMethod, string(t.ReviewState), t.Notes}); err != nil {
				return err
			}
		}
		return nil
	})
}

// WriteEventsCSV writes events in the events import format.
func WriteEventsCSV(w io.Writer, es []Event) error {
	return writeCSV(w, eventColumns, func(emit func([]string) error) error {
		for _, e := range es {
			if err := emit([]string{e.Name, e.Kind, formatOpt(e.BaseHeightM), formatOpt(e.TopHeightM), e.Notes}); err != nil {
				return err
			}
		}
		return nil
	})
}

// SampleColumns returns the header of the wide measurement format for the given proxies (canonical units),
// with the companion columns that the samples actually use.
func SampleColumns(samples []Sample, proxies []string) []string {
	cols := []string{"sample", "height_m"}
	for _, p := range proxies {
		pu := canonicalUnit(p)
		var hasSigma, hasDL, hasMethod bool
		for _, s := range samples {
			m, ok := s.Values[p]
			if !ok {
				continue
			}
			hasSigma = hasSigma || m.Sigma != nil
			hasDL = hasDL || m.DetectionLimit != nil
			hasMethod = hasMethod || m.Method != ""
		}
		cols = append(cols, pu.prefix+"_"+pu.unit)
		if hasSigma {
			cols = append(cols, pu.prefix+"_sigma_"+pu.unit)
		}
		if hasDL {
			cols = append(cols, pu.prefix+"_dl_"+pu.unit)
		}
		if hasMethod {
			cols = append(cols, pu.prefix+"_method")
		}
	}
	return cols
}

// WriteSamplesCSV writes samples in the wide measurement import format, in canonical units.
func WriteSamplesCSV(w io.Writer, samples []Sample, proxies []string) error {
	header := SampleColumns(samples, proxies)
	return writeCSV(w, header, func(emit func([]string) error) error {
		for _, s := range samples {
			rec := []string{s.Sample, formatNumber(s.HeightM)}
			for _, col := range header[2:] {
				rec = append(rec, sampleCell(s, col))
			}
			if err := emit(rec); err != nil {
				return err
			}
		}
		return nil
	})
}

// sampleCell writes the cell of one wide-format column for one sample.
func sampleCell(s Sample, col string) string {
	for _, pu := range proxyUnits() {
		if pu != canonicalUnit(pu.proxy) {
			continue
		}
		m, ok := s.Values[pu.proxy]
		switch col {
		case pu.prefix + "_" + pu.unit:
			if !ok {
				return ""
			}
			if m.BelowDetection {
				if m.DetectionLimit != nil {
					return "<" + formatNumber(*m.DetectionLimit)
				}
				return "<DL"
			}
			return formatOpt(m.Value)
		case pu.prefix + "_sigma_" + pu.unit:
			return formatOpt(m.Sigma)
		case pu.prefix + "_dl_" + pu.unit:
			return formatOpt(m.DetectionLimit)
		case pu.prefix + "_method":
			return m.Method
		}
	}
	return ""
}

// SectionByName returns the section with that name, or ErrNotFound.
func (d *DB) SectionByName(ctx context.Context, name string) (Section, error) {
	s, err := scanSection(d.reader().QueryRowContext(ctx, sectionSelect+` WHERE s.name = ?`, name))
	if errors.Is(err, sql.ErrNoRows) {
		return s, fmt.Errorf("section %q: %w", name, ErrNotFound)
	}
	return s, err
}

// ExportKinds lists what Export writes; the ones marked true are per section.
var ExportKinds = map[string]bool{"provinces": false, "units": false, "sections": false, "dates": false,
	"measurements": true, "ties": true, "events": true, "hiatuses": true}

// Export writes one kind of record ("provinces", "units", "sections", "dates"; or, for one section,
// "measurements", "ties", "events") in its import format.
func (d *DB) Export(ctx context.Context, kind, section string, w io.Writer) error {
	perSection, ok := ExportKinds[kind]
	if !ok {
		return fmt.Errorf("export: unknown kind %q", kind)
	}
	var sec Section
	if perSection {
		var err error
		if sec, err = d.SectionByName(ctx, section); err != nil {
			return fmt.Errorf("export %s: %w", kind, err)
		}
	}
	switch kind {
	case "provinces":
		ps, err := d.Provinces(ctx)
		if err != nil {
			return err
		}
		return WriteProvincesCSV(w, ps)
	case "units":
		us, err := d.Units(ctx, 0)
		if err != nil {
			return err
		}
		return WriteUnitsCSV(w, us)
	case "sections":
		ss, err := d.Sections(ctx)
		if err != nil {
			return err
		}
		return WriteSectionsCSV(w, ss)
	case "dates":
		ds, _, err := d.Dates(ctx, DateFilter{Sort: "added"})
		if err != nil {
			return err
		}
		return WriteDatesCSV(w, ds)
	case "measurements":
		samples, proxies, err := d.Samples(ctx, sec.ID)
		if err != nil {
			return err
		}
		return WriteSamplesCSV(w, samples, proxies)
	case "ties":
		ts, err := d.TiePoints(ctx, sec.ID)
		if err != nil {
			return err
		}
		return WriteTiesCSV(w, ts)
	case "hiatuses":
		hs, err := d.Hiatuses(ctx, sec.ID)
		if err != nil {
			return err
		}
		return writeHiatusesCSV(w, hs)
	default: // events
		es, err := d.Events(ctx, sec.ID)
		if err != nil {
			return err
		}
		return WriteEventsCSV(w, es)
	}
}

// WriteWithSection writes items of several sections with one of the per-section writers, adding a
// leading "section" column so the rows stay attributable.
func WriteWithSection[T any](w io.Writer, items []T, section func(T) string, write func(io.Writer, []T) error) error {
	var buf bytes.Buffer
	if err := write(&buf, items); err != nil {
		return err
	}
	recs, err := csv.NewReader(&buf).ReadAll()
	if err != nil {
		return err
	}
	cw := NewCSVWriter(w)
	for i, rec := range recs {
		first := "section"
		if i > 0 {
			first = section(items[i-1])
		}
		if err := cw.Write(append([]string{first}, rec...)); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}
