package analysis

import (
	"context"
	"errors"
	"fmt"
	"math"
	"slices"

	"coeval/stats"
	"coeval/store"
)

// ErrNoProvince is LoadCompareData's error for a compilation without provinces: nothing to compare.
var ErrNoProvince = errors.New("the compilation has no province to compare")

// CompareData is what the store holds for a comparison, read as one snapshot (LoadCompareData).
type CompareData struct {
	Stamp     int64              // the compilation's data stamp in the snapshot
	Versions  store.DataVersions // the versions of what the store holds, in the snapshot
	Province  store.Province
	Provinces []store.Province
	Units     []store.Unit
	Dates     []store.Date
	Sections  []store.Section
	Samples   map[int64][]store.Sample
	Ties      map[int64][]store.TiePoint // the ties the age models use: those the review choice lets in
	TiesOut   map[int64][]store.TiePoint // the ties it leaves out
	EventsIn  []store.Event              // the events it lets in (section and direct), for its cautions
	EventsOut []store.Event              // the events it leaves out
	Events    map[int64][]store.Event
	Direct    []store.Event // events with a direct age and no section
	Hiatuses  map[int64][]store.Hiatus
	TieIns    map[int64][]TieInput // the ties as the age model uses them (dates at the full level)
	LinkDates map[int64]store.Date // dates linked to tie points
	Cals      []store.Calibration
	// Calibration is the calibration the options chose (by code; the target without one), as stored in
	// the snapshot.
	Calibration stats.Calibration
	// SectionsAway are the sections left out of a comparison that chose none because none of their tie
	// points' ages comes within SectionReachMa of the province's dates (DefaultSections).
	SectionsAway []store.Section
}

// reviewedEvents keeps the events the review choice lets into the comparison (as for dates and ties) and
// notes the others, so the page can say what it left out.
func (d *CompareData) reviewedEvents(evs []store.Event, include string) []store.Event {
	in, out := PartitionReviewed(include, evs, EventState)
	d.EventsIn, d.EventsOut = append(d.EventsIn, in...), append(d.EventsOut, out...)
	return in
}

// LoadCompareData reads everything a comparison with the options needs as one snapshot of the store, so
// every record belongs to one state of the compilation even while others write. Options naming records
// that do not exist are *OptionErrors of their field; a compilation without provinces is ErrNoProvince.
func LoadCompareData(ctx context.Context, src SnapshotReader, o CompareOptions) (*CompareData, error) {
	if err := o.Check(); err != nil {
		return nil, err
	}
	d := &CompareData{Samples: map[int64][]store.Sample{}, Ties: map[int64][]store.TiePoint{}, TiesOut: map[int64][]store.TiePoint{},
		Events: map[int64][]store.Event{}, Hiatuses: map[int64][]store.Hiatus{}, TieIns: map[int64][]TieInput{}, LinkDates: map[int64]store.Date{}}
	err := src.ReadSnapshot(ctx, func(s *store.Snapshot) error {
		// Chosen sections: their events are counted against the limit before the province's dates are
		// read. None chosen: the province's dates decide which sections come near enough.
		first, then := d.readSectionEvents, d.readProvince
		if len(o.SectionIDs) == 0 {
			first, then = d.readProvince, d.readSectionEvents
		}
		if err := first(ctx, s, o); err != nil {
			return err
		}
		if err := then(ctx, s, o); err != nil {
			return err
		}
		if err := d.readSectionData(ctx, s); err != nil {
			return err
		}
		return d.readDirect(ctx, s, o)
	})
	if err != nil {
		return nil, err
	}
	return d, nil
}

// readProvince reads the stamp, the provinces, the chosen one with its units and dates, and the
// calibrations.
func (d *CompareData) readProvince(ctx context.Context, s *store.Snapshot, o CompareOptions) error {
	var err error
	if d.Stamp, err = s.DataStamp(ctx); err != nil {
		return err
	}
	if d.Versions, err = s.DataVersions(ctx); err != nil {
		return err
	}
	if d.Provinces, err = s.Provinces(ctx); err != nil {
		return err
	}
	if len(d.Provinces) == 0 {
		return ErrNoProvince
	}
	id := o.ProvinceID
	if id == 0 {
		id = d.Provinces[0].ID
	}
	if d.Province, err = s.Province(ctx, id); err != nil {
		if errors.Is(err, store.ErrNotFound) {
			return &OptionError{Option: "ProvinceID", Problem: fmt.Sprintf("there is no province %d", id)}
		}
		return err
	}
	if d.Units, err = s.Units(ctx, id); err != nil {
		return err
	}
	if d.Dates, _, err = s.Dates(ctx, store.DateFilter{ProvinceID: id}); err != nil {
		return err
	}
	if d.Cals, err = s.Calibrations(ctx); err != nil {
		return err
	}
	code := o.Density.Summary.Calibration.Code
	if code == "" {
		target, ok := TargetCalibration(d.Cals)
		if !ok {
			return fmt.Errorf("calibration: the compilation has no calibrations")
		}
		code = target.Code
	}
	i := slices.IndexFunc(d.Cals, func(c store.Calibration) bool { return c.Code == code })
	if i < 0 {
		return &OptionError{Option: "Calibration", Problem: "there is no calibration " + quote(code)}
	}
	d.Calibration = CalibrationOf(d.Cals[i])
	return nil
}

