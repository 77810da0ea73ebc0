package analysis

import (
	"math"
	"strings"
	"testing"

	"coeval/stats"
)

func coincidenceInputsForTest() CoincidenceInputs {
	return CoincidenceInputs{
		Events: []CoincidenceEvent{
			{Code: "E1", Name: "Hg", Section: "A", AgeMa: 150.30, Lo95Ma: 150.1, Hi95Ma: 150.5, SigmaMa: 0.1},
			{Code: "E2", Name: "CIE", Section: "A", AgeMa: 151.90, Lo95Ma: 151.8, Hi95Ma: 152.0, DrawsMa: []float64{151.85, 151.9, 151.95}},
			{Code: "E3", Name: "Boundary", AgeMa: 149.20, Lo95Ma: 148.9, Hi95Ma: 149.5},
		},
		Onsets: []CoincidenceOnset{
			{ProvinceID: 1, Province: "X", Pulse: "P152.2", OnsetMa: 152.5},
			{ProvinceID: 1, Province: "X", Pulse: "P149.6", OnsetMa: 150.0},
			{ProvinceID: 2, Province: "Y", Pulse: "P146.8", OnsetMa: 147.0},
		},
		SpansMa: [][2]float64{{149.0, 153.0}, {146.5, 148.0}},
	}
}

// The automatic window runs from the oldest to the youngest of the density windows, the events' 95 %
// ranges and the onsets: here 153.0 (X's density) to 146.5 Ma (Y's), by hand. Each event's nearest onset
// and distance by hand: 150.30 → X's pulse with onset 150.0 (0.30), 151.90 → X's at 152.5 (0.60), 149.20 → X's at 150.0 (0.80); mean
// 1.7/3 Ma.
func TestCoincideAutomaticWindowAndNearestOnsets(t *testing.T) {
	o := DefaultCoincidenceOptions()
	o.Replicates = 999
	res, err := Coincide(coincidenceInputsForTest(), o)
	if err != nil {
		t.Fatal(err)
	}
	if !res.AutoWindow || res.OldMa != 153.0 || res.YoungMa != 146.5 {
		t.Errorf("window %v–%v (auto %v), want 153–146.5 automatic", res.OldMa, res.YoungMa, res.AutoWindow)
	}
	want := []struct {
		code, onset string
		d           float64
	}{{"E2", "pulse at ~152.2 Ma of X", 0.6}, {"E1", "pulse at ~149.6 Ma of X", 0.3}, {"E3", "pulse at ~149.6 Ma of X", 0.8}} // oldest first
	if len(res.Nearest) != len(want) {
		t.Fatalf("%d events, want %d", len(res.Nearest), len(want))
	}
	for i, w := range want {
		n := res.Nearest[i]
		if n.Event.Code != w.code || n.Onset.Label() != w.onset || math.Abs(n.DistanceMa-w.d) > 1e-9 {
			t.Errorf("row %d: %s → %s at %v, want %s → %s at %v", i, n.Event.Code, n.Onset.Label(), n.DistanceMa, w.code, w.onset, w.d)
		}
	}
	if res.Result == nil || math.Abs(res.Result.StatisticMa-1.7/3) > 1e-9 {
		t.Fatalf("statistic %+v, want 1.7/3", res.Result)
	}
	if got, want := res.Result.P, float64(1+res.Result.AtMost)/1000; got != want {
		t.Errorf("p = %v, want %v", got, want)
	}
	// Two events of section A: the independence caution names it; three events: the few-events caution.
	all := strings.Join(res.Cautions, "\n")
	for _, w := range []string{"not independent", "A (2)", "Only 3 events", "window decides the answer", "chosen automatically"} {
		if !strings.Contains(all, w) {
			t.Errorf("cautions lack %q:\n%s", w, all)
		}
	}
	if !strings.Contains(res.Sentence, "3 events") || !strings.Contains(res.Sentence, "3 onsets") {
		t.Errorf("sentence %q does not count the events and onsets", res.Sentence)
	}
}

