package store

import (
	"context"
	"fmt"
	"path/filepath"
	"slices"
	"testing"
)

// versionNames names every version the store keeps ("province 2", "section 3", "calibrations", …).
func versionNames(v DataVersions) map[string]int64 {
	out := map[string]int64{"calibrations": v.Calibrations, "direct events": v.DirectEvents, "events": v.Events}
	for id, n := range v.Provinces {
		out[fmt.Sprintf("province %d", id)] = n
	}
	for id, n := range v.Sections {
		out[fmt.Sprintf("section %d", id)] = n
	}
	return out
}

// bumpedBy runs write and returns the versions it changed, by name, sorted; it fails when a version went
// down or one disappeared (a version only grows).
func bumpedBy(t *testing.T, db *DB, write func() error) []string {
	t.Helper()
	ctx := context.Background()
	before, err := db.DataVersions(ctx)
	if err != nil {
		t.Fatal(err)
	}
	if err := write(); err != nil {
		t.Fatal(err)
	}
	after, err := db.DataVersions(ctx)
	if err != nil {
		t.Fatal(err)
	}
	b, a := versionNames(before), versionNames(after)
	var out []string
	for name, n := range a {
		if n < b[name] {
			t.Errorf("%s went from %d down to %d", name, b[name], n)
		}
		if n != b[name] {
			out = append(out, name)
		}
	}
	for name := range b {
		if _, ok := a[name]; !ok {
			t.Errorf("%s disappeared", name)
		}
	}
	slices.Sort(out)
	return out
}

// names sorts the names of the versions a write is expected to change.
func names(ns ...string) []string {
	slices.Sort(ns)
	return slices.Compact(ns)
}

// linkedSections names the sections whose tie points are linked to the date (read from the store).
func linkedSections(t *testing.T, db *DB, dateID int64) []string {
	t.Helper()
	ties, err := db.TiePoints(context.Background(), 0)
	if err != nil {
		t.Fatal(err)
	}
	var out []string
	for _, tp := range ties {
		if tp.DateID != nil && *tp.DateID == dateID {
			out = append(out, fmt.Sprintf("section %d", tp.SectionID))
		}
	}
	return out
}

// Every way of writing a province's dates and units (a form edit, an import, a review, a revert, an undo,
// a delete, a unit moved to another province) bumps the version of the province it touches, and only
// that (both provinces for a unit moved), plus the sections whose tie points are linked to a date that
// changed; the expected versions are derived from the store, not from the handlers.
func TestDataVersionsFollowEveryWriteOfAProvince(t *testing.T) {
	db := demoDB(t)
	ctx := WithActor(context.Background(), 0)
	provs, err := db.Provinces(ctx)
	if err != nil || len(provs) < 2 {
		t.Fatalf("the demo should hold two provinces or more: %d, %v", len(provs), err)
	}
	p := provs[0]
	data, err := db.ProvinceDates(ctx, p.ID)
	if err != nil || len(data.Dates) == 0 {
		t.Fatalf("province %d: %d dates, %v", p.ID, len(data.Dates), err)
	}
	prov := fmt.Sprintf("province %d", p.ID)
	d := data.Dates[0]
	if v, err := db.ProvinceVersion(ctx, p.ID); err != nil || v == 0 || v != data.Version {
		t.Errorf("province version %d (%v), read with the dates %d", v, err, data.Version)
	}

	// A form edit.
	got := bumpedBy(t, db, func() error {
		f := FormOfDate(d)
		f["notes"] = "edited for the versions test"
		_, err := db.UpdateDate(ctx, d.ID, d.Version, f, true)
		return err
	})
	if want := names(append(linkedSections(t, db, d.ID), prov)...); !slices.Equal(got, want) {
		t.Errorf("date edit bumped %v, want %v", got, want)
	}
	// A revert of that edit.
	got = bumpedBy(t, db, func() error { return db.RevertRevision(ctx, lastRevision(t, db, "date", d.ID)) })
	if want := names(prov); !slices.Equal(got, want) {
		t.Errorf("revert bumped %v, want %v", got, want)
	}

	// An import of a new date into one of the province's units, then its undo.
	u := data.Units[0]
	var res ImportResult
	got = bumpedBy(t, db, func() error {
		res, err = importString(t, db, "dates", "", dateHeader+fmt.Sprintf("%q,%q,VERSIONS-1,upb_idtims,zircon,eruption,155.4,0.06,2,,,\n", p.Name, u.Name))
		return err
	})
	if want := names(prov); !slices.Equal(got, want) {
		t.Errorf("import bumped %v, want %v", got, want)
	}
	got = bumpedBy(t, db, func() error { _, err := db.UndoBatch(ctx, res.BatchID); return err })
	if want := names(prov); !slices.Equal(got, want) {
		t.Errorf("undo bumped %v, want %v", got, want)
	}

	// A review: a pending date accepted.
	var pending *Date
	for _, p2 := range provs {
		pd, err := db.ProvinceDates(ctx, p2.ID)
		if err != nil {
			t.Fatal(err)
		}
		for i := range pd.Dates {
			if pd.Dates[i].ReviewState == ReviewPending {
				pending = &pd.Dates[i]
				break
			}
		}
		if pending != nil {
			break
		}
	}
	if pending == nil {
		t.Fatal("the demo should hold a pending date of a unit")
	}
	got = bumpedBy(t, db, func() error { _, err := db.ReviewDate(ctx, pending.ID, pending.Version, true, "checked"); return err })
	if want := names(fmt.Sprintf("province %d", *pending.ProvinceID)); !slices.Equal(got, want) {
		t.Errorf("review bumped %v, want %v", got, want)
	}

	// A delete.
	cur, err := db.Date(ctx, d.ID)
	if err != nil {
		t.Fatal(err)
	}
	want := names(append(linkedSections(t, db, d.ID), prov)...)
	got = bumpedBy(t, db, func() error { return db.DeleteDate(ctx, cur.ID, cur.Version) })
	if !slices.Equal(got, want) {
		t.Errorf("delete bumped %v, want %v", got, want)
	}

	// A unit moved to another province: both.
	other := provs[1]
	got = bumpedBy(t, db, func() error {
		f := FormOfUnit(u)
		f["province"] = other.Name
		_, err := db.UpdateUnit(ctx, u.ID, u.Version, f)
		return err
	})
	if want := names(prov, fmt.Sprintf("province %d", other.ID)); !slices.Equal(got, want) {
		t.Errorf("unit move bumped %v, want %v", got, want)
	}

	// The province's own record.
	got = bumpedBy(t, db, func() error {
		cur, err := db.Province(ctx, p.ID)
		if err != nil {
			return err
		}
		f := FormOfProvince(cur)
		f["description"] = "edited for the versions test"
		_, err = db.UpdateProvince(ctx, p.ID, cur.Version, f)
		return err
	})
	if want := names(prov); !slices.Equal(got, want) {
		t.Errorf("province edit bumped %v, want %v", got, want)
	}
}

