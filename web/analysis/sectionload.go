package analysis

import (
	"context"
	"fmt"
	"runtime"
	"slices"
	"sync"

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

// SectionInputs is exactly what a section's analysis reads besides its options: the section, its samples,
// ties, events and hiatuses, the dates its normal ties are linked to and the calibrations (the target the
// ties from ⁴⁰Ar/³⁹Ar dates are recalculated to).
type SectionInputs struct {
	Sec      store.Section
	Samples  []store.Sample
	Ties     []store.TiePoint
	Events   []store.Event
	Hiatuses []store.Hiatus
	Dates    map[int64]store.Date
	Cals     []store.Calibration
	// Version is the version of all of the above, read with them in one snapshot (SectionVersion); ""
	// when there is none.
	Version string
}

// SectionVersion is the version of what a section's analysis reads (its record, samples, ties and the
// dates they are linked to, events, hiatuses, and the calibrations), from the versions the database
// keeps; "" for a section without a version.
func SectionVersion(vs store.DataVersions, id int64) string {
	v, ok := vs.Sections[id]
	if !ok {
		return ""
	}
	return fmt.Sprintf("section %d v%d calibrations v%d", id, v, vs.Calibrations)
}

// Analyse analyses the section with the options (AnalyseSection on the ties' inputs at o.TieLevel).
func (in *SectionInputs) Analyse(o SectionOptions) (*SectionAnalysis, error) {
	target, err := tieTarget(in.Cals, in.Dates)
	if err != nil {
		return nil, err
	}
	inputs, err := TieInputs(in.Ties, in.Dates, o.TieLevel, target)
	if err != nil {
		return nil, err
	}
	return AnalyseSection(in.Sec, in.Samples, in.Ties, inputs, in.Events, in.Hiatuses, o)
}

// SectionAnalyser computes a section's analysis from its inputs and options: SectionInputs.Analyse, or a
// cache in front of it. What it returns is shared and must not be changed.
type SectionAnalyser func(ctx context.Context, in *SectionInputs, o SectionOptions) (*SectionAnalysis, error)

// SectionLoader reads sections' inputs as one snapshot and analyses them with Analyse (nil:
// SectionInputs.Analyse). The curators' decisions and the other sections' maturities are read on every
// load and set on a copy of what Analyse returns, so Analyse may return the same analysis to many loads.
type SectionLoader struct {
	Analyse SectionAnalyser
	// Kept, when set, finds an analysis kept for a section's version (SectionVersion) and options: the
	// section's records are then not read at all.
	Kept func(sec store.Section, version string, o SectionOptions) (*SectionAnalysis, bool)
}

func (l SectionLoader) analyse(ctx context.Context, in *SectionInputs, o SectionOptions) (*SectionAnalysis, error) {
	if l.Analyse == nil {
		return in.Analyse(o)
	}
	return l.Analyse(ctx, in, o)
}

// LoadSectionAnalysis reads a section's samples, ties (with their linked dates), events, hiatuses and
// anomaly decisions, the other sections and the calibrations as one snapshot, and analyses the section.
func LoadSectionAnalysis(ctx context.Context, src SnapshotReader, sec store.Section, o SectionOptions) (*SectionAnalysis, error) {
	return SectionLoader{}.One(ctx, src, sec, o)
}

// LoadSectionAnalysisByID reads section id and everything its analysis needs as one snapshot, and
// analyses it with the options options gives for it (its error, such as an address's problems, is
// returned as is, before anything is analysed).
func LoadSectionAnalysisByID(ctx context.Context, src SnapshotReader, id int64, options func(store.Section) (SectionOptions, error)) (*SectionAnalysis, error) {
	return SectionLoader{}.ByID(ctx, src, id, options)
}

// LoadSectionAnalyses analyses every section, each with the options options gives for it, from one
// snapshot: the sections shown together belong to one state of the compilation.
func LoadSectionAnalyses(ctx context.Context, src SnapshotReader, options func(store.Section) SectionOptions) ([]*SectionAnalysis, error) {
	return SectionLoader{}.All(ctx, src, options)
}

// sectionRead is a section's inputs (or its kept analysis) and what is read for it on every load.
type sectionRead struct {
	in         *SectionInputs
	kept       *SectionAnalysis // found by Kept: in holds the section alone
	o          SectionOptions
	decisions  []store.AnomalyDecision
	otherMatur []string
}

// finish analyses the section and sets the decisions and other maturities on a copy of the analysis.
func (l SectionLoader) finish(ctx context.Context, r *sectionRead) (*SectionAnalysis, error) {
	a := r.kept
	if a == nil {
		var err error
		if a, err = l.analyse(ctx, r.in, r.o); err != nil {
			return nil, err
		}
	}
	cp := *a
	cp.Decisions, cp.OtherMatur = r.decisions, r.otherMatur
	return &cp, nil
}

// One is LoadSectionAnalysis with l's analyser.
func (l SectionLoader) One(ctx context.Context, src SnapshotReader, sec store.Section, o SectionOptions) (*SectionAnalysis, error) {
	if err := o.Check(); err != nil {
		return nil, err
	}
	var r *sectionRead
	err := src.ReadSnapshot(ctx, func(s *store.Snapshot) error {
		var err error
		r, err = l.readSection(ctx, s, sec, o, nil, nil)
		return err
	})
	if err != nil {
		return nil, err
	}
	return l.finish(ctx, r)
}

// ByID is LoadSectionAnalysisByID with l's analyser.
func (l SectionLoader) ByID(ctx context.Context, src SnapshotReader, id int64, options func(store.Section) (SectionOptions, error)) (*SectionAnalysis, error) {
	var r *sectionRead
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
		r, err = l.readSection(ctx, s, sec, o, nil, nil)
		return err
	})
	if err != nil {
		return nil, err
	}
	return l.finish(ctx, r)
}

