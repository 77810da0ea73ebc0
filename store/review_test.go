package store

import (
	"io/fs"
	"regexp"
	"slices"
	"strings"
	"testing"

	"coeval/migrations"
)

// The review states the code knows are exactly those every review_state CHECK of the schema allows, in
// each migration that writes one (dates and events in 001, tie points in 006, hiatuses in 007).
func TestReviewStatesAreTheSchemasStates(t *testing.T) {
	want := []string{string(ReviewPending), string(ReviewAccepted), string(ReviewRejected)}
	if got := codes(ReviewStates()); !slices.Equal(got, want) {
		t.Errorf("ReviewStates() codes %v, want the constants %v", got, want)
	}
	check := regexp.MustCompile(`CHECK \(review_state IN \(([^)]*)\)\)`)
	n := 0
	err := fs.WalkDir(migrations.FS, ".", func(path string, e fs.DirEntry, err error) error {
		if err != nil || !strings.HasSuffix(path, ".sql") {
			return err
		}
		b, err := fs.ReadFile(migrations.FS, path)
		if err != nil {
			return err
		}
		for _, m := range check.FindAllStringSubmatch(string(b), -1) {
			n++
			var states []string
			for _, s := range strings.Split(m[1], ",") {
				states = append(states, strings.Trim(strings.TrimSpace(s), "'"))
			}
			slices.Sort(states)
			sorted := slices.Sorted(slices.Values(want))
			if !slices.Equal(states, sorted) {
				t.Errorf("%s allows review states %v, the code knows %v", path, states, sorted)
			}
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	if n != 4 {
		t.Errorf("found %d review_state CHECKs in the migrations, want 4 (dates, events, tie points, hiatuses)", n)
	}
}

func TestParseReviewState(t *testing.T) {
	for _, s := range []string{"pending", "accepted", "rejected"} {
		if got, err := ParseReviewState(s); err != nil || string(got) != s || !got.Valid() {
			t.Errorf("ParseReviewState(%q) = %q, %v; want it back, valid", s, got, err)
		}
	}
	for _, s := range []string{"", "Accepted", "approved", "pending "} {
		_, err := ParseReviewState(s)
		ve, ok := AsValidation(err)
		if !ok || ve.Problems[0].Column != "review_state" || !strings.Contains(ve.Problems[0].Message, "pending, accepted, rejected") {
			t.Errorf("ParseReviewState(%q): %v; want a problem naming review_state and the states", s, err)
		}
		if ReviewState(s).Valid() {
			t.Errorf("ReviewState(%q).Valid() = true", s)
		}
	}
}
