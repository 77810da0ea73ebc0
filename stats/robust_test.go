package stats

import (
	"math"
	"testing"
)

// refSpike is the seven-value example of REFERENCES §6: one spike among quiet values.
var refSpike = []float64{10, 12, 11, 13, 12, 11, 60}

func TestRobustReferenceExample(t *testing.T) {
	x := refSpike
	var mean, ss float64
	for _, v := range x {
		mean += v / float64(len(x))
	}
	for _, v := range x {
		ss += (v - mean) * (v - mean)
	}
	sd := math.Sqrt(ss / float64(len(x)-1))
	z := ModifiedZ(x)
	tests := []struct {
		name      string
		got, want float64
		tol       float64
	}{
		{"median", Median(x), 12, 0},                               // REFERENCES §6 [C]
		{"MAD", MAD(x), 1, 0},                                      // REFERENCES §6 [C]
		{"mean+2sd", mean + 2*sd, 55.1, 0.05},                      // REFERENCES §6 [C]: not robust, dragged up by the spike
		{"median+2σ̂", Median(x) + 2*RobustSigma(x), 14.97, 0.005}, // REFERENCES §6 [C]: 12 + 2·1.4826·1
		{"modified z of 60", z[6], 32.4, 0.05},                     // REFERENCES §6 [C]: 0.6745·48/1
		{"modified z of 13", z[3], 0.6745, 1e-12},                  // Iglewicz & Hoaglin (1993) formula: 0.6745·1/1
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if got, want := tc.got, tc.want; math.Abs(got-want) > tc.tol {
				t.Errorf("got %.6g, want %.6g ± %g", got, want, tc.tol)
			}
		})
	}
}

func TestMedianMAD(t *testing.T) {
	tests := []struct {
		name              string
		x                 []float64
		median, mad       float64
		medianNaN, madNaN bool
	}{
		{name: "empty", x: nil, medianNaN: true, madNaN: true},
		{name: "one", x: []float64{4}, median: 4, mad: 0},
		{name: "even", x: []float64{4, 1, 3, 2}, median: 2.5, mad: 1},             // by hand: |dev| 1.5, 1.5, 0.5, 0.5
		{name: "huge values", x: []float64{-1e308, 1e308}, median: 0, mad: 1e308}, // halves first: no overflow
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if got, want := Median(tc.x), tc.median; tc.medianNaN != math.IsNaN(got) || (!tc.medianNaN && got != want) {
				t.Errorf("Median = %g, want %g", got, want)
			}
			if got, want := MAD(tc.x), tc.mad; tc.madNaN != math.IsNaN(got) || (!tc.madNaN && got != want) {
				t.Errorf("MAD = %g, want %g", got, want)
			}
		})
	}
	x := []float64{3, 1, 2}
	Median(x)
	if got, want := x[0], 3.0; got != want {
		t.Errorf("Median modified its input: x[0] = %g, want %g", got, want)
	}
}

func TestModifiedZZeroMAD(t *testing.T) {
	// More than half equal: MAD = 0, so the scores fall back to the mean absolute deviation.
	z := ModifiedZ([]float64{5, 5, 5, 5, 9})
	// by hand: median 5, mean |dev| = 4/5, scale 1.2533·0.8 → z(9) = 4/(1.2533·0.8) = 3.9894
	if got, want := z[4], 4/(meanADScale*0.8); math.Abs(got-want) > 1e-12 {
		t.Errorf("z = %g, want %g", got, want)
	}
	for i, v := range ModifiedZ([]float64{7, 7, 7}) {
		if got, want := v, 0.0; got != want {
			t.Errorf("constant input: z[%d] = %g, want %g", i, got, want)
		}
	}
}

func TestRunningMedian(t *testing.T) {
	tests := []struct {
		name  string
		x     []float64
		width int
		want  []float64
	}{
		{"width 3", []float64{1, 9, 2, 8, 3}, 3, []float64{1, 2, 8, 3, 3}},                 // by hand
		{"width 5 shrinks at ends", []float64{1, 9, 2, 8, 3}, 5, []float64{1, 2, 3, 3, 3}}, // by hand
		{"width 1", []float64{2, 1}, 1, []float64{2, 1}},
		{"empty", nil, 3, []float64{}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got, err := RunningMedian(tc.x, tc.width)
			if err != nil {
				t.Fatal(err)
			}
			if len(got) != len(tc.want) {
				t.Fatalf("got %v, want %v", got, tc.want)
			}
			for i := range got {
				if got, want := got[i], tc.want[i]; got != want {
					t.Errorf("[%d] got %g, want %g", i, got, want)
				}
			}
		})
	}
	for _, w := range []int{0, 2, -1} {
		if _, err := RunningMedian([]float64{1, 2, 3}, w); err == nil {
			t.Errorf("width %d: want error", w)
		}
	}
}

