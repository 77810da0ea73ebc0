package web

import (
	"context"
	"net/url"
	"reflect"
	"testing"

	"coeval/web/analysis"
)

// An address without choices stands for analysis' defaults, made in Go (not by parsing an empty query):
// the timeline's parser falls back to them, so the two cannot drift apart.
func TestEmptyAddressGivesTheDefaultOptions(t *testing.T) {
	db := mustDemoDB(t)
	s := &Server{store: db}
	p := &params{q: url.Values{}}
	ch, err := s.densityChoice(context.Background(), p)
	if err != nil || p.err() != nil {
		t.Fatal(err, p.err())
	}
	want := analysis.DefaultDensityOptions(ch.Sum.Cal.Stats)
	got := ch.options()
	if got.Stop != nil {
		t.Error("a page's density has no stop function")
	}
	got.Stop, want.Stop = nil, nil
	if !reflect.DeepEqual(got, want) {
		t.Errorf("empty address: %+v\nwant the defaults %+v", got, want)
	}
	if ch.Sum.Cal.Cal.Code != ch.Sum.Cal.Target.Code || ch.Sum.Sigma != 2 {
		t.Errorf("the default calibration is %s (target %s), σ level %d", ch.Sum.Cal.Cal.Code, ch.Sum.Cal.Target.Code, ch.Sum.Sigma)
	}
}

// An analysis' option problems become the 400 of the parameters that carry them, in the order the
// parameters are read.
func TestOptionProblemsNameTheParameters(t *testing.T) {
	err := optionBadRequest(analysis.OptionErrors{{Option: "Window", Problem: "the window 1–1 Ma is empty"}, {Option: "Odd", Problem: "x"}}, densityParams)
	br, ok := err.(badRequest)
	if !ok || !reflect.DeepEqual(br.problems, []string{"from, to: the window 1–1 Ma is empty", "Odd: x"}) {
		t.Errorf("got %#v", err)
	}
	ps := []string{"reps: a", "h: b", "zzz", "from, to: c", "h: d"}
	sortProblems(ps, densityParamOrder)
	if !reflect.DeepEqual(ps, []string{"h: b", "h: d", "from, to: c", "reps: a", "zzz"}) {
		t.Errorf("sorted: %q", ps)
	}
}
