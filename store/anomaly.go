package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"strings"
)

// AnomalyKey identifies a detected anomaly: its section, series (e.g. "Hg/TOC" or "Hg"), interval and
// the detection settings that found it (a canonical query string, e.g.
// "baseline=section&host=toc&min_run=2&toc_min=0.2&z_min=3.5"). Heights are compared exactly: they are the
// stored heights of the samples at the anomaly's base and top.
type AnomalyKey struct {
	SectionID   int64   `json:"section_id"`
	Series      string  `json:"series"`
	BaseHeightM float64 `json:"base_height_m"`
	TopHeightM  float64 `json:"top_height_m"`
	Settings    string  `json:"settings"`
}

// AnomalyDecision is what a curator decided about one detected anomaly.
type AnomalyDecision struct {
	ID int64 `json:"id"`
	AnomalyKey
	Decision  string `json:"decision"` // "event" or "rejected"
	EventID   *int64 `json:"event_id"`
	EventName string `json:"event_name"`
	Reason    string `json:"reason"`
	UserID    *int64 `json:"user_id"`
	User      string `json:"user"`
	Version   int    `json:"version"`
	CreatedAt string `json:"created_at"`
	// ChangeID is the change that took the decision; undoing it withdraws the decision.
	ChangeID int64 `json:"-"`
}

// AnomalyDecisionStates lists the decisions a curator can take on a detected anomaly.
func AnomalyDecisionStates() []Term {
	return []Term{{"event", "made an event"}, {"rejected", "rejected"}}
}

// ErrDecided is returned when an anomaly already has a decision under the same settings.
var ErrDecided = errors.New("the anomaly has already been decided")

const anomalyDecisionSelect = `SELECT a.id, a.section_id, a.series, a.base_height_m, a.top_height_m, a.settings, a.decision,
	a.event_id, coalesce(e.name, ''), a.reason, a.user_id, coalesce(u.name, ''), a.version, a.created_at,
	coalesce((SELECT min(r.batch_id) FROM revisions r WHERE r.record_type = 'anomaly_decision' AND r.record_id = a.id AND r.before_json IS NULL), 0)
	FROM anomaly_decisions a LEFT JOIN events e ON e.id = a.event_id LEFT JOIN users u ON u.id = a.user_id`

func scanAnomalyDecision(r interface{ Scan(...any) error }) (AnomalyDecision, error) {
	var a AnomalyDecision
	err := r.Scan(&a.ID, &a.SectionID, &a.Series, &a.BaseHeightM, &a.TopHeightM, &a.Settings, &a.Decision, &a.EventID,
		&a.EventName, &a.Reason, &a.UserID, &a.User, &a.Version, &a.CreatedAt, &a.ChangeID)
	return a, err
}

// anomalyDecisionType lets a decision be restored and its change undone (which withdraws it).
func anomalyDecisionType() recordType[AnomalyDecision] {
	return recordType[AnomalyDecision]{
		name:  "anomaly_decision",
		table: "anomaly_decisions",
		cols:  []string{"section_id", "series", "base_height_m", "top_height_m", "settings", "decision", "event_id", "reason", "user_id"},
		vals: func(a AnomalyDecision) []any {
			return []any{a.SectionID, a.Series, a.BaseHeightM, a.TopHeightM, a.Settings, a.Decision, a.EventID, a.Reason, a.UserID}
		},
		meta: func(a AnomalyDecision) (int64, int, string) { return a.ID, a.Version, a.CreatedAt },
		label: func(a AnomalyDecision) string {
			return fmt.Sprintf("the decision on the %s anomaly %s–%s m", a.Series, formatNumber(a.BaseHeightM), formatNumber(a.TopHeightM))
		},
		load: func(ctx context.Context, tx *sql.Tx, id int64) (AnomalyDecision, error) {
			a, err := scanAnomalyDecision(tx.QueryRowContext(ctx, anomalyDecisionSelect+` WHERE a.id = ?`, id))
			return a, notFound(err, "anomaly decision", id)
		},
	}
}

