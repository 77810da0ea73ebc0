package store

import (
	"archive/zip"
	"bytes"
	"context"
	"io"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
)

// demoDB is a migrated database seeded with the invented demo (it holds pending dates).
func demoDB(t *testing.T) *DB {
	t.Helper()
	db := mustOpenDB(t)
	if _, _, err := db.SeedDemo(context.Background(), os.DirFS(filepath.Join("..", "testdata", "demo")), "Invented."); err != nil {
		t.Fatal(err)
	}
	return db
}

func cut(t *testing.T, db *DB, version string) Release {
	t.Helper()
	rel, err := db.CutRelease(context.Background(), ReleaseForm{Version: version, Title: "Invented compilation"}, 0)
	if err != nil {
		t.Fatalf("cut %s: %v", version, err)
	}
	return rel
}

func releasePath(t *testing.T, db *DB, rel Release) string {
	t.Helper()
	p, err := db.ReleasePath(context.Background(), rel)
	if err != nil {
		t.Fatal(err)
	}
	return p
}

// A release holds exactly the accepted records of its moment, names the others, keeps nothing private,
// and does not move when the compilation changes afterwards.
func TestReleaseFreezesTheAcceptedRecords(t *testing.T) {
	ctx := context.Background()
	db := demoDB(t)
	before, _ := db.Counts(ctx)
	if before.DatesPending == 0 {
		t.Fatal("the demo should hold pending dates for this test")
	}
	var pending []string
	ds, _, _ := db.Dates(ctx, DateFilter{ReviewState: "pending"})
	for _, d := range ds {
		pending = append(pending, d.SampleCode)
	}
	rel := cut(t, db, "2027.1")
	if rel.Counts.Dates != before.Dates-before.DatesPending || rel.Counts.DatesPending != 0 {
		t.Errorf("release holds %d dates (%d pending); the compilation had %d, %d of them pending",
			rel.Counts.Dates, rel.Counts.DatesPending, before.Dates, before.DatesPending)
	}
	var named []string
	for _, it := range rel.LeftOut {
		if it.Kind == "date" {
			named = append(named, strings.SplitN(it.Name, " (", 2)[0])
		}
	}
	slices.Sort(named)
	slices.Sort(pending)
	if !slices.Equal(named, pending) {
		t.Errorf("left out %v, want the pending dates %v", named, pending)
	}
	path := releasePath(t, db, rel)
	snap, err := OpenSnapshot(ctx, path)
	if err != nil {
		t.Fatal(err)
	}
	defer snap.Close()
	for q, want := range map[string]int{
		`SELECT count(*) FROM sessions`: 0, `SELECT count(*) FROM api_tokens`: 0, `SELECT count(*) FROM uploads`: 0,
		`SELECT count(*) FROM users WHERE password_hash <> ''`: 0, `SELECT count(*) FROM dates WHERE review_state <> 'accepted'`: 0,
	} {
		var n int
		if err := snap.db.QueryRow(q).Scan(&n); err != nil || n != want {
			t.Errorf("%s = %d (%v), want %d", q, n, err, want)
		}
	}
	// Nothing private left in the file's free pages either: no password hash, no left-out sample code.
	raw, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if bytes.Contains(raw, []byte("$2a$")) || bytes.Contains(raw, []byte("$2b$")) {
		t.Error("the release's file still holds a password hash")
	}
	if v, _ := snap.Setting(ctx, SettingRelease); v != "2027.1" {
		t.Errorf("the snapshot says release %q", v)
	}
	// Later edits do not reach the release: its file keeps its checksum.
	if _, err := importString(t, db, "dates", "", dateHeader+"Hvarn Plateau Basalts (invented),Later Unit,LATE-1,upb_idtims,zircon,eruption,150.1,0.05,2,,,\n"); err != nil {
		t.Fatal(err)
	}
	if sum, _ := fileSHA256(path); sum != rel.SHA256 {
		t.Error("the release's file changed after an import into the compilation")
	}
	if _, err := db.CutRelease(ctx, ReleaseForm{Version: "2027.1", Title: "again"}, 0); err == nil || !strings.Contains(err.Error(), "exists already") {
		t.Errorf("a second release with the same version: %v", err)
	}
	if _, err := db.CutRelease(ctx, ReleaseForm{Version: "../evil", Title: "x"}, 0); err == nil || !strings.Contains(err.Error(), "version") {
		t.Errorf("a version that is a path: %v", err)
	}
}