func TestFindAnomalies(t *testing.T) {
	h := func(n int) []float64 {
		out := make([]float64, n)
		for i := range out {
			out[i] = float64(i) * 0.5
		}
		return out
	}
	quiet := []float64{40, 45, 42, 50, 38, 44, 47, 41, 43, 46, 39, 44}
	twoSpike := append([]float64{}, quiet...)
	twoSpike[5], twoSpike[6] = 400, 900 // two consecutive: an anomaly
	oneSpike := append([]float64{}, quiet...)
	oneSpike[5] = 900 // a single sample: below MinRun 2
	gap := append([]float64{}, twoSpike...)
	gap[6] = math.NaN() // a not-evaluable ratio breaks the run
	tests := []struct {
		name   string
		values []float64
		opt    AnomalyOptions
		want   [][2]int // base and top index of each anomaly
	}{
		{"two consecutive spikes", twoSpike, AnomalyOptions{}, [][2]int{{5, 6}}},
		{"single spike is not enough", oneSpike, AnomalyOptions{}, nil},
		{"single spike with MinRun 1", oneSpike, AnomalyOptions{MinRun: 1}, [][2]int{{5, 5}}},
		{"NaN breaks a run", gap, AnomalyOptions{}, nil},
		{"robust sigma method", twoSpike, AnomalyOptions{Method: AnomalyRobustSigma, K: 3}, [][2]int{{5, 6}}},
		{"spike at the top", append(append([]float64{}, quiet...), 700, 800), AnomalyOptions{}, [][2]int{{12, 13}}},
		{"linear scale", twoSpike, AnomalyOptions{Linear: true}, [][2]int{{5, 6}}},
		{"quiet", quiet, AnomalyOptions{}, nil},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			res, err := FindAnomalies(h(len(tc.values)), tc.values, tc.opt)
			if err != nil {
				t.Fatal(err)
			}
			if got, want := len(res.Anomalies), len(tc.want); got != want {
				t.Fatalf("got %d anomalies %+v, want %d", got, res.Anomalies, want)
			}
			for i, a := range res.Anomalies {
				if got, want := [2]int{a.BaseIndex, a.TopIndex}, tc.want[i]; got != want {
					t.Errorf("anomaly %d: got %v, want %v", i, got, want)
				}
				if got, want := a.N, a.TopIndex-a.BaseIndex+1; got != want {
					t.Errorf("anomaly %d: N = %d, want %d", i, got, want)
				}
			}
		})
	}

	// The details of one anomaly, against values computed by hand on log10 values.
	res, err := FindAnomalies(h(len(twoSpike)), twoSpike, AnomalyOptions{})
	if err != nil {
		t.Fatal(err)
	}
	a := res.Anomalies[0]
	bg := make([]float64, len(twoSpike))
	for i, v := range twoSpike {
		bg[i] = math.Log10(v)
	}
	med := Median(bg)
	wantZ := ModifiedZScale * (math.Log10(900) - med) / MAD(bg)
	checks := []struct {
		name      string
		got, want float64
	}{
		{"peak value", a.PeakValue, 900},
		{"peak height", a.PeakHeightM, 3},
		{"base height", a.BaseHeightM, 2.5},
		{"top height", a.TopHeightM, 3},
		{"multiple of background", a.MultipleOfBackground, 900 / math.Pow(10, med)}, // peak / background median
		{"robust z", a.RobustZ, wantZ},                                              // Iglewicz & Hoaglin (1993) on log10
		{"threshold", res.Threshold, med + DefaultModifiedZMin*MAD(bg)/ModifiedZScale},
	}
	for _, c := range checks {
		if got, want := c.got, c.want; math.Abs(got-want) > 1e-9*math.Max(1, math.Abs(want)) {
			t.Errorf("%s: got %.10g, want %.10g", c.name, got, want)
		}
	}
}

func TestFindAnomaliesBackgroundWindow(t *testing.T) {
	// Values that rise over the section: with all samples as background nothing stands out, with the
	// lower half as background the upper part is an anomaly.
	var x, hm []float64
	for i := range 20 {
		hm = append(hm, float64(i))
		v := 50.0 + float64(i%3)
		if i >= 14 {
			v = 500 + float64(i)
		}
		x = append(x, v)
	}
	win := make([]bool, 20)
	for i := range 10 {
		win[i] = true
	}
	res, err := FindAnomalies(hm, x, AnomalyOptions{Background: win})
	if err != nil {
		t.Fatal(err)
	}
	if got, want := len(res.Anomalies), 1; got != want {
		t.Fatalf("got %d anomalies, want %d", got, want)
	}
	if got, want := res.Anomalies[0].BaseIndex, 14; got != want {
		t.Errorf("base index got %d, want %d", got, want)
	}
	if got, want := res.NBackground, 10; got != want {
		t.Errorf("NBackground got %d, want %d", got, want)
	}
}