// AnomalyDecisions returns the decisions on the anomalies of a section, lowest first.
func (d *DB) AnomalyDecisions(ctx context.Context, sectionID int64) ([]AnomalyDecision, error) {
	return queryAll(ctx, d.reader(), anomalyDecisionSelect+` WHERE a.section_id = ? ORDER BY a.base_height_m, a.series, a.id`,
		[]any{sectionID}, scanAnomalyDecision)
}

func (k AnomalyKey) check() []Problem {
	var ps []Problem
	if strings.TrimSpace(k.Series) == "" {
		ps = append(ps, Problem{Column: "series", Message: "is empty; the anomaly's series is required"})
	}
	if strings.TrimSpace(k.Settings) == "" {
		ps = append(ps, Problem{Column: "settings", Message: "is empty; the settings that found the anomaly are required"})
	}
	if k.TopHeightM < k.BaseHeightM {
		ps = append(ps, Problem{Column: "top_height_m", Message: "is below the base"})
	}
	return ps
}

// decide records a decision of the actor of ctx in tx, after checking the anomaly has none yet.
func (d *DB) decide(ctx context.Context, tx *sql.Tx, batch int64, k AnomalyKey, decision, reason string, eventID *int64) (AnomalyDecision, error) {
	var prev AnomalyDecision
	prev, err := scanAnomalyDecision(tx.QueryRowContext(ctx, anomalyDecisionSelect+` WHERE a.section_id = ? AND a.series = ?
		AND a.base_height_m = ? AND a.top_height_m = ? AND a.settings = ?`, k.SectionID, k.Series, k.BaseHeightM, k.TopHeightM, k.Settings))
	switch {
	case err == nil:
		return prev, ErrDecided
	case !errors.Is(err, sql.ErrNoRows):
		return AnomalyDecision{}, err
	}
	now := d.stamp()
	id, err := nextID(ctx, tx, "anomaly_decisions", "anomaly_decision")
	if err != nil {
		return AnomalyDecision{}, err
	}
	_, err = tx.ExecContext(ctx, `INSERT INTO anomaly_decisions (id, section_id, series, base_height_m, top_height_m, settings,
		decision, event_id, reason, user_id, created_at, updated_at) VALUES (?,?,?,?,?,?,?,?,?,?,?,?)`,
		id, k.SectionID, k.Series, k.BaseHeightM, k.TopHeightM, k.Settings, decision, eventID, reason, actor(ctx), now, now)
	if err != nil {
		return AnomalyDecision{}, fmt.Errorf("record anomaly decision: %w", err)
	}
	a, err := scanAnomalyDecision(tx.QueryRowContext(ctx, anomalyDecisionSelect+` WHERE a.id = ?`, id))
	if err != nil {
		return AnomalyDecision{}, err
	}
	if err := addRevision(ctx, tx, batch, "anomaly_decision", id, nil, a); err != nil {
		return a, err
	}
	a.ChangeID = batch
	return a, nil
}

func sectionName(ctx context.Context, tx *sql.Tx, id int64) (string, error) {
	var name string
	err := tx.QueryRowContext(ctx, `SELECT name FROM sections WHERE id = ?`, id).Scan(&name)
	return name, notFound(err, "section", id)
}

