package analysis

import "coeval/store"

// Which records enter a computation: the one review policy of the app, for dates in unit summaries and
// densities, tie points and hiatuses in age models, and events in the comparison.

// The values of an Include option: which review states let a record into a computation.
const (
	IncludeAccepted = "accepted" // accepted records only (the default)
	IncludePending  = "pending"  // accepted and pending records
	IncludeAll      = "all"      // every record, rejected ones too
)

// IncludeChoice is one value of an Include option with how a page names it for dates.
type IncludeChoice struct{ Code, Label string }

// IncludeChoices are the values of an Include option, the default first.
func IncludeChoices() []IncludeChoice {
	return []IncludeChoice{
		{IncludeAccepted, "accepted dates only"},
		{IncludePending, "accepted and pending dates"},
		{IncludeAll, "all dates, rejected ones too"},
	}
}

// IncludeCodes are the values of an Include option.
func IncludeCodes() []string {
	var out []string
	for _, i := range IncludeChoices() {
		out = append(out, i.Code)
	}
	return out
}

// IncludeLabel names an Include value for dates ("accepted dates only"); an unknown value names itself.
func IncludeLabel(code string) string {
	for _, i := range IncludeChoices() {
		if i.Code == code {
			return i.Label
		}
	}
	return code
}

// Included reports whether include (accepted | pending | all) lets a record of reviewState into a
// computation: the one rule for dates, events, tie points and hiatuses.
func Included(include, reviewState string) bool {
	switch include {
	case IncludeAll:
		return true
	case IncludePending:
		return reviewState == "accepted" || reviewState == "pending"
	}
	return reviewState == "accepted"
}

// PartitionReviewed splits records into those include lets into a computation and those it leaves out
// (kept, so a page can name them).
func PartitionReviewed[T any](include string, xs []T, state func(T) string) (in, out []T) {
	for _, x := range xs {
		if Included(include, state(x)) {
			in = append(in, x)
		} else {
			out = append(out, x)
		}
	}
	return in, out
}

func checkInclude(include string, errs *OptionErrors) {
	for _, c := range IncludeCodes() {
		if c == include {
			return
		}
	}
	*errs = append(*errs, &OptionError{Option: "Include", Problem: "unknown review choice " + quote(include) + "; want accepted, pending or all"})
}

// The review state of each kind of record a review choice lets into a computation.
func TieState(t store.TiePoint) string  { return string(t.ReviewState) }
func HiatusState(h store.Hiatus) string { return string(h.ReviewState) }
func EventState(e store.Event) string   { return string(e.ReviewState) }
