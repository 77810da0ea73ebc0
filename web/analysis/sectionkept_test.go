package analysis

import (
	"context"
	"testing"

	"coeval/store"
)

// A section's analysis found kept for its version is used without reading the section's records (its
// samples, ties, events, hiatuses, calibrations); the curators' decisions are still read on every load.
// Without a kept analysis, or after an edit to the section (a new version), the records are read.
func TestSectionLoaderKeptReadsNoRecords(t *testing.T) {
	db := demoDB(t)
	ctx := store.WithActor(context.Background(), 0)
	secs, err := db.Sections(ctx)
	if err != nil || len(secs) == 0 {
		t.Fatalf("%d sections, %v", len(secs), err)
	}
	sec := secs[0]
	kept := &SectionAnalysis{Sec: sec}
	var keptVersion string
	l := SectionLoader{Kept: func(s store.Section, version string, o SectionOptions) (*SectionAnalysis, bool) {
		if s.ID == sec.ID && version == keptVersion {
			return kept, true
		}
		return nil, false
	}}
	read := func() *sectionRead {
		t.Helper()
		var r *sectionRead
		if err := db.ReadSnapshot(ctx, func(s *store.Snapshot) error {
			var err error
			r, err = l.readSection(ctx, s, sec, SectionOptions{}, nil, nil)
			return err
		}); err != nil {
			t.Fatal(err)
		}
		return r
	}
	r := read()
	if r.kept != nil || len(r.in.Samples) == 0 || len(r.in.Cals) == 0 || r.in.Version == "" {
		t.Fatalf("nothing kept: kept %v, %d samples, %d calibrations, version %q; want the records read", r.kept != nil, len(r.in.Samples), len(r.in.Cals), r.in.Version)
	}
	keptVersion = r.in.Version
	r = read()
	if r.kept != kept || r.in.Samples != nil || r.in.Ties != nil || r.in.Events != nil || r.in.Cals != nil {
		t.Errorf("kept: found %v, %d samples, %d ties, %d events, %d calibrations read; want the kept analysis and no record read",
			r.kept == kept, len(r.in.Samples), len(r.in.Ties), len(r.in.Events), len(r.in.Cals))
	}
	f := store.FormOfSection(sec)
	f["notes"] = "edited for the kept test"
	if _, err := db.UpdateSection(ctx, sec.ID, sec.Version, f); err != nil {
		t.Fatal(err)
	}
	if r = read(); r.kept != nil || r.in.Version == keptVersion || len(r.in.Samples) == 0 {
		t.Errorf("after an edit to the section: kept %v, version %q (was %q), %d samples; want a new version and the records read",
			r.kept != nil, r.in.Version, keptVersion, len(r.in.Samples))
	}
}
