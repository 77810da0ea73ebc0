package store

import (
	"context"
	"errors"
	"testing"
)

func TestSaveComparisonRoundTripAndStamp(t *testing.T) {
	db := mustOpenDB(t)
	ctx := context.Background()
	stamp, err := db.DataStamp(ctx)
	if err != nil {
		t.Fatal(err)
	}
	id, err := db.SaveComparison(ctx, Comparison{Name: "  P1 vs CIE onsets ", Query: "province=1&delta=0.1", DataStamp: stamp})
	if err != nil {
		t.Fatal(err)
	}
	got, err := db.Comparison(ctx, id)
	if err != nil {
		t.Fatal(err)
	}
	if got.Name != "P1 vs CIE onsets" || got.Query != "province=1&delta=0.1" || got.DataStamp != stamp || got.CreatedAt == "" {
		t.Errorf("got %+v", got)
	}
	list, err := db.Comparisons(ctx)
	if err != nil || len(list) != 1 || list[0].ID != id || list[0].Pulses != nil {
		t.Errorf("list %+v, %v", list, err)
	}
	// The pulses it was saved with come back as saved (migration 015).
	ps := []SavedPulse{{Code: "P155.4", ModeMa: 155.43, OldMa: 155.71, YoungMa: 155.12}}
	id2, err := db.SaveComparison(ctx, Comparison{Name: "with pulses", Query: "province=1", DataStamp: stamp, Pulses: ps})
	if err != nil {
		t.Fatal(err)
	}
	if got, err := db.Comparison(ctx, id2); err != nil || len(got.Pulses) != 1 || got.Pulses[0] != ps[0] {
		t.Errorf("pulses %+v, %v; want %+v", got.Pulses, err, ps)
	}
	if _, err := db.Comparison(ctx, id2+1); !errors.Is(err, ErrNotFound) {
		t.Errorf("missing comparison: %v, want ErrNotFound", err)
	}
	if _, err := db.SaveComparison(ctx, Comparison{Name: " ", Query: "x"}); err == nil {
		t.Error("an empty name was accepted")
	} else if ve, ok := AsValidation(err); !ok || ve.Problems[0].Column != "name" {
		t.Errorf("empty name: %v, want a validation problem on name", err)
	}
}
