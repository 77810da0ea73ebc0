package store

import (
	"context"
	"strings"
	"testing"
)

func TestImportDatesIgnoresExactlyTheDerivedColumns(t *testing.T) {
	ctx := context.Background()
	header := "province,unit,sample_code,method,interpretation,age_ma,sigma_ma,sigma_level,monitor,monitor_age_ma,lambda_per_a,"
	t.Run("derived columns are accepted and ignored", func(t *testing.T) {
		db := mustOpenDB(t)
		csv := header + strings.Join(DerivedDateColumns, ",") + "\n" +
			"P,U,S-1,arar_plateau,eruption,199.0,0.2,2,FCs,28.02,5.543e-10,999.9,9,9,min00-fcs28201,\n"
		res, err := db.ImportDates(ctx, "dates.csv", strings.NewReader(csv))
		if err != nil {
			t.Fatal(err)
		}
		if res.Added["dates"] != 1 {
			t.Fatalf("added %d dates, want 1", res.Added["dates"])
		}
		if !strings.Contains(res.String(), "ignored the derived columns age_recalc_ma") {
			t.Errorf("import notes do not name the ignored columns:\n%s", res)
		}
		ds, _, err := db.Dates(ctx, DateFilter{})
		if err != nil {
			t.Fatal(err)
		}
		if got, want := ds[0].AgeMa, 199.0; got != want {
			t.Errorf("stored age = %v, want %v (the published age_ma, not age_recalc_ma)", got, want)
		}
	})
	t.Run("other unknown columns are still rejected", func(t *testing.T) {
		db := mustOpenDB(t)
		csv := header + "age_recalc_ma,age_recalc_guess\n" +
			"P,U,S-1,arar_plateau,eruption,199.0,0.2,2,FCs,28.02,5.543e-10,1,1\n"
		_, err := db.ImportDates(ctx, "dates.csv", strings.NewReader(csv))
		if ve, ok := AsValidation(err); !ok || !strings.Contains(ve.Error(), "age_recalc_guess") {
			t.Fatalf("err = %v, want a validation error naming age_recalc_guess", err)
		}
	})
}
