package store

import (
	"context"
	"testing"
)

// A date's form names its province and unit; a name that is not known is refused, naming the nearest
// known names (a typo cannot make a new unit), and nothing is written. Only with the form's "create a
// new unit" answer is a new unit (and its province) created.
func TestDateFormCreatesAUnitOnlyWhenAsked(t *testing.T) {
	db := mustOpenDB(t)
	ctx := WithActor(context.Background(), 0)
	form := func(province, unit, sample string) Form {
		return Form{"province": province, "unit": unit, "sample_code": sample, "method": "upb_idtims", "material": "zircon",
			"interpretation": "eruption", "age_ma": "155.46", "sigma_ma": "0.05", "sigma_level": "2"}
	}
	f := form("Hvarn", "Lower Flows", "S-1")
	f[FormNewUnit] = "1"
	if _, err := db.CreateDate(ctx, f, true); err != nil {
		t.Fatal(err)
	}
	before, _ := db.Counts(ctx)
	_, err := db.CreateDate(ctx, form("Hvarn", "Lower  flow", "S-2"), true)
	wantProblem(t, err, "unit", `no unit named "Lower  flow" (nearest: "Lower Flows")`)
	_, err = db.CreateDate(ctx, form("Hvarm", "Lower Flows", "S-3"), true)
	wantProblem(t, err, "province", `no province is named "Hvarm" (nearest: "Hvarn")`)
	_, err = db.CreateDate(ctx, form("Hvarn", "Upper Sills", "S-4"), true)
	wantProblem(t, err, "unit", `no unit named "Upper Sills": choose a known one`)
	if after, _ := db.Counts(ctx); after != before {
		t.Errorf("refused forms changed the compilation: %+v → %+v", before, after)
	}
	f = form("Hvarn", "Upper Sills", "S-4")
	f[FormNewUnit] = "1"
	d, err := db.CreateDate(ctx, f, true)
	if err != nil {
		t.Fatal(err)
	}
	if d.Unit != "Upper Sills" || d.Province != "Hvarn" {
		t.Errorf("created the date in %q of %q", d.Unit, d.Province)
	}
}

// Levenshtein distances of the textbook examples (common practice, no source): kitten → sitting 3,
// flaw → lawn 2, the empty string to "abc" 3, a string to itself 0.
func TestEditDistance(t *testing.T) {
	for _, c := range []struct {
		a, b string
		want int
	}{{"kitten", "sitting", 3}, {"flaw", "lawn", 2}, {"", "abc", 3}, {"Hvarn", "Hvarn", 0}, {"ünit", "unit", 1}} {
		if got := editDistance(c.a, c.b); got != c.want {
			t.Errorf("editDistance(%q, %q) = %d, want %d", c.a, c.b, got, c.want)
		}
	}
}