// Every way of writing a section's records (its tie points, events, hiatuses, measurements, its record,
// a date a tie point is linked to) bumps that section's version and only that; the calibrations have
// their own version, and events added or deleted bump the events' version too.
func TestDataVersionsFollowEveryWriteOfASection(t *testing.T) {
	db := demoDB(t)
	ctx := WithActor(context.Background(), 0)
	ties, err := db.TiePoints(ctx, 0)
	if err != nil {
		t.Fatal(err)
	}
	// A section with a tie linked to a date.
	i := slices.IndexFunc(ties, func(tp TiePoint) bool { return tp.DateID != nil })
	if i < 0 {
		t.Fatal("the demo should hold a tie point linked to a date")
	}
	tie := ties[i]
	sec := fmt.Sprintf("section %d", tie.SectionID)
	s, err := db.Section(ctx, tie.SectionID)
	if err != nil {
		t.Fatal(err)
	}

	got := bumpedBy(t, db, func() error {
		f := FormOfTie(tie)
		f["notes"] = "edited for the versions test"
		_, err := db.UpdateTie(ctx, tie.ID, tie.Version, f, true)
		return err
	})
	if want := names(sec); !slices.Equal(got, want) {
		t.Errorf("tie edit bumped %v, want %v", got, want)
	}

	// The date the tie is linked to (a date of the section, of no province).
	linked, err := db.Date(ctx, *tie.DateID)
	if err != nil {
		t.Fatal(err)
	}
	want := linkedSections(t, db, linked.ID)
	if linked.ProvinceID != nil {
		want = append(want, fmt.Sprintf("province %d", *linked.ProvinceID))
	}
	got = bumpedBy(t, db, func() error {
		f := FormOfDate(linked)
		f["notes"] = "edited for the versions test"
		_, err := db.UpdateDate(ctx, linked.ID, linked.Version, f, true)
		return err
	})
	if want := names(want...); !slices.Equal(got, want) {
		t.Errorf("linked date edit bumped %v, want %v", got, want)
	}

	evs, err := db.Events(ctx, s.ID)
	if err != nil || len(evs) == 0 {
		t.Fatalf("section %d: %d events, %v", s.ID, len(evs), err)
	}
	got = bumpedBy(t, db, func() error {
		f := FormOfEvent(evs[0])
		f["notes"] = "edited for the versions test"
		_, err := db.UpdateEvent(ctx, evs[0].ID, evs[0].Version, f, true)
		return err
	})
	if want := names(sec); !slices.Equal(got, want) {
		t.Errorf("event edit bumped %v, want %v", got, want)
	}
	var added Event
	got = bumpedBy(t, db, func() error {
		f := FormOfEvent(evs[0])
		f["name"] = "Added for the versions test"
		added, err = db.CreateEvent(ctx, s.ID, f, true)
		return err
	})
	if want := names(sec, "events"); !slices.Equal(got, want) {
		t.Errorf("event added bumped %v, want %v", got, want)
	}
	got = bumpedBy(t, db, func() error { return db.DeleteEvent(ctx, added.ID, added.Version) })
	if want := names(sec, "events"); !slices.Equal(got, want) {
		t.Errorf("event deleted bumped %v, want %v", got, want)
	}

	got = bumpedBy(t, db, func() error {
		_, err := db.CreateHiatus(ctx, s.ID, Form{"height_m": "1.5", "min_duration_ma": "0.1"}, true)
		return err
	})
	if want := names(sec); !slices.Equal(got, want) {
		t.Errorf("hiatus added bumped %v, want %v", got, want)
	}

	got = bumpedBy(t, db, func() error {
		_, err := importString(t, db, "measurements", s.Name, "sample,height_m,toc_wt_pct\nVERSIONS-1,0.33,1.1\n")
		return err
	})
	if want := names(sec); !slices.Equal(got, want) {
		t.Errorf("measurements import bumped %v, want %v", got, want)
	}

	got = bumpedBy(t, db, func() error {
		f := FormOfSection(s)
		f["notes"] = "edited for the versions test"
		_, err := db.UpdateSection(ctx, s.ID, s.Version, f)
		return err
	})
	if want := names(sec); !slices.Equal(got, want) {
		t.Errorf("section edit bumped %v, want %v", got, want)
	}

	cals, err := db.Calibrations(ctx)
	if err != nil || len(cals) < 2 {
		t.Fatalf("%d calibrations, %v", len(cals), err)
	}
	got = bumpedBy(t, db, func() error { return db.SetTargetCalibration(ctx, cals[1].Code, "versions test") })
	if want := names("calibrations"); !slices.Equal(got, want) {
		t.Errorf("target calibration bumped %v, want %v", got, want)
	}
}