func TestFindAnomaliesErrors(t *testing.T) {
	tests := []struct {
		name    string
		h, x    []float64
		opt     AnomalyOptions
		wantErr bool
	}{
		{"length mismatch", []float64{0, 1}, []float64{1}, AnomalyOptions{}, true},
		{"unordered heights", []float64{1, 0}, []float64{1, 2}, AnomalyOptions{}, true},
		{"zero on log scale", []float64{0, 1}, []float64{0, 2}, AnomalyOptions{}, true},
		{"zero on linear scale", []float64{0, 1}, []float64{0, 2}, AnomalyOptions{Linear: true}, false},
		{"all missing", []float64{0, 1}, []float64{math.NaN(), math.NaN()}, AnomalyOptions{}, true},
		{"infinite", []float64{0, 1}, []float64{math.Inf(1), 2}, AnomalyOptions{}, true},
		{"bad mask", []float64{0, 1}, []float64{1, 2}, AnomalyOptions{Background: []bool{true}}, true},
		{"bad MinRun", []float64{0, 1}, []float64{1, 2}, AnomalyOptions{MinRun: -1}, true},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := FindAnomalies(tc.h, tc.x, tc.opt)
			if got, want := err != nil, tc.wantErr; got != want {
				t.Errorf("error = %v, want error %v", err, want)
			}
		})
	}
}

// FuzzRobust checks invariants of the robust functions on arbitrary finite input: no panic, no NaN, runs
// that lie inside the series and reach MinRun.
func FuzzRobust(f *testing.F) {
	f.Add(10.0, 12.0, 11.0, 13.0, 60.0, 61.0, uint8(2), false)
	f.Add(1e-300, 1e300, 5.0, 5.0, 5.0, 5.0, uint8(1), true)
	f.Add(-1e308, 1e308, -1e308, 1e308, 0.0, 0.0, uint8(3), true)
	f.Add(7.0, 7.0, 7.0, 7.0, 7.0, 8.0, uint8(0), false)
	f.Fuzz(func(t *testing.T, a, b, c, d, e, g float64, run uint8, linear bool) {
		x := []float64{a, b, c, d, e, g, a, c, e}
		for _, v := range x {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				t.Skip()
			}
		}
		for name, v := range map[string]float64{"Median": Median(x), "MAD": MAD(x), "RobustSigma": RobustSigma(x)} {
			if math.IsNaN(v) {
				t.Fatalf("%s(%v) is NaN", name, x)
			}
		}
		for i, z := range ModifiedZ(x) {
			if math.IsNaN(z) {
				t.Fatalf("ModifiedZ(%v)[%d] is NaN", x, i)
			}
		}
		rm, err := RunningMedian(x, 3)
		if err != nil {
			t.Fatal(err)
		}
		for i, v := range rm {
			if math.IsNaN(v) {
				t.Fatalf("RunningMedian[%d] is NaN", i)
			}
		}
		hm := make([]float64, len(x))
		for i := range hm {
			hm[i] = float64(i)
		}
		opt := AnomalyOptions{MinRun: int(run%4) + 1, Linear: linear}
		res, err := FindAnomalies(hm, x, opt)
		if err != nil {
			if linear {
				t.Fatalf("linear scale, finite input: %v", err)
			}
			return // non-positive value on the log scale
		}
		for _, v := range []float64{res.BackgroundMedian, res.BackgroundMAD, res.SigmaHat, res.Threshold} {
			if math.IsNaN(v) {
				t.Fatalf("baseline has NaN: %+v", res)
			}
		}
		for _, an := range res.Anomalies {
			if an.BaseIndex < 0 || an.TopIndex >= len(x) || an.TopIndex-an.BaseIndex+1 < opt.MinRun {
				t.Fatalf("bad run %+v", an)
			}
			if an.PeakIndex < an.BaseIndex || an.PeakIndex > an.TopIndex {
				t.Fatalf("peak outside run %+v", an)
			}
			if math.IsNaN(an.RobustZ) || math.IsNaN(an.MultipleOfBackground) {
				t.Fatalf("NaN in anomaly %+v", an)
			}
		}
	})
}
