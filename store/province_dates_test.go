package store

import (
	"context"
	"errors"
	"os"
	"path/filepath"
	"reflect"
	"testing"
)

// The snapshot holds exactly what the three separate reads give, and an unknown province is not found.
func TestProvinceDatesIsTheThreeReadsInOne(t *testing.T) {
	ctx := context.Background()
	db := mustOpenDB(t)
	if _, _, err := db.SeedDemo(ctx, os.DirFS(filepath.Join("..", "testdata", "demo")), "invented"); err != nil {
		t.Fatal(err)
	}
	provs, err := db.Provinces(ctx)
	if err != nil || len(provs) == 0 {
		t.Fatalf("%d provinces, %v", len(provs), err)
	}
	// Every province: its dates are read without joining their units and province, which must give the
	// same dates as the dates list's read.
	for _, p := range provs {
		snap, err := db.ProvinceDates(ctx, p.ID)
		if err != nil {
			t.Fatal(err)
		}
		prov, err := db.Province(ctx, p.ID)
		if err != nil {
			t.Fatal(err)
		}
		units, err := db.Units(ctx, p.ID)
		if err != nil {
			t.Fatal(err)
		}
		ds, _, err := db.Dates(ctx, DateFilter{ProvinceID: p.ID})
		if err != nil {
			t.Fatal(err)
		}
		if len(snap.Units) == 0 || len(snap.Dates) == 0 {
			t.Fatalf("demo province %d has %d units and %d dates in the snapshot", p.ID, len(snap.Units), len(snap.Dates))
		}
		if !reflect.DeepEqual(snap.Province, prov) || !reflect.DeepEqual(snap.Units, units) || !reflect.DeepEqual(snap.Dates, ds) {
			t.Errorf("province %d: the snapshot differs from the separate reads", p.ID)
		}
	}
	if _, err := db.ProvinceDates(ctx, 999); !errors.Is(err, ErrNotFound) {
		t.Errorf("unknown province: %v, want ErrNotFound", err)
	}
}

func TestUnitDatesIsTheTwoReadsInOne(t *testing.T) {
	ctx := context.Background()
	db := mustOpenDB(t)
	if _, _, err := db.SeedDemo(ctx, os.DirFS(filepath.Join("..", "testdata", "demo")), "invented"); err != nil {
		t.Fatal(err)
	}
	snap, err := db.UnitDates(ctx, 1)
	if err != nil {
		t.Fatal(err)
	}
	u, err := db.Unit(ctx, 1)
	if err != nil {
		t.Fatal(err)
	}
	ds, _, err := db.Dates(ctx, DateFilter{UnitID: 1, Sort: "-age"})
	if err != nil {
		t.Fatal(err)
	}
	if len(snap.Dates) < 2 || !reflect.DeepEqual(snap.Unit, u) || !reflect.DeepEqual(snap.Dates, ds) {
		t.Errorf("the snapshot (%d dates) differs from the separate reads (%d dates)", len(snap.Dates), len(ds))
	}
	if _, err := db.UnitDates(ctx, 99999); !errors.Is(err, ErrNotFound) {
		t.Errorf("unknown unit: %v, want ErrNotFound", err)
	}
}