// A province deleted and made again with the same id (the delete reverted) never shows a version it had
// before: a result kept for the old one is never found for the new one.
func TestDataVersionsNeverRepeat(t *testing.T) {
	db := mustOpenDB(t)
	ctx := WithActor(context.Background(), 0)
	p, err := db.CreateProvince(ctx, Form{"province": "First"})
	if err != nil {
		t.Fatal(err)
	}
	v1, err := db.ProvinceVersion(ctx, p.ID)
	if err != nil || v1 == 0 {
		t.Fatalf("version %d, %v", v1, err)
	}
	if err := db.DeleteProvince(ctx, p.ID, p.Version); err != nil {
		t.Fatal(err)
	}
	if err := db.RevertRevision(ctx, lastRevision(t, db, "province", p.ID)); err != nil {
		t.Fatal(err)
	}
	if _, err := db.Province(ctx, p.ID); err != nil {
		t.Fatalf("the reverted delete did not bring province %d back: %v", p.ID, err)
	}
	v2, err := db.ProvinceVersion(ctx, p.ID)
	if err != nil || v2 <= v1 {
		t.Errorf("version of the province made again %d (%v), want above %d", v2, err, v1)
	}
}

// A release's snapshot cut before the versions were kept (no data_versions table) cannot change: every
// province and section it holds has version 1, so its results are kept too, and reading it does not fail.
func TestDataVersionsOfAnOldSnapshot(t *testing.T) {
	ctx := context.Background()
	db := demoDB(t)
	path := filepath.Join(t.TempDir(), "old-release.db")
	if _, err := db.db.ExecContext(ctx, `VACUUM INTO ?`, path); err != nil {
		t.Fatal(err)
	}
	old, err := Open(ctx, path)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := old.db.ExecContext(ctx, `DROP TABLE data_versions`); err != nil {
		t.Fatal(err)
	}
	old.Close()
	snap, err := OpenSnapshot(ctx, path)
	if err != nil {
		t.Fatal(err)
	}
	defer snap.Close()
	provs, err := snap.Provinces(ctx)
	if err != nil || len(provs) == 0 {
		t.Fatalf("%d provinces, %v", len(provs), err)
	}
	secs, err := snap.Sections(ctx)
	if err != nil {
		t.Fatal(err)
	}
	vs, err := snap.DataVersions(ctx)
	if err != nil {
		t.Fatal(err)
	}
	if len(vs.Provinces) != len(provs) || len(vs.Sections) != len(secs) || vs.Calibrations != 1 || vs.FirstProvince != provs[0].ID {
		t.Errorf("versions of the old snapshot %+v, want 1 for each of its %d provinces and %d sections", vs, len(provs), len(secs))
	}
	pd, err := snap.ProvinceDates(ctx, provs[0].ID)
	if err != nil || pd.Version != 1 {
		t.Errorf("province %d read from the old snapshot: version %d, %v; want 1", provs[0].ID, pd.Version, err)
	}
	if v, err := snap.ProvinceVersion(ctx, 999); err != nil || v != 0 {
		t.Errorf("a province the old snapshot does not hold: version %d, %v; want 0", v, err)
	}
}
