package store

import (
	"context"
	"errors"
	"testing"

	"coeval/stats"
)

func TestSetTargetCalibration(t *testing.T) {
	ctx := context.Background()
	db := mustOpenDB(t)
	got, err := db.TargetCalibration(ctx)
	if err != nil {
		t.Fatal(err)
	}
	if got.Code != "min00-fcs28201" { // migrations/002_calibrations.sql marks it the target
		t.Fatalf("seeded target = %q, want min00-fcs28201", got.Code)
	}
	if err := db.SetTargetCalibration(ctx, "renne11-fcs28294", "test"); err != nil {
		t.Fatal(err)
	}
	if got, _ = db.TargetCalibration(ctx); got.Code != "renne11-fcs28294" {
		t.Fatalf("target after set = %q, want renne11-fcs28294", got.Code)
	}
	cals, err := db.Calibrations(ctx)
	if err != nil {
		t.Fatal(err)
	}
	n := 0
	for _, c := range cals {
		if c.IsTarget {
			n++
		}
	}
	if n != 1 || !cals[0].IsTarget {
		t.Fatalf("%d targets (first listed target: %v), want exactly one, listed first", n, cals[0].IsTarget)
	}
	if revs, _ := db.RevisionCount(ctx, "calibration", cals[0].ID); revs != 1 {
		t.Errorf("revisions of the new target = %d, want 1", revs)
	}
	if err := db.SetTargetCalibration(ctx, "nope", "test"); !errors.Is(err, ErrNotFound) {
		t.Errorf("unknown code: err = %v, want ErrNotFound", err)
	}
	if got, _ = db.TargetCalibration(ctx); got.Code != "renne11-fcs28294" {
		t.Errorf("target after a failed set = %q, want it unchanged", got.Code)
	}
}

// TestCalibrationsMatchStats: the seeded calibrations (migrations 002 and 008) hold the same λ, monitor
// age, their 1σ and their correlation as stats.Calibrations, whose comment gives the sources; a NULL σ
// is stats' 0.
func TestCalibrationsMatchStats(t *testing.T) {
	db := mustOpenDB(t)
	cals, err := db.Calibrations(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	stored := map[string]Calibration{}
	for _, c := range cals {
		stored[c.Code] = c
	}
	orZero := func(p *float64) float64 {
		if p == nil {
			return 0
		}
		return *p
	}
	pairs := map[string]string{"sj77": "sj77-fcs2802", "kuiper08": "min00-fcs28201", "renne11": "renne11-fcs28294", "renne10": "renne10-fcs28305"}
	for statsCode, storeCode := range pairs {
		want, err := stats.CalibrationByCode(statsCode)
		if err != nil {
			t.Fatal(err)
		}
		got, ok := stored[storeCode]
		if !ok {
			t.Errorf("no stored calibration %q", storeCode)
			continue
		}
		if got.LambdaPerA != want.LambdaPerA || orZero(got.LambdaSigmaPerA) != want.LambdaSigmaPerA ||
			got.MonitorAgeMa != want.MonitorAgeMa || orZero(got.MonitorSigmaMa) != want.MonitorSigmaMa ||
			got.LambdaMonitorCorrelation != want.LambdaMonitorCorrelation {
			t.Errorf("%s: stored λ %g ± %g, t_s %g ± %g, ρ %g; stats has λ %g ± %g, t_s %g ± %g, ρ %g", storeCode,
				got.LambdaPerA, orZero(got.LambdaSigmaPerA), got.MonitorAgeMa, orZero(got.MonitorSigmaMa), got.LambdaMonitorCorrelation,
				want.LambdaPerA, want.LambdaSigmaPerA, want.MonitorAgeMa, want.MonitorSigmaMa, want.LambdaMonitorCorrelation)
		}
	}
}