// All is LoadSectionAnalyses with l's analyser: the sections are read in one snapshot, then analysed in
// parallel, at most GOMAXPROCS at a time. The first error in the order of the sections is returned.
func (l SectionLoader) All(ctx context.Context, src SnapshotReader, options func(store.Section) SectionOptions) ([]*SectionAnalysis, error) {
	var rs []*sectionRead
	err := src.ReadSnapshot(ctx, func(s *store.Snapshot) error {
		secs, err := s.Sections(ctx)
		if err != nil {
			return err
		}
		vs, err := s.DataVersions(ctx)
		if err != nil {
			return err
		}
		for _, sec := range secs {
			o := options(sec)
			if err := o.Check(); err != nil {
				return err
			}
			r, err := l.readSection(ctx, s, sec, o, secs, &vs)
			if err != nil {
				return err
			}
			rs = append(rs, r)
		}
		return nil
	})
	if err != nil {
		return nil, err
	}
	out := make([]*SectionAnalysis, len(rs))
	errs := make([]error, len(rs))
	slots := make(chan struct{}, runtime.GOMAXPROCS(0))
	var wg sync.WaitGroup
	for i, r := range rs {
		if err := ctx.Err(); err != nil {
			errs[i] = err
			break
		}
		slots <- struct{}{}
		wg.Add(1)
		go func() {
			defer func() { <-slots; wg.Done() }()
			// A panic here would end the process (no handler's recoverer sees another goroutine): it
			// becomes the section's error, as it was a 500 when the sections were analysed in the request.
			defer func() {
				if p := recover(); p != nil {
					errs[i] = fmt.Errorf("section %q: the analysis failed: %v", r.in.Sec.Name, p)
				}
			}()
			out[i], errs[i] = l.finish(ctx, r)
		}()
	}
	wg.Wait()
	for _, err := range errs {
		if err != nil {
			return nil, err
		}
	}
	return out, nil
}

// readSection reads what a section's analysis needs from the snapshot (nothing when Kept finds it), and
// its curators' decisions and the other sections' differing maturities.
// all is every section of the compilation, vs the data versions (nil: read here).
func (l SectionLoader) readSection(ctx context.Context, s *store.Snapshot, sec store.Section, o SectionOptions, all []store.Section, vs *store.DataVersions) (*sectionRead, error) {
	if vs == nil {
		v, err := s.DataVersions(ctx)
		if err != nil {
			return nil, err
		}
		vs = &v
	}
	in := &SectionInputs{Sec: sec, Dates: map[int64]store.Date{}, Version: SectionVersion(*vs, sec.ID)}
	r := &sectionRead{in: in, o: o}
	if l.Kept != nil && in.Version != "" {
		r.kept, _ = l.Kept(sec, in.Version, o)
	}
	if err := r.readInputs(ctx, s); err != nil {
		return nil, err
	}
	var err error
	if all == nil {
		if all, err = s.Sections(ctx); err != nil {
			return nil, err
		}
	}
	if r.decisions, err = s.AnomalyDecisions(ctx, sec.ID); err != nil {
		return nil, err
	}
	for _, other := range all {
		if other.ID != sec.ID && other.ThermalMaturity != "" && MaturityClass(other.ThermalMaturity) != MaturityClass(sec.ThermalMaturity) &&
			!slices.Contains(r.otherMatur, other.Name+": "+other.ThermalMaturity) {
			r.otherMatur = append(r.otherMatur, other.Name+": "+other.ThermalMaturity)
		}
	}
	return r, nil
}

// readInputs reads the section's samples, ties (with their linked dates), events, hiatuses and the
// calibrations, unless its analysis was found kept.
func (r *sectionRead) readInputs(ctx context.Context, s *store.Snapshot) error {
	if r.kept != nil {
		return nil
	}
	in, sec := r.in, r.in.Sec
	var err error
	if in.Samples, _, err = s.Samples(ctx, sec.ID); err != nil {
		return err
	}
	if in.Ties, err = s.TiePoints(ctx, sec.ID); err != nil {
		return err
	}
	if in.Events, err = s.Events(ctx, sec.ID); err != nil {
		return err
	}
	if in.Hiatuses, err = s.Hiatuses(ctx, sec.ID); err != nil {
		return err
	}
	if in.Cals, err = s.Calibrations(ctx); err != nil {
		return err
	}
	return linkedDates(ctx, s, in.Ties, in.Dates)
}