// The pipeline hands stats exactly the events and onsets in the window: its result equals
// stats.CoincidenceTest on them, with the same options.
func TestCoincideChosenWindowKeepsWhatLiesInIt(t *testing.T) {
	from, to := 149.0, 153.0 // either order
	o := CoincidenceOptions{Null: "pulses", FromMa: &to, ToMa: &from, Replicates: 499, Seed: 9, DrawAges: true}
	in := coincidenceInputsForTest()
	res, err := Coincide(in, o)
	if err != nil {
		t.Fatal(err)
	}
	if res.AutoWindow || res.OldMa != 153 || res.YoungMa != 149 {
		t.Errorf("window %v–%v, want 153–149 chosen", res.OldMa, res.YoungMa)
	}
	if len(res.Onsets) != 2 || len(res.OnsetsOutside) != 1 || res.OnsetsOutside[0].Province != "Y" {
		t.Errorf("onsets in %d, out %+v; want Y's onset at 147 Ma left out", len(res.Onsets), res.OnsetsOutside)
	}
	if len(res.Nearest) != 3 || len(res.EventsOutside) != 0 {
		t.Errorf("events in %d, out %d; want 3 in", len(res.Nearest), len(res.EventsOutside))
	}
	evs := []stats.CoincidenceEvent{{AgeMa: 151.90, DrawsMa: []float64{151.85, 151.9, 151.95}}, {AgeMa: 150.30, SigmaMa: 0.1}, {AgeMa: 149.20}}
	want, err := stats.CoincidenceTest(evs, []float64{152.5, 150.0}, stats.CoincidenceOptions{Null: stats.NullPulsesShifted,
		YoungMa: 149, OldMa: 153, Replicates: 499, Seed: 9, DrawAges: true})
	if err != nil {
		t.Fatal(err)
	}
	if *res.Result != want {
		t.Errorf("result %+v, want %+v", *res.Result, want)
	}
	if !strings.Contains(strings.Join(res.Cautions, " "), "Left out as outside the window: 0 events and 1 onset") {
		t.Errorf("cautions do not count what the window left out: %v", res.Cautions)
	}
}

func TestCoincideNothingToTest(t *testing.T) {
	from, to := 100.0, 101.0
	o := DefaultCoincidenceOptions()
	o.FromMa, o.ToMa = &from, &to
	res, err := Coincide(coincidenceInputsForTest(), o)
	if err != nil {
		t.Fatal(err)
	}
	if res.Result != nil || !strings.Contains(res.Message, "No event") {
		t.Errorf("result %+v message %q, want no test and a message", res.Result, res.Message)
	}
	res, err = Coincide(CoincidenceInputs{}, DefaultCoincidenceOptions())
	if err != nil || res.Result != nil || res.Message == "" || math.IsInf(res.OldMa, 0) {
		t.Errorf("empty compilation: %+v, %v; want a message and a finite window", res, err)
	}
}

func TestCoincidenceOptionsValidate(t *testing.T) {
	if err := DefaultCoincidenceOptions().Validate(); err != nil {
		t.Fatalf("defaults: %v", err)
	}
	x, neg := 150.0, -1.0
	for _, c := range []struct {
		mod    func(*CoincidenceOptions)
		option string
	}{
		{func(o *CoincidenceOptions) { o.Null = "other" }, "Null"},
		{func(o *CoincidenceOptions) { o.FromMa = &x }, "Window"},
		{func(o *CoincidenceOptions) { o.FromMa, o.ToMa = &x, &x }, "Window"},
		{func(o *CoincidenceOptions) { o.FromMa, o.ToMa = &neg, &x }, "FromMa"},
		{func(o *CoincidenceOptions) { o.Replicates = 10 }, "Replicates"},
		{func(o *CoincidenceOptions) { o.Replicates = MaxCoincidenceReplicates + 1 }, "Replicates"},
	} {
		o := DefaultCoincidenceOptions()
		c.mod(&o)
		errs := AsOptionErrors(o.Validate())
		if len(errs) == 0 || errs[0].Option != c.option {
			t.Errorf("%+v: problems %v, want one of option %s", o, errs, c.option)
		}
	}
}

// With DrawOnsets the pipeline hands stats each province's bootstrap onset sets, in the order of the
// provinces' record numbers: its result equals stats.CoincidenceTestDrawnOnsets on them.
func TestCoincideDrawnOnsetsPassesTheSets(t *testing.T) {
	in := coincidenceInputsForTest()
	in.OnsetSets = map[int64][][]float64{2: {{147.1}, {146.9}}, 1: {{152.4, 150.1}, {152.6}, {150.0}}}
	o := DefaultCoincidenceOptions()
	o.Replicates, o.DrawOnsets, o.DrawAges = 499, true, false
	res, err := Coincide(in, o)
	if err != nil {
		t.Fatal(err)
	}
	evs := []stats.CoincidenceEvent{{AgeMa: 151.90, DrawsMa: []float64{151.85, 151.9, 151.95}}, {AgeMa: 150.30, SigmaMa: 0.1}, {AgeMa: 149.20}}
	want, err := stats.CoincidenceTestDrawnOnsets(evs, []float64{152.5, 150.0, 147.0}, [][][]float64{in.OnsetSets[1], in.OnsetSets[2]},
		stats.CoincidenceOptions{Null: stats.NullEventsUniform, YoungMa: 146.5, OldMa: 153, Replicates: 499, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	if *res.Result != want || !res.Result.DrawOnsets {
		t.Errorf("result %+v, want %+v", *res.Result, want)
	}
	if !strings.Contains(strings.Join(res.Cautions, " "), "onsets are drawn in every replicate") {
		t.Errorf("cautions do not say the onsets are drawn: %v", res.Cautions)
	}
}
