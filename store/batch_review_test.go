package store

import (
	"context"
	"slices"
	"strings"
	"testing"

	"github.com/google/go-cmp/cmp"
	"github.com/google/go-cmp/cmp/cmpopts"
)

// A contributor's upload arrives pending whatever its review_state column says; a curator accepts the
// whole change at once; undoing the acceptance, then the import, gives back exactly the compilation as
// it was (common practice of a reviewed compilation: nothing counts before a second reading).
func TestContributedImportIsPendingAcceptedAsOneAndUndoneInTurn(t *testing.T) {
	ctx := context.Background()
	db := mustOpenDB(t)
	if _, err := importString(t, db, "dates", "", dateHeader+goodDate); err != nil {
		t.Fatal(err)
	}
	first, _ := db.Date(ctx, 1)
	before, _ := db.Counts(ctx)
	body := "province,unit,sample_code,method,interpretation,age_ma,sigma_ma,sigma_level,review_state\n" +
		"P,U1,S-2,upb_idtims,eruption,155.2,0.05,2,accepted\n" +
		"P,U2,S-3,upb_idtims,eruption,154.9,0.07,2,\n"
	res, err := db.ImportDates(AsContribution(ctx), "contrib.csv", strings.NewReader(body))
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(strings.Join(res.Notes, " "), "pending a curator's review") {
		t.Errorf("the result's notes %q do not say the dates arrive pending", res.Notes)
	}
	added, _, err := db.Dates(ctx, DateFilter{ReviewState: "pending"})
	if err != nil || len(added) != 2 {
		t.Fatalf("pending dates after a contributor's import: %d (%v), want 2", len(added), err)
	}
	// A curator's import keeps the file's states.
	if _, err := db.ImportDates(ctx, "curated.csv", strings.NewReader(dateHeader+"P,U1,S-4,upb_idtims,zircon,eruption,155.0,0.06,2,,,\n")); err != nil {
		t.Fatal(err)
	}
	if d, _, _ := db.Dates(ctx, DateFilter{Text: "S-4"}); len(d) != 1 || d[0].ReviewState != "accepted" {
		t.Fatalf("a curator's import: %+v, want one accepted date", d)
	}

	n, skipped, err := db.AcceptBatch(ctx, res.BatchID)
	if err != nil || n != 2 || len(skipped) != 0 {
		t.Fatalf("accept the change: %d accepted, skipped %v, err %v; want 2, none", n, skipped, err)
	}
	if p, _, _ := db.Dates(ctx, DateFilter{ReviewState: "pending"}); len(p) != 0 {
		t.Fatalf("%d dates still pending after accepting the change", len(p))
	}
	if _, _, err := db.AcceptBatch(ctx, res.BatchID); err == nil {
		t.Error("accepting the same change twice was not refused")
	}
	// The import cannot be undone while its dates carry a later change …
	if _, err := db.UndoBatch(ctx, res.BatchID); err == nil || !strings.Contains(err.Error(), "changed after change") {
		t.Fatalf("undo of an import whose dates were accepted later: %v, want a refusal naming the later change", err)
	}
	// … so the acceptance goes first, then the import.
	batches, _, err := db.Batches(ctx, BatchFilter{Kind: "accept change"})
	if err != nil || len(batches) != 1 {
		t.Fatalf("accept batches %d (%v), want 1", len(batches), err)
	}
	if k, err := db.UndoBatch(ctx, batches[0].ID); err != nil || k != 2 {
		t.Fatalf("undo the acceptance: %d (%v), want 2", k, err)
	}
	if p, _, _ := db.Dates(ctx, DateFilter{ReviewState: "pending"}); len(p) != 2 {
		t.Fatalf("after undoing the acceptance %d pending, want 2", len(p))
	}
	if k, err := db.UndoBatch(ctx, res.BatchID); err != nil || k != 3 {
		t.Fatalf("undo the import: %d (%v), want 3 (two dates and the unit U2 the import added)", k, err)
	}
	after, _ := db.Counts(ctx)
	after.Dates-- // S-4, imported by the curator, stays
	if after != before {
		t.Errorf("counts after both undos %+v, want %+v", after, before)
	}
	again, _ := db.Date(ctx, 1)
	if diff := cmp.Diff(first, again, cmpopts.IgnoreFields(Date{}, "Version", "UpdatedAt")); diff != "" {
		t.Errorf("an untouched date changed (-before +after):\n%s", diff)
	}
}

