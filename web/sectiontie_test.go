package web

import (
	"context"
	"math"
	"net/http"
	"strings"
	"testing"

	"coeval/stats"
	"coeval/store"
)

// Ties from dates enter the model at tie_level: the full external σ (the default) gives wider model
// intervals than the analytical one at every dated sample, and the page says which level each tie uses.
func TestTieLevelWidensTheModel(t *testing.T) {
	srv, _ := mustServer(t)
	sec := demoSectionIDs(t, srv)["Vedholmen-1 Core"]
	width := func(level string) map[string]float64 {
		q := "/agemodel?format=json&draws=1000"
		if level != "" {
			q += "&tie_level=" + level
		}
		out := map[string]float64{}
		for _, it := range items(tableJSON(t, srv, sec+q)) {
			if it["age_lo95_ma"] != "" {
				out[it["sample"]] = fnum(t, it["age_hi95_ma"]) - fnum(t, it["age_lo95_ma"])
			}
		}
		return out
	}
	an, tr, full, def := width("analytical"), width("tracer"), width("full"), width("")
	if len(an) < 50 {
		t.Fatalf("only %d dated samples", len(an))
	}
	var sumA, sumT, sumF float64
	for s, w := range an {
		sumA, sumT, sumF = sumA+w, sumT+tr[s], sumF+full[s]
		if def[s] != full[s] {
			t.Fatalf("sample %s: the default interval %v differs from tie_level=full %v", s, def[s], full[s])
		}
	}
	// The demo's ash dates have X < Y < Z (U–Pb); the mean 95 % width must grow with the level.
	if !(sumA < sumT && sumT < sumF) {
		t.Errorf("mean widths analytical %.4f, tracer %.4f, full %.4f Ma: want them increasing", sumA/float64(len(an)), sumT/float64(len(an)), sumF/float64(len(an)))
	}
	status, _, page := get(t, srv, sec+"?draws=500")
	for _, want := range []string{"Tie points as the model uses them", "the tracer and λ238 drawn once per draw", "at the full external (X, and the tracer", "This is the default", `name="tie_level"`} {
		if status != http.StatusOK || !strings.Contains(page, want) {
			t.Errorf("the section page lacks %q", want)
		}
	}
	_, _, page = get(t, srv, sec+"?draws=500&tie_level=analytical")
	if !strings.Contains(page, "analytical (X)") || strings.Contains(page, "This is the default") {
		t.Error("tie_level=analytical: the page does not say the ties use the analytical σ")
	}
	if status, _, body := get(t, srv, sec+"?tie_level=z"); status != http.StatusBadRequest || !strings.Contains(body, "tie_level: unknown value") {
		t.Errorf("tie_level=z: status %d, want 400 naming tie_level", status)
	}
}

// tieFromDate gives a U–Pb or ⁴⁰Ar/³⁹Ar tie its random part (X; ⁴⁰Ar/³⁹Ar recalculated to the
// compilation's calibration) and names its components, whatever the level: the level decides only which
// components a model shown on its own applies. Systems without stored components take the σ of the level
// as their own, falling back (and saying so) when the date lacks it.
func TestTieFromDate(t *testing.T) {
	db := mustDemoDB(t)
	srv := &Server{store: db}
	cal, err := srv.calibration(context.Background(), &params{})
	if err != nil {
		t.Fatal(err)
	}
	f := func(v float64) *float64 { return &v }
	upb := store.Date{Method: "upb_idtims", AgeMa: 155.5, SigmaMa: 0.03, SigmaYMa: f(0.05), SigmaZMa: f(0.09), Tracer: "ET535"}
	noTracer := store.Date{Method: "upb_idtims", AgeMa: 155.5, SigmaMa: 0.03, SigmaYMa: f(0.05)}
	kar := store.Date{Method: "kar", AgeMa: 155.5, SigmaMa: 0.3, SigmaYMa: f(0.5)}
	arar := store.Date{Method: "arar_plateau", AgeMa: 155.0, SigmaMa: 0.1, Monitor: "FCs", MonitorAgeMa: f(28.02), LambdaPerA: f(5.543e-10)}
	bare := store.Date{Method: "arar_plateau", AgeMa: 155.0, SigmaMa: 0.1}
	// The tracer's relative 1σ from the published X and Y: sqrt(0.05² − 0.03²)/155.5 (REFERENCES §1, Y = X ⊕ tracer).
	rel := math.Sqrt(0.05*0.05-0.03*0.03) / 155.5
	tests := []struct {
		name, level string
		d           store.Date
		sigma       float64 // 0: the recalculated analytical σ
		keys        []string
		note        string
	}{
		{"U–Pb analytical", "analytical", upb, 0.03, []string{"tracer ET535", stats.KeyLambda238}, ""},
		{"U–Pb full", "full", upb, 0.03, []string{"tracer ET535", stats.KeyLambda238}, ""},
		{"U–Pb without a tracer", "full", noTracer, 0.05, []string{stats.KeyLambda238}, "no tracer is named"},
		{"K–Ar full without Z", "full", kar, 0.5, nil, "no Z σ"},
		{"Ar/Ar without monitor", "full", bare, 0.1, nil, "not recalculable"},
		{"Ar/Ar full", "full", arar, 0, []string{"ar/ar " + cal.Stats.Code}, "recalculated to"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			in := tieFromDate(tc.d, tc.level, cal)
			if !in.FromDate || !strings.Contains(in.Note, tc.note) {
				t.Errorf("note %q, want it to contain %q", in.Note, tc.note)
			}
			if tc.sigma > 0 && in.SigmaMa != tc.sigma {
				t.Errorf("σ %v, want %v", in.SigmaMa, tc.sigma)
			}
			var keys []string
			for _, s := range in.Syst {
				keys = append(keys, s.Key)
				if s.Key == "tracer ET535" && math.Abs(s.RelSigma-rel) > 1e-15 {
					t.Errorf("tracer relative σ %g, want %g", s.RelSigma, rel)
				}
			}
			if in.Cal != nil {
				keys = append(keys, stats.ArArCalibrationKey(*in.Cal))
			}
			if strings.Join(keys, "|") != strings.Join(tc.keys, "|") {
				t.Errorf("components %v, want %v", keys, tc.keys)
			}
			if tc.sigma == 0 {
				rc, err := stats.Recalculate(tc.d.AgeMa, tc.d.SigmaMa, stats.Calibration{Code: "as published", LambdaPerA: 5.543e-10, MonitorAgeMa: 28.02}, cal.Stats)
				if err != nil {
					t.Fatal(err)
				}
				if math.Abs(in.SigmaMa-rc.AnalyticalSigmaMa) > 1e-12 || math.Abs(in.AgeMa-rc.AgeMa) > 1e-9 {
					t.Errorf("Ar/Ar tie %v ± %v, want the recalculated %v ± %v (analytical)", in.AgeMa, in.SigmaMa, rc.AgeMa, rc.AnalyticalSigmaMa)
				}
			}
		})
	}
}
