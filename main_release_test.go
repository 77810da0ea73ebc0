package main

import (
	"bytes"
	"context"
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"coeval/store"
)

// From the command line: a release is made from a compilation, listed, bundled, and its bundle loads
// into an empty database giving the same accepted records; a second bundle load is refused.
func TestReleaseCommandsMakeBundleAndLoad(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	src := filepath.Join(dir, "src.db")
	for _, kind := range []string{"provinces", "units", "sections", "dates"} {
		if err := run(ctx, []string{"-db", src, "import", kind, filepath.Join("testdata", "demo", kind+".csv")}, io.Discard, io.Discard); err != nil {
			t.Fatal(err)
		}
	}
	var out bytes.Buffer
	if err := run(ctx, []string{"-db", src, "release", "create", "2027.1", "-title", "Invented compilation"}, &out, io.Discard); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(out.String(), "release 2027.1 made") {
		t.Errorf("create said %q", out.String())
	}
	out.Reset()
	if err := run(ctx, []string{"-db", src, "release", "list"}, &out, io.Discard); err != nil || !strings.HasPrefix(out.String(), "2027.1\t") {
		t.Errorf("list: %q, %v", out.String(), err)
	}
	zipPath := filepath.Join(dir, "r.zip")
	if err := run(ctx, []string{"-db", src, "release", "bundle", "2027.1", "-o", zipPath}, io.Discard, io.Discard); err != nil {
		t.Fatal(err)
	}
	dst := filepath.Join(dir, "dst.db")
	if err := run(ctx, []string{"-db", dst, "release", "load", zipPath}, io.Discard, io.Discard); err != nil {
		t.Fatal(err)
	}
	if err := run(ctx, []string{"-db", dst, "release", "load", zipPath}, io.Discard, io.Discard); err == nil || !strings.Contains(err.Error(), "empty compilation") {
		t.Errorf("loading into a compilation with records: %v", err)
	}
	counts := func(path string) store.Counts {
		db, err := store.Open(ctx, path)
		if err != nil {
			t.Fatal(err)
		}
		defer db.Close()
		c, err := db.Counts(ctx)
		if err != nil {
			t.Fatal(err)
		}
		return c
	}
	a, b := counts(src), counts(dst)
	if b.Dates != a.Dates-a.DatesPending || b.Units != a.Units || b.Provinces != a.Provinces || b.DatesPending != 0 {
		t.Errorf("loaded %+v from a compilation of %+v", b, a)
	}
	if _, err := os.Stat(src + "-releases/2027.1.db"); err != nil {
		t.Errorf("the release's snapshot is not beside the database: %v", err)
	}
}