// The changelog between two releases lists exactly the changes made between them (the expectation is
// written from the operations done, not read from the engine).
func TestChangelogListsExactlyTheChangesMadeBetweenReleases(t *testing.T) {
	ctx := context.Background()
	db := demoDB(t)
	a := cut(t, db, "A")
	// 1. two new dates, accepted on import
	if _, err := importString(t, db, "dates", "", dateHeader+
		"Hvarn Plateau Basalts (invented),New Unit,NEW-1,upb_idtims,zircon,eruption,150.1,0.05,2,,,\n"+
		"Hvarn Plateau Basalts (invented),New Unit,NEW-2,upb_idtims,zircon,eruption,150.2,0.05,2,,,\n"); err != nil {
		t.Fatal(err)
	}
	// 2. one pending date accepted
	ds, _, _ := db.Dates(ctx, DateFilter{ReviewState: "pending"})
	accepted, err := db.ReviewDate(ctx, ds[0].ID, ds[0].Version, true, "")
	if err != nil {
		t.Fatal(err)
	}
	// 3. a unit's notes edited
	u, _ := db.Unit(ctx, 1)
	f := FormOfUnit(u)
	f["notes"] = "edited between releases"
	if _, err := db.UpdateUnit(ctx, u.ID, u.Version, f); err != nil {
		t.Fatal(err)
	}
	// 4. an event deleted
	secs, _ := db.Sections(ctx)
	evs, _ := db.Events(ctx, secs[0].ID)
	if err := db.DeleteEvent(ctx, evs[0].ID, evs[0].Version); err != nil {
		t.Fatal(err)
	}
	b := cut(t, db, "B")
	cl, err := DiffReleases(ctx, releasePath(t, db, a), releasePath(t, db, b))
	if err != nil {
		t.Fatal(err)
	}
	var got []string
	for _, c := range cl.Changes {
		s := c.Kind + " " + c.Change + " " + c.Name
		for _, f := range c.Fields {
			s += " [" + f.Field + ": " + f.Before + " → " + f.After + "]"
		}
		got = append(got, s)
	}
	want := []string{
		"unit added New Unit",
		"unit changed " + u.Name + " [notes: " + emptyAs(u.Notes) + " → edited between releases]",
		"date added " + accepted.SampleCode + " (" + accepted.Method + ")",
		"date added NEW-1 (upb_idtims)",
		"date added NEW-2 (upb_idtims)",
		"event removed " + evs[0].Name,
	}
	slices.Sort(got)
	slices.Sort(want)
	if !slices.Equal(got, want) {
		t.Errorf("changelog\n%s\nwant\n%s", strings.Join(got, "\n"), strings.Join(want, "\n"))
	}
	// Against itself, nothing changed.
	if same, _ := DiffReleases(ctx, releasePath(t, db, b), releasePath(t, db, b)); len(same.Changes) != 0 {
		t.Errorf("a release against itself: %d changes", len(same.Changes))
	}
}

// A release's bundle loads into an empty compilation and gives the same release again, file for file;
// a changed file is refused by its checksum and nothing is written.
func TestReleaseBundleRoundTripsAndRefusesAChangedFile(t *testing.T) {
	ctx := context.Background()
	db := demoDB(t)
	rel := cut(t, db, "2027.1")
	var bundle bytes.Buffer
	if err := WriteReleaseBundle(ctx, releasePath(t, db, rel), rel, &bundle); err != nil {
		t.Fatal(err)
	}
	files := unzip(t, bundle.Bytes())
	for _, name := range []string{"manifest.csv", "columns.csv", "CITATION.cff", "README.txt", "dates.csv"} {
		if _, ok := files[name]; !ok {
			t.Errorf("bundle lacks %s", name)
		}
	}
	if cff := string(files["CITATION.cff"]); !strings.Contains(cff, `version: "2027.1"`) || !strings.Contains(cff, "cff-version: 1.2.0") ||
		!strings.Contains(cff, "date-released: 2026-01-02") {
		t.Errorf("CITATION.cff:\n%s", cff)
	}

	empty := mustOpenDB(t)
	if _, err := empty.ImportBundle(ctx, "bundle.zip", bytes.NewReader(bundle.Bytes()), int64(bundle.Len())); err != nil {
		t.Fatal(err)
	}
	again := cut(t, empty, "2027.1")
	if again.Counts != rel.Counts {
		t.Errorf("counts after the round trip %+v, want %+v", again.Counts, rel.Counts)
	}
	var second bytes.Buffer
	if err := WriteReleaseBundle(ctx, releasePath(t, empty, again), again, &second); err != nil {
		t.Fatal(err)
	}
	files2 := unzip(t, second.Bytes())
	for name, body := range files {
		if name == "README.txt" {
			continue // it counts what was left out, which the copy no longer has
		}
		if !bytes.Equal(files2[name], body) {
			t.Errorf("%s differs after the round trip", name)
		}
	}

	// Tamper with one file: refused by name, nothing imported.
	files["dates.csv"] = bytes.Replace(files["dates.csv"], []byte("155."), []byte("156."), 1)
	tampered := rezip(t, files)
	other := mustOpenDB(t)
	_, err := other.ImportBundle(ctx, "bundle.zip", bytes.NewReader(tampered), int64(len(tampered)))
	if err == nil || !strings.Contains(err.Error(), "dates.csv has changed") {
		t.Errorf("a changed dates.csv: %v", err)
	}
	if c, _ := other.Counts(ctx); c.Provinces+c.Dates != 0 {
		t.Errorf("a refused bundle wrote records: %+v", c)
	}
}

func unzip(t *testing.T, b []byte) map[string][]byte {
	t.Helper()
	zr, err := zip.NewReader(bytes.NewReader(b), int64(len(b)))
	if err != nil {
		t.Fatal(err)
	}
	out := map[string][]byte{}
	for _, f := range zr.File {
		rc, err := f.Open()
		if err != nil {
			t.Fatal(err)
		}
		out[f.Name], _ = io.ReadAll(rc)
		rc.Close()
	}
	return out
}

func rezip(t *testing.T, files map[string][]byte) []byte {
	t.Helper()
	var b bytes.Buffer
	zw := zip.NewWriter(&b)
	for name, body := range files {
		w, _ := zw.Create(name)
		w.Write(body)
	}
	zw.Close()
	return b.Bytes()
}

func emptyAs(s string) string {
	if s == "" {
		return "(empty)"
	}
	return s
}