// readSectionEvents reads the chosen sections with their ties and events, the ties and events split by
// the review choice, and refuses a choice of more than MaxCompareEvents events before anything larger
// (samples, the province's dates) is read: at 30 sections of 300 samples, reading them all took 190 ms of
// CPU before the 400 that a count of the events can give at once.
func (d *CompareData) readSectionEvents(ctx context.Context, s *store.Snapshot, o CompareOptions) error {
	all, err := s.Sections(ctx)
	if err != nil {
		return err
	}
	var bad OptionErrors
	for _, id := range o.SectionIDs {
		if !slices.ContainsFunc(all, func(x store.Section) bool { return x.ID == id }) {
			bad = append(bad, &OptionError{Option: "SectionIDs", Problem: fmt.Sprintf("there is no section %d", id)})
		}
	}
	if len(bad) > 0 {
		return bad
	}
	include := o.Density.Summary.Include
	lo, hi, near := d.datesReach()
	for _, sec := range all {
		if len(o.SectionIDs) > 0 && !slices.Contains(o.SectionIDs, sec.ID) {
			continue
		}
		ties, err := s.TiePoints(ctx, sec.ID)
		if err != nil {
			return err
		}
		if len(o.SectionIDs) == 0 && near && !tiesReach(ties, lo, hi) {
			d.SectionsAway = append(d.SectionsAway, sec)
			continue
		}
		d.Sections = append(d.Sections, sec)
		// The age models rest on the ties the review choice (as for the dates) lets in.
		d.Ties[sec.ID], d.TiesOut[sec.ID] = PartitionReviewed(include, ties, TieState)
		evs, err := s.Events(ctx, sec.ID)
		if err != nil {
			return err
		}
		d.Events[sec.ID] = d.reviewedEvents(evs, include)
	}
	if n := EventsAtLeast(d, o); n > MaxCompareEvents {
		return &OptionError{Option: "EventIDs", Problem: fmt.Sprintf("at least %d events chosen, at most %d (choose with events= or sections=)", n, MaxCompareEvents)}
	}
	return nil
}

// SectionReachMa is how far from a province's dates (in Ma) a section's tie points may lie for the section
// to be compared with the province when no section is chosen. An event's answer looks as far
// (eventanswer.go).
const SectionReachMa = 5.0

// datesReach is the span of the province's dates widened by SectionReachMa on each side; near is false
// when the province has no dates (every section is then kept).
func (d *CompareData) datesReach() (lo, hi float64, near bool) {
	lo, hi = math.Inf(1), math.Inf(-1)
	for _, dt := range d.Dates {
		lo, hi = math.Min(lo, dt.AgeMa), math.Max(hi, dt.AgeMa)
	}
	if lo > hi {
		return 0, 0, false
	}
	return lo - SectionReachMa, hi + SectionReachMa, true
}

// tiesReach says whether any tie point's age (its value, or its range) lies within [lo, hi] Ma. A section
// without an aged tie cannot place its events in time and is left out too.
func tiesReach(ties []store.TiePoint, lo, hi float64) bool {
	for _, t := range ties {
		switch {
		case t.AgeMa != nil && *t.AgeMa >= lo && *t.AgeMa <= hi:
			return true
		case t.AgeMinMa != nil && t.AgeMaxMa != nil && *t.AgeMaxMa >= lo && *t.AgeMinMa <= hi:
			return true
		}
	}
	return false
}

// readSectionData reads the chosen sections' samples, hiatuses and the dates their ties are linked to
// (after readSectionEvents and readProvince, whose calibrations the ties' ages are put on).
func (d *CompareData) readSectionData(ctx context.Context, s *store.Snapshot) error {
	target, _ := TargetCalibration(d.Cals)
	var err error
	for _, sec := range d.Sections {
		if d.Samples[sec.ID], _, err = s.Samples(ctx, sec.ID); err != nil {
			return err
		}
		if d.Hiatuses[sec.ID], err = s.Hiatuses(ctx, sec.ID); err != nil {
			return err
		}
		for _, t := range d.Ties[sec.ID] {
			if t.DateID == nil {
				continue
			}
			if _, ok := d.LinkDates[*t.DateID]; !ok {
				dt, err := s.Date(ctx, *t.DateID)
				if err != nil {
					return fmt.Errorf("tie %q: %w", t.Label, err)
				}
				d.LinkDates[*t.DateID] = dt
			}
		}
		// Absolute ages compared across systems and laboratories: ties from dates at the full level, on
		// the compilation's target calibration.
		if d.TieIns[sec.ID], err = TieInputs(d.Ties[sec.ID], d.LinkDates, "full", CalibrationOf(target)); err != nil {
			return err
		}
	}
	return nil
}

// readDirect reads the events with a direct age and no section, and checks the chosen events exist.
func (d *CompareData) readDirect(ctx context.Context, s *store.Snapshot, o CompareOptions) error {
	evs, err := s.Events(ctx, 0)
	if err != nil {
		return err
	}
	known := map[int64]bool{}
	for _, e := range evs {
		known[e.ID] = true
		if e.SectionID == nil && e.AgeMa != nil && e.SigmaMa != nil {
			d.Direct = append(d.Direct, d.reviewedEvents([]store.Event{e}, o.Density.Summary.Include)...)
		}
	}
	var bad OptionErrors
	for _, id := range o.EventIDs {
		if !known[id] {
			bad = append(bad, &OptionError{Option: "EventIDs", Problem: fmt.Sprintf("there is no event %d", id)})
		}
	}
	return bad.Err()
}
