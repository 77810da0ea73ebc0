package analysis

import (
	"context"
	"fmt"
	"slices"

	"coeval/stats"
	"coeval/store"
)

// SnapshotReader is a store that reads as one snapshot: every read of fn sees one state of the
// compilation, whatever is committed meanwhile (store.DB.ReadSnapshot).
type SnapshotReader interface {
	ReadSnapshot(ctx context.Context, fn func(*store.Snapshot) error) error
}

// TargetCalibration is the compilation's target among the stored calibrations (the first listed when
// none is marked), with false when there are none.
func TargetCalibration(cals []store.Calibration) (store.Calibration, bool) {
	if len(cals) == 0 {
		return store.Calibration{}, false
	}
	for _, c := range cals {
		if c.IsTarget {
			return c, true
		}
	}
	return cals[0], true
}

// linkedDates reads the dates the normal ties are linked to, by id.
func linkedDates(ctx context.Context, s *store.Snapshot, ties []store.TiePoint, into map[int64]store.Date) error {
	for _, t := range ties {
		if t.DateID == nil || t.Distribution != "normal" {
			continue
		}
		if _, ok := into[*t.DateID]; ok {
			continue
		}
		d, err := s.Date(ctx, *t.DateID)
		if err != nil {
			return fmt.Errorf("tie %q: %w", t.Label, err)
		}
		into[*t.DateID] = d
	}
	return nil
}

// tieTarget is the calibration ties from ⁴⁰Ar/³⁹Ar dates are recalculated to: the compilation's target.
// Without calibrations, ties linked to dates cannot be resolved.
func tieTarget(cals []store.Calibration, dates map[int64]store.Date) (stats.Calibration, error) {
	c, ok := TargetCalibration(cals)
	if !ok && len(dates) > 0 {
		return stats.Calibration{}, fmt.Errorf("calibration: the compilation has no calibrations")
	}
	return CalibrationOf(c), nil
}

// LoadSectionAnalysis reads a section's samples, ties (with their linked dates), events, hiatuses and
// anomaly decisions, the other sections and the calibrations as one snapshot, and analyses the section.
func LoadSectionAnalysis(ctx context.Context, src SnapshotReader, sec store.Section, o SectionOptions) (*SectionAnalysis, error) {
	if err := o.Check(); err != nil {
		return nil, err
	}
	var a *SectionAnalysis
	err := src.ReadSnapshot(ctx, func(s *store.Snapshot) error {
		var err error
		a, err = analyseInSnapshot(ctx, s, sec, o)
		return err
	})
	return a, err
}

// LoadSectionAnalysisByID reads section id and everything its analysis needs as one snapshot, and
// analyses it with the options options gives for it (its error, such as an address's problems, is
// returned as is, before anything is analysed).
func LoadSectionAnalysisByID(ctx context.Context, src SnapshotReader, id int64, options func(store.Section) (SectionOptions, error)) (*SectionAnalysis, error) {
	var a *SectionAnalysis
	err := src.ReadSnapshot(ctx, func(s *store.Snapshot) error {
		sec, err := s.Section(ctx, id)
		if err != nil {
			return err
		}
		o, err := options(sec)
		if err != nil {
			return err
		}
		if err := o.Check(); err != nil {
			return err
		}
		a, err = analyseInSnapshot(ctx, s, sec, o)
		return err
	})
	return a, err
}

// LoadSectionAnalyses analyses every section, each with the options options gives for it, from one
// snapshot: the sections shown together belong to one state of the compilation.
func LoadSectionAnalyses(ctx context.Context, src SnapshotReader, options func(store.Section) SectionOptions) ([]*SectionAnalysis, error) {
	var out []*SectionAnalysis
	err := src.ReadSnapshot(ctx, func(s *store.Snapshot) error {
		secs, err := s.Sections(ctx)
		if err != nil {
			return err
		}
		for _, sec := range secs {
			o := options(sec)
			if err := o.Check(); err != nil {
				return err
			}
			a, err := analyseInSnapshot(ctx, s, sec, o)
			if err != nil {
				return err
			}
			out = append(out, a)
		}
		return nil
	})
	return out, err
}

// analyseInSnapshot reads what a section's analysis needs from the snapshot and analyses it.
func analyseInSnapshot(ctx context.Context, s *store.Snapshot, sec store.Section, o SectionOptions) (*SectionAnalysis, error) {
	samples, _, err := s.Samples(ctx, sec.ID)
	if err != nil {
		return nil, err
	}
	ties, err := s.TiePoints(ctx, sec.ID)
	if err != nil {
		return nil, err
	}
	events, err := s.Events(ctx, sec.ID)
	if err != nil {
		return nil, err
	}
	hiatuses, err := s.Hiatuses(ctx, sec.ID)
	if err != nil {
		return nil, err
	}
	all, err := s.Sections(ctx)
	if err != nil {
		return nil, err
	}
	cals, err := s.Calibrations(ctx)
	if err != nil {
		return nil, err
	}
	dates := map[int64]store.Date{}
	if err := linkedDates(ctx, s, ties, dates); err != nil {
		return nil, err
	}
	target, err := tieTarget(cals, dates)
	if err != nil {
		return nil, err
	}
	inputs, err := TieInputs(ties, dates, o.TieLevel, target)
	if err != nil {
		return nil, err
	}
	a, err := AnalyseSection(sec, samples, ties, inputs, events, hiatuses, o)
	if err != nil {
		return nil, err
	}
	if a.Decisions, err = s.AnomalyDecisions(ctx, sec.ID); err != nil {
		return nil, err
	}
	for _, other := range all {
		if other.ID != sec.ID && other.ThermalMaturity != "" && MaturityClass(other.ThermalMaturity) != MaturityClass(sec.ThermalMaturity) &&
			!slices.Contains(a.OtherMatur, other.Name+": "+other.ThermalMaturity) {
			a.OtherMatur = append(a.OtherMatur, other.Name+": "+other.ThermalMaturity)
		}
	}
	return a, nil
}
