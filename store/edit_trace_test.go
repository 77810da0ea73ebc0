package store

import (
	"context"
	"database/sql"
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/google/go-cmp/cmp"
)

var updateTrace = flag.Bool("update-trace", false, "rewrite testdata/edit-trace.golden")

// TestEditTraceGolden runs one scripted sequence of form edits, reviews, deletes, restores, batch accepts
// and undos over every record kind and compares what it leaves — each call's error, every change batch
// (kind, source, summary), every revision's states and the tables — with testdata/edit-trace.golden.
// The golden file was first made by the code before dates, reviews and form saves went through one path
// (commit 0e1befb); it differs from that code's output in two places only: a date made from a form records
// its stored state on creation (province_id filled, as every other kind records), and a deleted date
// restored continues its version count (6, not 2) as every other kind does. Refresh with -update-trace
// and review the diff.
func TestEditTraceGolden(t *testing.T) {
	db := mustOpenDB(t)
	ctx := WithActor(context.Background(), 0)
	var log []string
	note := func(what string, err error) {
		log = append(log, fmt.Sprintf("%s: %v", what, err))
	}
	lastRev := func(rt string, id int64) int64 {
		revs, _ := db.Revisions(ctx, rt, id)
		return revs[0].ID
	}
	p, err := db.CreateProvince(ctx, Form{"province": "P1", "description": "first"})
	note("create province", err)
	_, err = db.UpdateProvince(ctx, p.ID, 1, Form{"province": "P1b", "description": "second"})
	note("update province", err)
	_, err = db.UpdateProvince(ctx, p.ID, 1, Form{"province": "P1c"})
	note("stale province", err)
	_, err = db.CreateProvince(ctx, Form{"province": "P1b"})
	note("dup province", err)
	note("revert province", db.RevertRevision(ctx, lastRev("province", p.ID)))
	sec, err := db.CreateSection(ctx, Form{"section": "Core A", "kind": "core"})
	note("create section", err)
	_, err = db.UpdateSection(ctx, sec.ID, 1, Form{"section": "Core A", "kind": "outcrop", "notes": "n"})
	note("update section", err)
	u, err := db.CreateUnit(ctx, Form{"province": "New P", "unit": "Flow 1", "kind": "flow"})
	note("create unit", err)
	_, err = db.UpdateUnit(ctx, u.ID, 1, Form{"province": "Other P", "unit": "Flow 1b", "kind": "sill"})
	note("update unit", err)
	_, err = db.CreateUnit(ctx, Form{"province": "", "unit": "", "kind": "zz"})
	note("bad unit", err)
	df := Form{"province": "P2", "unit": "U2", "sample_code": "S-1", "method": "upb_idtims", "material": "zircon",
		"interpretation": "eruption", "age_ma": "155.4", "sigma_ma": "0.06", "sigma_level": "2", "review_state": "accepted", FormNewUnit: "1"}
	d, err := db.CreateDate(ctx, df, true)
	note("create date", err)
	_, err = db.CreateDate(ctx, df, true)
	note("dup date", err)
	df2 := Form{}
	for k, v := range df {
		df2[k] = v
	}
	df2["age_ma"], df2["unit"] = "150", "U3"
	_, err = db.UpdateDate(ctx, d.ID, 1, df2, false)
	note("update date", err)
	_, err = db.UpdateDate(ctx, d.ID, 1, df2, false)
	note("stale date", err)
	df2["sigma_ma"] = "-1"
	_, err = db.UpdateDate(ctx, d.ID, 2, df2, true)
	note("bad date", err)
	_, err = db.ReviewDate(ctx, d.ID, 2, false, "")
	note("reject date no reason", err)
	_, err = db.ReviewDate(ctx, d.ID, 2, false, "dup")
	note("reject date", err)
	_, err = db.ReviewDate(ctx, d.ID, 3, true, "")
	note("accept date", err)
	note("revert date", db.RevertRevision(ctx, lastRev("date", d.ID)))
	dd, _ := db.Date(ctx, d.ID)
	note("delete date", db.DeleteDate(ctx, d.ID, dd.Version))
	note("restore date", db.RevertRevision(ctx, lastRev("date", d.ID)))
	tf := Form{"label": "Ash 1", "height_m": "31.6", "kind": "radiometric", "distribution": "normal", "age_ma": "155.4",
		"sigma_ma": "0.06", "sigma_level": "2", "date_sample_code": "S-1", "date_method": "upb_idtims", "review_state": "accepted"}
	tp, err := db.CreateTie(ctx, sec.ID, tf, false)
	note("create tie", err)
	tf["label"] = "Ash 1b"
	_, err = db.UpdateTie(ctx, tp.ID, 1, tf, true)
	note("update tie", err)
	_, err = db.ReviewTie(ctx, tp.ID, 2, false, "why")
	note("reject tie", err)
	_, err = db.ReviewTie(ctx, tp.ID, 2, true, "")
	note("stale tie review", err)
	ef := Form{"name": "E1", "kind": "hg_anomaly", "base_height_m": "3", "review_state": "accepted"}
	ev, err := db.CreateEvent(ctx, sec.ID, ef, true)
	note("create event", err)
	_, err = db.CreateEvent(ctx, sec.ID, Form{"name": "E1", "kind": "zz"}, true)
	note("bad event", err)
	ef["base_height_m"] = "4"
	_, err = db.UpdateEvent(ctx, ev.ID, 1, ef, false)
	note("update event", err)
	_, err = db.ReviewEvent(ctx, ev.ID, 2, true, "fine")
	note("accept event", err)
	hf := Form{"height_m": "10", "min_duration_ma": "0.1"}
	h, err := db.CreateHiatus(ctx, sec.ID, hf, false)
	note("create hiatus", err)
	_, err = db.CreateHiatus(ctx, sec.ID, hf, false)
	note("dup hiatus", err)
	hf["min_duration_ma"] = "0.2"
	_, err = db.UpdateHiatus(ctx, h.ID, 1, hf, true)
	note("update hiatus", err)
	_, err = db.ReviewHiatus(ctx, h.ID, 2, false, "no")
	note("reject hiatus", err)
	note("revert hiatus", db.RevertRevision(ctx, lastRev("hiatus", h.ID)))
	note("delete section in use", db.DeleteSection(ctx, sec.ID, 2))
	// Pending records from forms, then a batch accept of one of them.
	d2, err := db.CreateDate(ctx, Form{"province": "P2", "unit": "U2", "sample_code": "S-2", "method": "upb_idtims",
		"interpretation": "eruption", "age_ma": "151", "sigma_ma": "0.1", "sigma_level": "1"}, false)
	note("create pending date", err)
	revs, _ := db.Revisions(ctx, "date", d2.ID)
	n, skipped, err := db.AcceptBatch(ctx, revs[0].BatchID)
	note(fmt.Sprintf("accept batch %d %v", n, skipped), err)
	k, err := db.PendingInBatch(ctx, revs[0].BatchID)
	note(fmt.Sprintf("pending %d", k), err)
	// Undo of the tie's creation is refused (changed since); undo of the last hiatus revert works.
	trevs, _ := db.Revisions(ctx, "tie_point", tp.ID)
	_, err = db.UndoBatch(ctx, trevs[len(trevs)-1].BatchID)
	note("undo tie creation", err)
	hrevs, _ := db.Revisions(ctx, "hiatus", h.ID)
	_, err = db.UndoBatch(ctx, hrevs[0].BatchID)
	note("undo hiatus revert", err)
	drevs, _ := db.Revisions(ctx, "date", d2.ID)
	_, err = db.UndoBatch(ctx, drevs[0].BatchID)
	note("undo date accept", err)
	_, err = db.UndoBatch(ctx, drevs[len(drevs)-1].BatchID)
	note("undo date creation", err)

	var b strings.Builder
	for _, l := range log {
		b.WriteString(l + "\n")
	}
	dump := func(q string) {
		rows, err := db.db.QueryContext(ctx, q)
		if err != nil {
			t.Fatal(err)
		}
		defer rows.Close()
		cols, _ := rows.Columns()
		for rows.Next() {
			vals := make([]sql.NullString, len(cols))
			ptrs := make([]any, len(cols))
			for i := range vals {
				ptrs[i] = &vals[i]
			}
			rows.Scan(ptrs...)
			for i, v := range vals {
				fmt.Fprintf(&b, "%s=%s ", cols[i], v.String)
			}
			b.WriteString("\n")
		}
	}
	dump(`SELECT id, kind, source, summary FROM change_batches ORDER BY id`)
	dump(`SELECT id, batch_id, record_type, record_id, before_json, after_json FROM revisions ORDER BY id`)
	for _, tb := range []string{"provinces", "units", "sections", "dates", "tie_points", "events", "hiatuses"} {
		dump(`SELECT * FROM ` + tb + ` ORDER BY id`)
	}
	golden := filepath.Join("testdata", "edit-trace.golden")
	if *updateTrace {
		if err := os.MkdirAll("testdata", 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(golden, []byte(b.String()), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	want, err := os.ReadFile(golden)
	if err != nil {
		t.Fatal(err)
	}
	if diff := cmp.Diff(string(want), b.String()); diff != "" {
		t.Errorf("edits left other batches, revisions or records than %s (-want +got):\n%s", golden, diff)
	}
}