// A contributor's ties arrive pending like dates and events; accepting the change accepts them (but not a
// tie changed since), and undoing the acceptance, then the import, leaves the section as it was.
func TestContributedTiesAcceptedAsOneAndUndoneInTurn(t *testing.T) {
	ctx := context.Background()
	db := mustOpenDB(t)
	if _, err := importString(t, db, "sections", "", "section\nS\n"); err != nil {
		t.Fatal(err)
	}
	if _, err := importString(t, db, "ties", "S", "label,height_m,kind,distribution,age_ma,sigma_ma,sigma_level\nbase,1,boundary,normal,156,0.5,2\n"); err != nil {
		t.Fatal(err)
	}
	stored, _ := db.TiePoints(ctx, 0)
	body := "label,height_m,kind,distribution,age_ma,sigma_ma,sigma_level,age_min_ma,age_max_ma,review_state\n" +
		"ash,12.5,radiometric,normal,155.2,0.08,2,,,accepted\n" +
		"zone,30,biostratigraphic,uniform,,,,154.6,155.0,\n" +
		"top,40,boundary,normal,154.8,0.8,2,,,\n"
	res, err := db.ImportTies(AsContribution(ctx), "S", "contrib.csv", strings.NewReader(body))
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(strings.Join(res.Notes, " "), "the 3 tie points arrive pending a curator's review") {
		t.Errorf("the result's notes %q do not say the ties arrive pending", res.Notes)
	}
	states := func() map[string]string {
		out := map[string]string{}
		tps, _ := db.TiePoints(ctx, 0)
		for _, tp := range tps {
			out[tp.Label] = string(tp.ReviewState)
		}
		return out
	}
	if diff := cmp.Diff(map[string]string{"base": "accepted", "ash": "pending", "zone": "pending", "top": "pending"}, states()); diff != "" {
		t.Fatalf("after a contributor's import (-want +got):\n%s", diff)
	}
	if n, err := db.PendingInBatch(ctx, res.BatchID); err != nil || n != 3 {
		t.Errorf("pending in the change: %d (%v), want 3", n, err)
	}
	// One tie is edited before the acceptance: it stays for review one by one.
	var top TiePoint
	tps, _ := db.TiePoints(ctx, 0)
	for _, tp := range tps {
		if tp.Label == "top" {
			top = tp
		}
	}
	f := FormOfTie(top)
	f["notes"] = "moved by the contributor"
	if _, err := db.UpdateTie(ctx, top.ID, top.Version, f, false); err != nil {
		t.Fatal(err)
	}
	n, skipped, err := db.AcceptBatch(ctx, res.BatchID)
	if err != nil || n != 2 || !slices.Equal(skipped, []string{"tie point top"}) {
		t.Fatalf("accept the change: %d accepted, skipped %v, err %v; want 2 and tie point top skipped", n, skipped, err)
	}
	if diff := cmp.Diff(map[string]string{"base": "accepted", "ash": "accepted", "zone": "accepted", "top": "pending"}, states()); diff != "" {
		t.Fatalf("after accepting the change (-want +got):\n%s", diff)
	}
	if n, _ := db.PendingInBatch(ctx, res.BatchID); n != 1 {
		t.Errorf("pending in the change after its acceptance: %d, want 1 (the edited tie)", n)
	}
	batches, _, err := db.Batches(ctx, BatchFilter{Kind: "accept change"})
	if err != nil || len(batches) != 1 {
		t.Fatalf("accept batches %d (%v), want 1", len(batches), err)
	}
	if k, err := db.UndoBatch(ctx, batches[0].ID); err != nil || k != 2 {
		t.Fatalf("undo the acceptance: %d (%v), want 2", k, err)
	}
	if diff := cmp.Diff(map[string]string{"base": "accepted", "ash": "pending", "zone": "pending", "top": "pending"}, states()); diff != "" {
		t.Fatalf("after undoing the acceptance (-want +got):\n%s", diff)
	}
	// The edit of top came after the import, so it is undone first.
	edits, _, _ := db.Batches(ctx, BatchFilter{Kind: "edit tie point"})
	if _, err := db.UndoBatch(ctx, res.BatchID); err == nil {
		t.Fatal("the import was undone while a later edit of its tie stands")
	}
	if len(edits) != 1 {
		t.Fatalf("edit batches: %d, want 1", len(edits))
	}
	if _, err := db.UndoBatch(ctx, edits[0].ID); err != nil {
		t.Fatal(err)
	}
	if k, err := db.UndoBatch(ctx, res.BatchID); err != nil || k != 3 {
		t.Fatalf("undo the import: %d (%v), want 3", k, err)
	}
	after, _ := db.TiePoints(ctx, 0)
	if diff := cmp.Diff(stored, after, cmpopts.IgnoreFields(TiePoint{}, "Version", "UpdatedAt")); diff != "" {
		t.Errorf("the section's ties after both undos (-before +after):\n%s", diff)
	}
}

// A tie a contributor adds through the form is one change: a curator accepts it as such.
func TestAcceptBatchOfAFormTie(t *testing.T) {
	ctx := context.Background()
	db := mustOpenDB(t)
	sec, err := db.CreateSection(ctx, Form{"section": "S"})
	if err != nil {
		t.Fatal(err)
	}
	tp, err := db.CreateTie(ctx, sec.ID, Form{"label": "ash", "height_m": "3", "kind": "radiometric", "distribution": "normal",
		"age_ma": "155.2", "sigma_ma": "0.08", "sigma_level": "2"}, false)
	if err != nil || tp.ReviewState != "pending" {
		t.Fatalf("contributor's tie %+v (%v), want pending", tp, err)
	}
	b, _, _ := db.Batches(ctx, BatchFilter{Kind: "add tie point"})
	if len(b) != 1 {
		t.Fatalf("add batches %d, want 1", len(b))
	}
	if n, _, err := db.AcceptBatch(ctx, b[0].ID); err != nil || n != 1 {
		t.Fatalf("accept: %d (%v), want 1", n, err)
	}
	if got, _ := db.TiePoint(ctx, tp.ID); got.ReviewState != "accepted" {
		t.Errorf("after accepting the change: %q", got.ReviewState)
	}
}
