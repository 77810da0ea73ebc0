package web

import (
	"context"
	"html"
	"net/http"
	"net/http/httptest"
	"reflect"
	"strings"
	"testing"

	"coeval/web/analysis"
)

// The defaults are analysis' own, not the parser's: the comparison's and each section's options read from
// an address without parameters equal analysis.DefaultCompareOptions() and DefaultSectionOptions(sec).
func TestEmptyAddressGivesTheAnalysisDefaults(t *testing.T) {
	db := mustDemoDB(t)
	s := &Server{store: db}
	ctx := context.Background()
	p := newParams(httptest.NewRequest(http.MethodGet, "/compare", nil))
	ch, err := s.compareChoiceFrom(ctx, p)
	if err != nil || p.err() != nil {
		t.Fatal(err, p.err())
	}
	if got, want := ch.options(), analysis.DefaultCompareOptions(); !reflect.DeepEqual(got, want) {
		t.Errorf("the comparison's options of an empty address:\n%+v\nwant analysis' defaults:\n%+v", got, want)
	}
	secs, err := db.Sections(ctx)
	if err != nil || len(secs) == 0 {
		t.Fatal(err)
	}
	for _, sec := range secs {
		p := newParams(httptest.NewRequest(http.MethodGet, "/sections/1", nil))
		got := sectionOptionsFrom(p, sec)
		if err := p.err(); err != nil {
			t.Fatal(err)
		}
		if want := analysis.DefaultSectionOptions(sec); !reflect.DeepEqual(got, want) {
			t.Errorf("section %s: options of an empty address %+v, want analysis' defaults %+v", sec.Name, got, want)
		}
	}
}

// An unusable option reaches the reader as its URL parameter: the analysis names the option, the web
// layer the parameter it came from.
func TestCompareOptionErrorsAreTheirParameters(t *testing.T) {
	srv, _ := mustServer(t)
	for _, c := range []struct{ query, want string }{
		{"sections=999", "sections: there is no section 999"},
		{"events=999", "events: there is no event 999"},
		{"province=999", "province: there is no province 999"},
		{"pulses=P99&sens=0&n=1000&reps=100", "pulses: there is no pulse P99"},
		{"order=X1&sens=0&n=1000&reps=100", "order: unknown item"},
	} {
		status, _, body := get(t, srv, "/compare?"+c.query)
		if status != http.StatusBadRequest || !strings.Contains(html.UnescapeString(body), c.want) {
			t.Errorf("%s: status %d, want 400 saying %q: %.300s", c.query, status, c.want, body)
		}
	}
}
