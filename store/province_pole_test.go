package store

import (
	"bytes"
	"context"
	"io/fs"
	"strings"
	"testing"

	"github.com/google/go-cmp/cmp"

	"coeval/migrations"
)

// A province's palaeomagnetic pole (migration 017) is checked field by field, with the same rules in the
// provinces import and the province form: each problem names its field.
func TestProvincePoleIsCheckedFieldByField(t *testing.T) {
	db := mustOpenDB(t)
	ctx := context.Background()
	good := Form{"province": "Pole Traps", "pole_latitude": "62.5", "pole_longitude": "215", "pole_a95": "5.5", "pole_source": "invented pole for a test"}
	with := func(field, value string) Form {
		f := Form{}
		for k, v := range good {
			f[k] = v
		}
		f[field] = value
		return f
	}
	cases := []struct {
		field, value, want string
	}{
		{"pole_latitude", "90.5", "want a number from -90 to 90"},
		{"pole_latitude", "-91", "want a number from -90 to 90"},
		{"pole_latitude", "north", "number"},
		{"pole_latitude", "", "a pole needs its latitude, longitude, A95 and source together"},
		{"pole_longitude", "360.1", "want a number from -180 to 360"},
		{"pole_longitude", "-180.5", "want a number from -180 to 360"},
		{"pole_longitude", "", "a pole needs its latitude, longitude, A95 and source together"},
		{"pole_a95", "0", "greater than 0 and at most 30"},
		{"pole_a95", "-2", "greater than 0 and at most 30"},
		{"pole_a95", "95", "greater than 0 and at most 30"},
		{"pole_a95", "", "a pole needs its latitude, longitude, A95 and source together"},
		{"pole_source", "", "a pole needs its latitude, longitude, A95 and source together"},
		{"pole_source", "   ", "a pole needs its latitude, longitude, A95 and source together"},
	}
	for _, c := range cases {
		_, err := db.CreateProvince(ctx, with(c.field, c.value))
		if msg := problemOn(t, err, c.field); !strings.Contains(msg, c.want) {
			t.Errorf("%s=%q: %q, want it to say %q", c.field, c.value, msg, c.want)
		}
		// The import file says the same of the same cell.
		body := "province,description,pole_latitude,pole_longitude,pole_a95,pole_source\n"
		f := with(c.field, c.value)
		body += strings.Join([]string{"Pole Traps", "", f["pole_latitude"], f["pole_longitude"], f["pole_a95"], csvQuote(f["pole_source"])}, ",") + "\n"
		_, err = importString(t, db, "provinces", "", body)
		if msg := problemOn(t, err, c.field); !strings.Contains(msg, c.want) {
			t.Errorf("import %s=%q: %q, want it to say %q", c.field, c.value, msg, c.want)
		}
	}
	// Only a source, without a pole, is refused too: it names the three numbers missing.
	_, err := db.CreateProvince(ctx, Form{"province": "Pole Traps", "pole_source": "a paper"})
	for _, f := range []string{"pole_latitude", "pole_longitude", "pole_a95"} {
		problemOn(t, err, f)
	}
	if ps, _ := db.Provinces(ctx); len(ps) != 0 {
		t.Fatalf("%d provinces stored after refused forms and imports", len(ps))
	}

	// A province without a pole, and one with: longitudes 0..360 are stored as -180..180 (215° E = 145° W).
	p, err := db.CreateProvince(ctx, good)
	if err != nil {
		t.Fatal(err)
	}
	if !p.HasPole() || *p.PoleLatitude != 62.5 || *p.PoleLongitude != -145 || *p.PoleA95 != 5.5 || p.PoleSource != "invented pole for a test" {
		t.Errorf("stored pole %v %v %v %q, want 62.5, -145, 5.5 and the source", p.PoleLatitude, p.PoleLongitude, p.PoleA95, p.PoleSource)
	}
	q, err := db.CreateProvince(ctx, Form{"province": "Poleless Traps"})
	if err != nil || q.HasPole() || q.PoleLatitude != nil {
		t.Errorf("a province without a pole: %v, %+v", err, q)
	}
}

func csvQuote(s string) string {
	if strings.ContainsAny(s, ",\" ") {
		return `"` + strings.ReplaceAll(s, `"`, `""`) + `"`
	}
	return s
}