// AnomalyToEvent turns a detected anomaly into an event of its section (kind hg_anomaly, origin detected,
// accepted, its base and top heights, and a note of the settings that found it) and records the
// decision; both are revisions of one change batch made by the actor of ctx. name is the event's name
// (required, unique in the section); notes are added after the settings. It returns ErrDecided (with
// nothing written) when the anomaly already has a decision under these settings, and a
// *ValidationError naming the field for a bad name.
func (d *DB) AnomalyToEvent(ctx context.Context, k AnomalyKey, name, notes string) (Event, AnomalyDecision, error) {
	name, notes = strings.TrimSpace(name), strings.TrimSpace(notes)
	var ev Event
	var dec AnomalyDecision
	err := d.inTx(ctx, func(tx *sql.Tx) error {
		sec, err := sectionName(ctx, tx, k.SectionID)
		if err != nil {
			return err
		}
		ps := k.check()
		switch {
		case name == "":
			ps = append(ps, Problem{Column: "name", Message: "is empty; the event needs a name"})
		case len([]rune(name)) > maxEventName:
			ps = append(ps, Problem{Column: "name", Message: fmt.Sprintf("is %d characters long; at most %d", len([]rune(name)), maxEventName)})
		default:
			if id, err := lookupID(ctx, tx, `SELECT id FROM events WHERE section_id = ? AND name = ?`, k.SectionID, name); err != nil {
				return err
			} else if id != 0 {
				ps = append(ps, Problem{Column: "name", Message: fmt.Sprintf("section %s already has an event named %q", sec, name)})
			}
		}
		if msg := textProblem(name, false); msg != "" && name != "" {
			ps = append(ps, Problem{Column: "name", Message: msg})
		}
		if msg := textProblem(notes, true); msg != "" {
			ps = append(ps, Problem{Column: "notes", Message: msg})
		}
		if len(ps) > 0 {
			return &ValidationError{ps}
		}
		batch, err := d.newBatch(ctx, tx, "anomaly to event", "review")
		if err != nil {
			return err
		}
		note := fmt.Sprintf("Detected %s anomaly made an event by a curator; found with %s.", k.Series, k.Settings)
		if notes != "" {
			note += " " + notes
		}
		base, top := k.BaseHeightM, k.TopHeightM
		ev = Event{SectionID: &k.SectionID, Section: sec, Name: name, Kind: "hg_anomaly", BaseHeightM: &base, Origin: "detected",
			ReviewState: ReviewAccepted, Notes: note}
		if top > base {
			ev.TopHeightM = &top
		}
		if err := d.insertEvent(ctx, tx, batch, &ev); err != nil {
			return err
		}
		if dec, err = d.decide(ctx, tx, batch, k, "event", "", &ev.ID); err != nil {
			return err
		}
		return setBatchSummary(ctx, tx, batch, fmt.Sprintf("made %s anomaly %s–%s m of %s the event %s", k.Series,
			formatNumber(base), formatNumber(top), sec, name))
	})
	if err != nil {
		return Event{}, dec, err
	}
	return ev, dec, nil
}

// RejectAnomaly records that a curator (the actor of ctx) rejected a detected anomaly, with a reason
// (required), as one change batch. It returns ErrDecided when the anomaly already has a decision under
// these settings.
func (d *DB) RejectAnomaly(ctx context.Context, k AnomalyKey, reason string) (AnomalyDecision, error) {
	reason = strings.TrimSpace(reason)
	var dec AnomalyDecision
	err := d.inTx(ctx, func(tx *sql.Tx) error {
		sec, err := sectionName(ctx, tx, k.SectionID)
		if err != nil {
			return err
		}
		ps := k.check()
		if reason == "" {
			ps = append(ps, Problem{Column: "reason", Message: "is empty; say why the anomaly is rejected"})
		} else if msg := textProblem(reason, true); msg != "" {
			ps = append(ps, Problem{Column: "reason", Message: msg})
		}
		if len(ps) > 0 {
			return &ValidationError{ps}
		}
		batch, err := d.newBatch(ctx, tx, "reject anomaly", "review")
		if err != nil {
			return err
		}
		if dec, err = d.decide(ctx, tx, batch, k, "rejected", reason, nil); err != nil {
			return err
		}
		return setBatchSummary(ctx, tx, batch, fmt.Sprintf("rejected %s anomaly %s–%s m of %s: %s", k.Series,
			formatNumber(k.BaseHeightM), formatNumber(k.TopHeightM), sec, reason))
	})
	return dec, err
}
