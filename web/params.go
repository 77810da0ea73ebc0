package web

import (
	"fmt"
	"net/http"
	"net/url"
	"slices"
	"strconv"
	"strings"

	"github.com/go-chi/chi/v5"

	"coeval/store"
)

// params reads URL query parameters, collecting a problem for each bad one so a page can say at once
// everything that is wrong with its URL.
type params struct {
	q        url.Values
	problems []string
}

func newParams(r *http.Request) *params { return &params{q: r.URL.Query()} }

func (p *params) str(name string) string {
	paramRead(name)
	return strings.TrimSpace(p.q.Get(name))
}

// all returns every value of a repeatable parameter.
func (p *params) all(name string) []string {
	paramRead(name)
	return p.q[name]
}

// paramRead is told the name of every parameter a page reads; tests use it to check that the reference
// of parameters (paramDocs) names each one.
var paramRead = func(string) {}

func (p *params) oneOf(name string, allowed []string, def string) string {
	v := p.str(name)
	if v == "" {
		return def
	}
	if !slices.Contains(allowed, v) {
		p.problems = append(p.problems, fmt.Sprintf("%s: unknown value %q; want one of %s", name, v, strings.Join(allowed, ", ")))
		return def
	}
	return v
}

func (p *params) optFloat(name, what string) *float64 {
	v := p.str(name)
	if v == "" {
		return nil
	}
	f, ok := store.ParseDecimal(v)
	if !ok || f > 1e300 || f < -1e300 {
		p.problems = append(p.problems, fmt.Sprintf("%s: want %s, got %q", name, what, v))
		return nil
	}
	return &f
}

func (p *params) int(name string, def, lo, hi int) int {
	v := p.str(name)
	if v == "" {
		return def
	}
	n, err := strconv.Atoi(v)
	if err != nil || n < lo || n > hi {
		p.problems = append(p.problems, fmt.Sprintf("%s: want a whole number from %d to %d, got %q", name, lo, hi, v))
		return def
	}
	return n
}

func (p *params) id(name string) int64 {
	v := p.str(name)
	if v == "" {
		return 0
	}
	n, err := strconv.ParseInt(v, 10, 64)
	if err != nil || n <= 0 {
		p.problems = append(p.problems, fmt.Sprintf("%s: want a record number, got %q", name, v))
		return 0
	}
	return n
}

// format is the representation asked for: html (default), csv or json.
func (p *params) format() string { return p.oneOf("format", []string{"html", "csv", "json"}, "html") }

// sigmaLevel is the σ level at which uncertainties are displayed (default 2σ, as papers tabulate them).
func (p *params) sigmaLevel() int {
	return map[string]int{"1": 1, "2": 2}[p.oneOf("sigma", []string{"1", "2"}, "2")]
}

func (p *params) err() error {
	if len(p.problems) == 0 {
		return nil
	}
	return badRequest{message: "This address has parameters that cannot be used. Fix them and reload:", problems: p.problems}
}

// pathID reads a record number from the route.
func pathID(r *http.Request, name string) (int64, error) {
	v := chi.URLParam(r, name)
	n, err := strconv.ParseInt(v, 10, 64)
	if err != nil || n <= 0 {
		return 0, notFoundError{what: "record " + strconv.Quote(v)}
	}
	return n, nil
}

// withQuery returns the request's path and query with the given parameters set ("" deletes one).
func withQuery(r *http.Request, kv ...string) string {
	q := r.URL.Query()
	for i := 0; i+1 < len(kv); i += 2 {
		if kv[i+1] == "" {
			q.Del(kv[i])
		} else {
			q.Set(kv[i], kv[i+1])
		}
	}
	if len(q) == 0 {
		return r.URL.Path
	}
	return r.URL.Path + "?" + q.Encode()
}

// downloads gives the CSV and JSON links of the current view (all its filters kept).
func downloads(r *http.Request) []linkSpec {
	return []linkSpec{{"CSV", withQuery(r, "format", "csv", "page", "")}, {"JSON", withQuery(r, "format", "json")}}
}

type linkSpec struct{ label, url string }
