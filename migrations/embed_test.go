package migrations

import (
	"io/fs"
	"regexp"
	"strconv"
	"testing"
)

var nameRE = regexp.MustCompile(`^(\d{3})_[a-z0-9_]+\.sql$`)

// TestMigrationNumbers fails when two migrations share a number, a number is skipped, or a file is
// misnamed: the store applies them in numeric order and records each number once.
func TestMigrationNumbers(t *testing.T) {
	entries, err := fs.ReadDir(FS, ".")
	if err != nil {
		t.Fatal(err)
	}
	seen := map[int]string{}
	for _, e := range entries {
		m := nameRE.FindStringSubmatch(e.Name())
		if m == nil {
			t.Errorf("migration %q: want NNN_lower_snake.sql", e.Name())
			continue
		}
		n, _ := strconv.Atoi(m[1])
		if prev, ok := seen[n]; ok {
			t.Errorf("migrations %q and %q share number %d", prev, e.Name(), n)
		}
		seen[n] = e.Name()
	}
	for i := 1; i <= len(seen); i++ {
		if _, ok := seen[i]; !ok {
			t.Errorf("migration number %03d is missing (numbers must run 001, 002, … without gaps)", i)
		}
	}
	if len(seen) == 0 {
		t.Fatal("no migrations embedded")
	}
}