// A pole goes through the form (stored → form → stored), through export → import, and an edit removing it
// is undone to give it back.
func TestProvincePoleRoundTrips(t *testing.T) {
	db := mustOpenDB(t)
	ctx := context.Background()
	f := Form{"province": "Pole Traps", "description": "d", "pole_latitude": "-71.25", "pole_longitude": "12.5", "pole_a95": "3.8", "pole_source": "invented pole, \"quoted\", for a test"}
	p, err := db.CreateProvince(ctx, f)
	if err != nil {
		t.Fatal(err)
	}
	if diff := cmp.Diff(f, FormOfProvince(p)); diff != "" {
		t.Errorf("form → store → form (-typed +stored):\n%s", diff)
	}
	if _, err := db.CreateProvince(ctx, Form{"province": "Poleless Traps"}); err != nil {
		t.Fatal(err)
	}
	var out bytes.Buffer
	if err := db.Export(ctx, "provinces", "", &out); err != nil {
		t.Fatal(err)
	}
	db2 := mustOpenDB(t)
	if _, err := db2.ImportProvinces(ctx, "provinces.csv", strings.NewReader(out.String())); err != nil {
		t.Fatalf("re-import of the export: %v\n%s", err, out.String())
	}
	a, _ := db.Provinces(ctx)
	b, _ := db2.Provinces(ctx)
	strip := func(ps []Province) []Province {
		for i := range ps {
			ps[i].ID, ps[i].CreatedAt, ps[i].UpdatedAt = 0, "", ""
		}
		return ps
	}
	if diff := cmp.Diff(strip(a), strip(b)); diff != "" {
		t.Errorf("export → import (-exported +imported):\n%s", diff)
	}

	// Removing the pole by an edit, then undoing the edit, gives the pole back.
	if _, err := db.UpdateProvince(ctx, p.ID, p.Version, Form{"province": "Pole Traps", "description": "d"}); err != nil {
		t.Fatal(err)
	}
	if got, _ := db.Province(ctx, p.ID); got.HasPole() || got.PoleSource != "" {
		t.Errorf("the edit left the pole: %+v", got)
	}
	if err := db.RevertRevision(ctx, lastRevision(t, db, "province", p.ID)); err != nil {
		t.Fatal(err)
	}
	if got, _ := db.Province(ctx, p.ID); !got.HasPole() || *got.PoleA95 != 3.8 || got.PoleSource != f["pole_source"] {
		t.Errorf("undo did not bring the pole back: %+v", got)
	}
}

// Migration 017 gives the provinces' recorded states the pole fields, so that a change made before it can
// still be undone: a state without them (as written before 017) would never compare equal to the record.
// Here a revision's states are stripped back to the old shape (the undo of its change is then refused), the
// migration's UPDATEs are run again, and the undo succeeds.
func TestMigration017GivesOldProvinceStatesThePoleFields(t *testing.T) {
	db := mustOpenDB(t)
	ctx := context.Background()
	p, err := db.CreateProvince(ctx, Form{"province": "Old Traps", "description": "first"})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := db.UpdateProvince(ctx, p.ID, p.Version, Form{"province": "Old Traps", "description": "second"}); err != nil {
		t.Fatal(err)
	}
	strip := `UPDATE revisions SET before_json = json_remove(before_json, '$.pole_latitude', '$.pole_longitude', '$.pole_a95', '$.pole_source'),
		after_json = json_remove(after_json, '$.pole_latitude', '$.pole_longitude', '$.pole_a95', '$.pole_source') WHERE record_type = 'province'`
	if _, err := db.db.ExecContext(ctx, strip); err != nil {
		t.Fatal(err)
	}
	revs, _ := db.Revisions(ctx, "province", p.ID)
	batch := revs[0].BatchID // the edit's change (newest first)
	if revs[0].Before == nil {
		t.Fatal("the newest revision is the creation, not the edit")
	}
	if _, err := db.UndoBatch(ctx, batch); err == nil {
		t.Fatal("a state without the pole fields was undone: the test does not reach what the migration fixes")
	}
	sqlText, err := fs.ReadFile(migrations.FS, "017_province_poles.sql")
	if err != nil {
		t.Fatal(err)
	}
	_, updates, _ := strings.Cut(string(sqlText), "ALTER TABLE provinces ADD COLUMN pole_source")
	_, updates, _ = strings.Cut(updates, "\n")
	if _, err := db.db.ExecContext(ctx, updates); err != nil {
		t.Fatal(err)
	}
	if _, err := db.UndoBatch(ctx, batch); err != nil {
		t.Fatalf("undo after the migration's updates: %v", err)
	}
	if got, _ := db.Province(ctx, p.ID); got.Description != "first" {
		t.Errorf("after undo: %q, want first", got.Description)
	}
}
