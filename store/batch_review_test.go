package store

import (
	"context"
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
