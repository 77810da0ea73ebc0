package analysis

import (
	"fmt"
	"strings"

	"coeval/store"
)

// ModelIncludeLabel says which records (nouns, plural) include= lets into an age model.
func ModelIncludeLabel(include, nouns string) string {
	switch include {
	case "pending":
		return "accepted and pending " + nouns
	case "all":
		return "all " + nouns + ", rejected ones too"
	}
	return "accepted " + nouns + " only"
}

// reviewed is a record an age model uses or leaves out by its review state, as the cautions name it.
type reviewed struct{ name, state string }

// reviewScope is the computation a review caution speaks of, and how it says so.
type reviewScope struct {
	subject string                                    // "age–height model", "comparison"
	verb    string                                    // how the subject takes a record in: "uses", "includes"
	then    func(include, nouns string, n int) string // what follows "— " after the records left out
}

// modelScope is the age–height model's: its ages change once the records left out are accepted.
var modelScope = reviewScope{subject: "age–height model", verb: "uses", then: func(include, nouns string, n int) string {
	return fmt.Sprintf("the model uses %s. Its ages change when %s accepted; choosing to include pending records shows the model with %s now.",
		ModelIncludeLabel(include, nouns), itThey(n), itThem(n))
}}

// compareScope is the comparison's.
var compareScope = reviewScope{subject: "comparison", verb: "includes", then: func(include, _ string, n int) string {
	return fmt.Sprintf("it takes %s; choosing to include pending records compares %s now.", IncludeLabel(include), itThem(n))
}}

// reviewCautions say what a reader of a computation (scope) must know about the review of its records of
// one kind (noun, nouns: "tie point", "tie points"): the pending ones include= left out (they wait for a
// curator, and the result changes once they are accepted), and the unreviewed or rejected ones it let in.
// where names the section ("" for the section's own page). Rejected records left out need no caution:
// that is what rejecting them is for.
func reviewCautions(scope reviewScope, where, noun, nouns string, used, left []reviewed, include string) []string {
	names := func(rs []reviewed, state string) []string {
		var out []string
		for _, r := range rs {
			if r.state == state {
				out = append(out, r.name)
			}
		}
		return out
	}
	counted := func(n int, adj string) string {
		if n == 1 {
			return "1 " + adj + noun
		}
		return fmt.Sprintf("%d %s%s", n, adj, nouns)
	}
	prefix := ""
	if where != "" {
		prefix = where + ": "
	}
	var out []string
	if p := names(left, "pending"); len(p) > 0 {
		out = append(out, fmt.Sprintf("%sLeft out of the %s: %s waiting for a curator's review (%s) — %s",
			prefix, scope.subject, counted(len(p), ""), strings.Join(p, ", "), scope.then(include, nouns, len(p))))
	}
	if p := names(used, "pending"); len(p) > 0 {
		out = append(out, fmt.Sprintf("%sThe %s %s %s that no curator has reviewed yet (as chosen: %s): %s.",
			prefix, scope.subject, scope.verb, counted(len(p), "pending "), ModelIncludeLabel(include, nouns), strings.Join(p, ", ")))
	}
	if rj := names(used, "rejected"); len(rj) > 0 {
		out = append(out, fmt.Sprintf("%sThe %s %s %s (as chosen: %s): %s.",
			prefix, scope.subject, scope.verb, counted(len(rj), "rejected "), ModelIncludeLabel(include, nouns), strings.Join(rj, ", ")))
	}
	return out
}

// TieReviewCautions are reviewCautions of tie points, named by their labels.
func TieReviewCautions(where string, used, left []store.TiePoint, include string) []string {
	r := func(ts []store.TiePoint) []reviewed {
		out := make([]reviewed, len(ts))
		for i, t := range ts {
			out[i] = reviewed{t.Label, string(t.ReviewState)}
		}
		return out
	}
	return reviewCautions(modelScope, where, "tie point", "tie points", r(used), r(left), include)
}

// HiatusReviewCautions are reviewCautions of hiatuses, named by their heights.
func HiatusReviewCautions(where string, used, left []store.Hiatus, include string) []string {
	r := func(hs []store.Hiatus) []reviewed {
		out := make([]reviewed, len(hs))
		for i, h := range hs {
			out[i] = reviewed{HiatusName(h), string(h.ReviewState)}
		}
		return out
	}
	return reviewCautions(modelScope, where, "hiatus", "hiatuses", r(used), r(left), include)
}

// HiatusName names a hiatus by its height (it has no name of its own).
func HiatusName(h store.Hiatus) string { return "hiatus at " + num(h.HeightM) + " m" }

func itThem(n int) string {
	if n == 1 {
		return "it"
	}
	return "them"
}

func itThey(n int) string {
	if n == 1 {
		return "it is"
	}
	return "they are"
}

// EventReviewCautions names the events waiting for review that the review choice left out of the
// comparison, and the unreviewed or rejected ones it let in.
func EventReviewCautions(used, left []store.Event, include string) []string {
	r := func(es []store.Event) []reviewed {
		out := make([]reviewed, len(es))
		for i, e := range es {
			name := e.Name
			if e.Section != "" {
				name += " (" + e.Section + ")"
			}
			out[i] = reviewed{name, string(e.ReviewState)}
		}
		return out
	}
	return reviewCautions(compareScope, "", "event", "events", r(used), r(left), include)
}
