package store

import (
	"context"
	"errors"
	"os"
	"path/filepath"
	"reflect"
	"testing"
)

func TestSavePulses(t *testing.T) {
	ctx := context.Background()
	db := mustOpenDB(t)
	if _, _, err := db.SeedDemo(ctx, os.DirFS(filepath.Join("..", "testdata", "demo")), "invented"); err != nil {
		t.Fatal(err)
	}
	units, err := db.Units(ctx, 1)
	if err != nil {
		t.Fatal(err)
	}
	f := func(v float64) *float64 { return &v }
	in := []Pulse{
		{Name: "P2", StartMa: f(155.14), EndMa: f(153.50), Notes: "from the density", UnitIDs: []int64{units[9].ID, units[9].ID}},
		{Name: "P1", StartMa: f(156.04), EndMa: f(155.14), UnitIDs: []int64{units[0].ID, units[2].ID}},
	}
	saved, err := db.SavePulses(ctx, 1, "/provinces/1/timeline?seed=1", in)
	if err != nil {
		t.Fatal(err)
	}
	if saved[0].ID == 0 || saved[0].Version != 1 || len(saved[0].UnitIDs) != 1 {
		t.Errorf("saved %+v: want an id, version 1 and the repeated unit once", saved[0])
	}
	got, err := db.Pulses(ctx, 1)
	if err != nil {
		t.Fatal(err)
	}
	if len(got) != 2 || got[0].Name != "P1" || got[1].Name != "P2" {
		t.Fatalf("pulses %+v, want P1 then P2 (oldest first)", got)
	}
	if !reflect.DeepEqual(saved[1], got[0]) {
		t.Errorf("P1 read back as %+v, saved as %+v", got[0], saved[1])
	}

	// Saving a pulse of the same name replaces it as a new version, with a revision.
	again, err := db.SavePulses(ctx, 1, "edit", []Pulse{{Name: "P1", StartMa: f(156.1), EndMa: f(155.2)}})
	if err != nil {
		t.Fatal(err)
	}
	if again[0].ID != saved[1].ID || again[0].Version != 2 || again[0].UnitIDs != nil {
		t.Errorf("replaced P1 %+v: want id %d, version 2, no units", again[0], saved[1].ID)
	}
	if n, err := db.RevisionCount(ctx, "pulse", saved[1].ID); err != nil || n != 2 {
		t.Errorf("%d revisions of P1 (%v), want 2", n, err)
	}
	if got, _ := db.Pulses(ctx, 1); len(got) != 2 || *got[0].StartMa != 156.1 {
		t.Errorf("after the replacement: %+v", got)
	}

	bad := []struct {
		name string
		ps   []Pulse
	}{
		{"empty name", []Pulse{{Name: " "}}},
		{"repeated name", []Pulse{{Name: "A"}, {Name: "A"}}},
		{"start younger than end", []Pulse{{Name: "A", StartMa: f(150), EndMa: f(151)}}},
		{"unit of no province", []Pulse{{Name: "A", UnitIDs: []int64{9999}}}},
	}
	for _, tc := range bad {
		t.Run(tc.name, func(t *testing.T) {
			_, err := db.SavePulses(ctx, 1, "test", tc.ps)
			if _, ok := AsValidation(err); !ok {
				t.Errorf("err %v, want a validation error", err)
			}
		})
	}
	if _, err := db.SavePulses(ctx, 99, "test", []Pulse{{Name: "A"}}); !errors.Is(err, ErrNotFound) {
		t.Errorf("unknown province: %v, want ErrNotFound", err)
	}
	if got, _ := db.Pulses(ctx, 1); len(got) != 2 {
		t.Errorf("failed saves left %d pulses, want 2", len(got))
	}
}
