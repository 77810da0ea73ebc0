package store

import (
	"context"
	"errors"
	"strings"
	"testing"
)

func sectionForEvents(t *testing.T) (*DB, int64) {
	t.Helper()
	db := mustOpenDB(t)
	if _, err := importString(t, db, "sections", "", "section\nS\n"); err != nil {
		t.Fatal(err)
	}
	secs, err := db.Sections(context.Background())
	if err != nil || len(secs) != 1 {
		t.Fatalf("sections %v, %v", secs, err)
	}
	return db, secs[0].ID
}

// A manual event is checked field by field; a contributor's is pending, a curator's accepted; each is a
// revision of its own change batch.
func TestAddSectionEvent(t *testing.T) {
	db, sid := sectionForEvents(t)
	ctx := context.Background()
	tests := []struct {
		name   string
		f      EventForm
		fields []string
	}{
		{"empty", EventForm{}, []string{"name", "kind", "base_height_m"}},
		{"top below base", EventForm{Name: "x", Kind: "cie_onset", BaseHeightM: "12", TopHeightM: "10"}, []string{"top_height_m"}},
		{"not numbers", EventForm{Name: "x", Kind: "boundary", BaseHeightM: "twelve", TopHeightM: "1e999"}, []string{"base_height_m", "top_height_m"}},
		{"unknown kind", EventForm{Name: "x", Kind: "meteor", BaseHeightM: "1"}, []string{"kind"}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := db.AddSectionEvent(ctx, sid, tc.f, false)
			ve, ok := AsValidation(err)
			if !ok {
				t.Fatalf("got %v, want a validation error", err)
			}
			got := map[string]bool{}
			for _, p := range ve.Problems {
				got[p.Column] = true
			}
			for _, f := range tc.fields {
				if !got[f] {
					t.Errorf("no problem on %s: %v", f, ve.Problems)
				}
			}
		})
	}
	ev, err := db.AddSectionEvent(ctx, sid, EventForm{Name: "CIE onset", Kind: "cie_onset", BaseHeightM: "12.5", Notes: "sharp"}, false)
	if err != nil {
		t.Fatal(err)
	}
	if ev.ReviewState != "pending" || ev.Origin != "entered" || ev.TopHeightM != nil || *ev.BaseHeightM != 12.5 {
		t.Errorf("contributor's horizon: %+v", ev)
	}
	cur, err := db.AddSectionEvent(ctx, sid, EventForm{Name: "extinction", Kind: "extinction", BaseHeightM: "14", TopHeightM: "15.5"}, true)
	if err != nil {
		t.Fatal(err)
	}
	if cur.ReviewState != "accepted" || *cur.TopHeightM != 15.5 {
		t.Errorf("curator's interval: %+v", cur)
	}
	_, err = db.AddSectionEvent(ctx, sid, EventForm{Name: "CIE onset", Kind: "cie", BaseHeightM: "1"}, true)
	if ve, ok := AsValidation(err); !ok || ve.Problems[0].Column != "name" {
		t.Errorf("duplicate name: got %v, want a problem on name", err)
	}
	if _, err := db.AddSectionEvent(ctx, 999, EventForm{Name: "a", Kind: "cie", BaseHeightM: "1"}, true); !errors.Is(err, ErrNotFound) {
		t.Errorf("missing section: got %v, want ErrNotFound", err)
	}
	if n, _ := db.RevisionCount(ctx, "event", ev.ID); n != 1 {
		t.Errorf("revisions of the new event: %d, want 1", n)
	}
}

