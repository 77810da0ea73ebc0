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
	if err != nil || len(list) != 1 || list[0].ID != id {
		t.Errorf("list %+v, %v", list, err)
	}
	if _, err := db.Comparison(ctx, id+1); !errors.Is(err, ErrNotFound) {
		t.Errorf("missing comparison: %v, want ErrNotFound", err)
	}
	if _, err := db.SaveComparison(ctx, Comparison{Name: " ", Query: "x"}); err == nil {
		t.Error("an empty name was accepted")
	} else if ve, ok := AsValidation(err); !ok || ve.Problems[0].Column != "name" {
		t.Errorf("empty name: %v, want a validation problem on name", err)
	}
}