// Turning an anomaly into an event writes the event and the decision in one batch; a second decision on
// the same anomaly and settings is refused; a rejection needs a reason and is listed with it.
func TestAnomalyDecisions(t *testing.T) {
	db, sid := sectionForEvents(t)
	ctx := context.Background()
	settings := "baseline=section&host=toc&min_run=2&toc_min=0.2&z_min=3.5"
	k := AnomalyKey{SectionID: sid, Series: "Hg/TOC", BaseHeightM: 20.25, TopHeightM: 23.75, Settings: settings}
	ev, dec, err := db.AnomalyToEvent(ctx, k, "Hg anomaly A", "")
	if err != nil {
		t.Fatal(err)
	}
	if ev.Kind != "hg_anomaly" || ev.Origin != "detected" || *ev.BaseHeightM != 20.25 || *ev.TopHeightM != 23.75 || ev.ReviewState != "accepted" {
		t.Errorf("event %+v", ev)
	}
	if want := "found with " + settings; !strings.Contains(ev.Notes, want) {
		t.Errorf("event notes %q lack %q", ev.Notes, want)
	}
	if dec.Decision != "event" || dec.EventID == nil || *dec.EventID != ev.ID || dec.EventName != "Hg anomaly A" {
		t.Errorf("decision %+v", dec)
	}
	if _, _, err := db.AnomalyToEvent(ctx, k, "Hg anomaly B", ""); !errors.Is(err, ErrDecided) {
		t.Errorf("second decision: got %v, want ErrDecided", err)
	}
	if _, err := db.RejectAnomaly(ctx, k, "artefact"); !errors.Is(err, ErrDecided) {
		t.Errorf("rejecting a decided anomaly: got %v, want ErrDecided", err)
	}
	other := k
	other.Settings = "baseline=section&host=toc&min_run=3&toc_min=0.2&z_min=3.5"
	if _, err := db.RejectAnomaly(ctx, other, "  "); err == nil {
		t.Error("a rejection without a reason was recorded")
	}
	if _, err := db.RejectAnomaly(ctx, other, "a single bed of wood fragments"); err != nil {
		t.Fatal(err)
	}
	ds, err := db.AnomalyDecisions(ctx, sid)
	if err != nil || len(ds) != 2 {
		t.Fatalf("decisions %+v, %v", ds, err)
	}
	if ds[1].Decision != "rejected" || ds[1].Reason != "a single bed of wood fragments" {
		t.Errorf("rejection %+v", ds[1])
	}
	batches, _ := db.LatestBatches(ctx, 1)
	revs, _ := db.BatchRevisions(ctx, batches[0].ID)
	if len(revs) != 1 || revs[0].RecordType != "anomaly_decision" {
		t.Errorf("rejection batch revisions %+v", revs)
	}
	first, _ := db.BatchRevisions(ctx, batches[0].ID-1)
	if len(first) != 2 || first[0].RecordType != "event" || first[1].RecordType != "anomaly_decision" {
		t.Errorf("event batch revisions %+v", first)
	}
}

// A decision is withdrawn by undoing its change: a rejection goes, and so do an event made from an
// anomaly and its decision together; the anomaly can then be decided again.
func TestAnomalyDecisionWithdrawnByUndo(t *testing.T) {
	db, sid := sectionForEvents(t)
	ctx := context.Background()
	before, _ := db.Counts(ctx)
	k := AnomalyKey{SectionID: sid, Series: "Hg/TOC", BaseHeightM: 20.25, TopHeightM: 23.75, Settings: "host=toc&z_min=3.5"}
	dec, err := db.RejectAnomaly(ctx, k, "raw Hg follows TOC")
	if err != nil {
		t.Fatal(err)
	}
	if dec.ChangeID == 0 {
		t.Fatal("a decision does not know the change that took it")
	}
	if n, err := db.UndoBatch(ctx, dec.ChangeID); err != nil || n != 1 {
		t.Fatalf("undo the rejection: %d (%v), want 1", n, err)
	}
	if ds, _ := db.AnomalyDecisions(ctx, sid); len(ds) != 0 {
		t.Fatalf("after undoing the rejection %d decisions remain", len(ds))
	}
	_, dec, err = db.AnomalyToEvent(ctx, k, "Hg anomaly A", "")
	if err != nil {
		t.Fatalf("deciding again after the withdrawal: %v", err)
	}
	if n, err := db.UndoBatch(ctx, dec.ChangeID); err != nil || n != 2 {
		t.Fatalf("undo the event made from the anomaly: %d (%v), want 2 (the decision and the event)", n, err)
	}
	if ds, _ := db.AnomalyDecisions(ctx, sid); len(ds) != 0 {
		t.Errorf("after the undo %d decisions remain", len(ds))
	}
	if after, _ := db.Counts(ctx); after != before {
		t.Errorf("after both undos %+v, want %+v", after, before)
	}
}
