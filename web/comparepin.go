package web

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"math"
	"net/http"
	"net/url"
	"sort"
	"strconv"

	"coeval/stats"
	"coeval/store"
	"coeval/views"
)

// A saved comparison pinned to a release is computed on that release's snapshot, so its numbers stay
// those of the compilation as released; its page says whether today's data would change it, pair by
// pair, by computing the comparison on both and setting the probabilities side by side.

// pinChange is the rule by which a probability counts as changed: the two differ by more than
// pinSEFactor times their combined Monte Carlo standard error and by more than pinMinDiff.
const (
	pinSEFactor = 3.0
	pinMinDiff  = 0.01
)

// pinnedRow is one event–pulse pair of a comparison's table, as its JSON download gives it.
type pinnedRow struct {
	Key, Event, Section, Pulse string // Key: the event's (and a unit row's unit); Pulse: its code
	PulseLabel                 string // the pulse in words, "" for a unit row
	Span                       stats.PulseSpan
	Within, WithinSE           float64
	After, AfterSE             float64
}

// pinDiff is one pair of the release's and today's comparison.
type pinDiff struct {
	Then, Now        *pinnedRow
	Changed, Crossed bool
}

// releaseChoices are the releases a comparison can be pinned to, newest first ("" when the store has
// none or this is a release's own view).
func (c *comparer) releaseChoices(ctx context.Context) []views.Option {
	rs, ok := c.releaseStore()
	if !ok {
		return nil
	}
	list, err := rs.Releases(ctx)
	if err != nil {
		return nil
	}
	var out []views.Option
	for _, rel := range list {
		out = append(out, views.Option{Value: rel.Version, Label: fmt.Sprintf("release %s of %s (fixed)", rel.Version, rel.Date())})
	}
	return out
}

// handlePinnedShow is the page of a saved comparison pinned to a release.
func (c *comparer) handlePinnedShow(w http.ResponseWriter, r *http.Request, sc store.Comparison) error {
	ctx := r.Context()
	q, _ := url.ParseQuery(sc.Query)
	q.Del("format")
	asReleased := "/releases/" + url.PathEscape(sc.Release) + "/view/compare?" + q.Encode()
	q2, _ := url.ParseQuery(q.Encode())
	q2.Set("saved", strconv.FormatInt(sc.ID, 10))
	today := "/compare?" + q2.Encode()
	v := views.Detail{Page: c.page(ctx, sc.Name, "Compare")}
	v.Crumbs = []views.Link{{Label: "Compare", URL: "/compare"}, {Label: "Saved comparisons", URL: "/compare/saved"}}
	v.Links = []views.Link{{Label: "Open it as of release " + sc.Release, URL: asReleased}, {Label: "Open it on today's data", URL: today}}
	rs, ok := c.releaseStore()
	if !ok {
		return notFoundError{what: "release " + strconv.Quote(sc.Release)}
	}
	rel, err := rs.ReleaseByVersion(ctx, sc.Release)
	if errors.Is(err, store.ErrNotFound) {
		v.Intro = fmt.Sprintf("Pinned to release %s, which this compilation no longer holds.", sc.Release)
		v.Links = v.Links[1:]
		c.render(w, r, http.StatusOK, views.DetailPage(v))
		return nil
	}
	if err != nil {
		return err
	}
	v.Intro = fmt.Sprintf("Pinned to release %s of %s: its numbers are those of the compilation as released, whatever changes after.", rel.Version, rel.Date())
	v.Groups = []views.FieldGroup{{Title: "Saved", Fields: []views.KV{{Label: "By", Value: orDash(sc.User)}, {Label: "On", Value: when(sc.CreatedAt)},
		{Label: "Release", Value: citation(rel), URL: "/releases/" + url.PathEscape(rel.Version)}}}}
	h, err := c.releaseHandler(ctx, rel)
	if err != nil {
		return err
	}
	thenRows, thenErr := comparisonRows(h, r, q)
	nowRows, nowErr := comparisonRows(c.handle(c.handleCompare), r, q)
	switch {
	case thenErr != nil:
		v.Notes = append(v.Notes, "The comparison could not be computed as of the release: "+thenErr.Error())
	case nowErr != nil:
		v.Notes = append(v.Notes, "Today's data change it: the comparison can no longer be computed with these settings ("+nowErr.Error()+").")
	default:
		diffs := pinDiffs(thenRows, nowRows)
		v.Notes = append(v.Notes, pinVerdict(diffs))
		v.Notes = append(v.Notes, pulseChanges(pinPulses(thenRows), pinPulses(nowRows), "of the comparison as released")...)
		v.Tables = append(v.Tables, pinTable(diffs))
	}
	v.Notes = append(v.Notes, fmt.Sprintf("Both are computed with the saved settings and seeds. A probability counts as changed when the two differ by more than %g times their combined Monte Carlo standard error and by more than %g; a conclusion changes when a probability crosses 0.05 or 0.95. Pairs are matched by event and section, and by the same pulse: a pulse as released is today's pulse whose age range (median end to median onset) overlaps at least half of the narrower of the two, whatever its place among the pulses; one with none is said to have no counterpart.", pinSEFactor, pinMinDiff))
	c.render(w, r, http.StatusOK, views.DetailPage(v))
	return nil
}

// comparisonRows computes the comparison of the query q through h (the release's handler or today's) and
// reads its table from the JSON download.
func comparisonRows(h http.Handler, r *http.Request, q url.Values) ([]pinnedRow, error) {
	var doc comparisonRowsJSON
	if err := internalJSON(h, r, "/compare", q, &doc); err != nil {
		return nil, err
	}
	out := make([]pinnedRow, 0, len(doc.Rows))
	for _, m := range doc.Rows {
		num := func(k string) float64 {
			x, err := strconv.ParseFloat(m[k], 64)
			if err != nil {
				return math.NaN()
			}
			return x
		}
		row := pinnedRow{
			Key:   m["province"] + "\x00" + m["unit_code"] + "\x00" + m["event_code"] + "\x00" + m["section"] + "\x00" + m["event_point"],
			Event: m["event"], Section: m["section"], Pulse: m["pulse"],
			Within: num("p_within"), WithinSE: num("p_within_se"), After: num("p_after_onset"), AfterSE: num("p_after_onset_se"),
		}
		if row.Pulse != "" {
			row.PulseLabel = codeWords(row.Pulse)
			row.Span = stats.PulseSpan{ModeMa: num("pulse_mode_ma"), OldMa: num("pulse_onset_median_ma"), YoungMa: num("pulse_end_median_ma")}
		} else {
			row.PulseLabel = m["unit"]
		}
		out = append(out, row)
	}
	return out, nil
}

// pinPulses are the distinct pulses of a comparison's rows, in the rows' order.
func pinPulses(rows []pinnedRow) []namedSpan {
	var out []namedSpan
	seen := map[string]bool{}
	for _, r := range rows {
		if r.Pulse != "" && !seen[r.Pulse] {
			seen[r.Pulse] = true
			out = append(out, namedSpan{Code: r.Pulse, Label: r.PulseLabel, Span: r.Span})
		}
	}
	return out
}

// pinDiffs matches the pairs of the two comparisons: the same event (and unit) and the same pulse, a
// pulse of the release being today's pulse that overlaps it most (stats.MatchPulses), never the pulse in
// its place. Pairs found in one only are kept with the other nil.
func pinDiffs(then, now []pinnedRow) []pinDiff {
	thenP, nowP := pinPulses(then), pinPulses(now)
	m := matchSpans(thenP, nowP)
	counterpart := map[string]string{}
	for i, p := range thenP {
		if j := m.Counterpart(i); j >= 0 {
			counterpart[p.Code] = nowP[j].Code
		} else {
			counterpart[p.Code] = "\x00none"
		}
	}
	key := func(r *pinnedRow, pulse string) string { return pulse + "\x00" + r.Key }
	byKey := map[string]*pinnedRow{}
	for i := range now {
		byKey[key(&now[i], now[i].Pulse)] = &now[i]
	}
	var out []pinDiff
	seen := map[string]bool{}
	for i := range then {
		t := &then[i]
		k := key(t, t.Pulse)
		if t.Pulse != "" {
			k = key(t, counterpart[t.Pulse])
		}
		n := byKey[k]
		if n != nil && seen[k] {
			n = nil // a pulse of today that two of the release's became is compared with the first only
		}
		seen[k] = true
		d := pinDiff{Then: t, Now: n}
		if n == nil {
			d.Changed = true
		} else {
			d.Changed = probChanged(t.Within, t.WithinSE, n.Within, n.WithinSE) || probChanged(t.After, t.AfterSE, n.After, n.AfterSE)
			d.Crossed = crosses(t.Within, n.Within) || crosses(t.After, n.After)
		}
		out = append(out, d)
	}
	for i := range now {
		if !seen[key(&now[i], now[i].Pulse)] {
			out = append(out, pinDiff{Now: &now[i], Changed: true})
		}
	}
	sort.SliceStable(out, func(i, j int) bool {
		if out[i].Crossed != out[j].Crossed {
			return out[i].Crossed
		}
		return out[i].Changed && !out[j].Changed
	})
	return out
}

// probChanged says whether two Monte Carlo estimates of a probability differ by more than their error.
func probChanged(p1, se1, p2, se2 float64) bool {
	if math.IsNaN(p1) != math.IsNaN(p2) {
		return true
	}
	if math.IsNaN(p1) {
		return false
	}
	d := math.Abs(p1 - p2)
	se := math.Hypot(nanZero(se1), nanZero(se2))
	return d > pinMinDiff && d > pinSEFactor*se
}

// crosses says whether a probability moved across 0.05 or 0.95 (a conclusion drawn at those levels
// changes).
func crosses(p1, p2 float64) bool {
	level := func(p float64) int {
		switch {
		case p > 0.95:
			return 2
		case p < 0.05:
			return 0
		}
		return 1
	}
	return !math.IsNaN(p1) && !math.IsNaN(p2) && level(p1) != level(p2)
}

func nanZero(x float64) float64 {
	if math.IsNaN(x) {
		return 0
	}
	return x
}

// pinVerdict is the page's answer in one sentence.
func pinVerdict(diffs []pinDiff) string {
	changed, crossed, onlyThen, onlyNow := 0, 0, 0, 0
	largest := 0.0
	for _, d := range diffs {
		switch {
		case d.Now == nil:
			onlyThen++
		case d.Then == nil:
			onlyNow++
		default:
			largest = math.Max(largest, math.Max(math.Abs(nanZero(d.Then.Within)-nanZero(d.Now.Within)), math.Abs(nanZero(d.Then.After)-nanZero(d.Now.After))))
		}
		if d.Changed {
			changed++
		}
		if d.Crossed {
			crossed++
		}
	}
	if changed == 0 {
		return fmt.Sprintf("Today's data would not change it: every probability of its %d pairs is the same within its Monte Carlo error (largest difference %.3f).", len(diffs), largest)
	}
	s := fmt.Sprintf("Today's data would change it: %d of its %d pairs differ", changed, len(diffs))
	if crossed > 0 {
		s += fmt.Sprintf(", and in %d a conclusion at the 0.05 or 0.95 level changes", crossed)
	}
	if onlyThen > 0 || onlyNow > 0 {
		s += fmt.Sprintf(" (%d pairs of the release are gone, %d are new)", onlyThen, onlyNow)
	}
	return s + "."
}

// pinTable sets the probabilities of the release and of today side by side, changed pairs first.
func pinTable(diffs []pinDiff) views.Table {
	t := views.Table{ID: "pinned", Caption: "Probabilities as released and on today's data (± 1 Monte Carlo standard error)",
		Columns: []views.Column{{Label: "Event"}, {Label: "Section"}, {Label: "Pulse"},
			{Label: "P(within) as released", Num: true}, {Label: "P(within) today", Num: true},
			{Label: "P(after onset) as released", Num: true}, {Label: "P(after onset) today", Num: true}, {Label: "Would change"}}}
	prob := func(r *pinnedRow, p, se func(*pinnedRow) float64) string {
		if r == nil {
			return "—"
		}
		if math.IsNaN(p(r)) {
			return "—"
		}
		return fmt.Sprintf("%.3f ± %.3f", p(r), nanZero(se(r)))
	}
	within := func(r *pinnedRow) float64 { return r.Within }
	withinSE := func(r *pinnedRow) float64 { return r.WithinSE }
	after := func(r *pinnedRow) float64 { return r.After }
	afterSE := func(r *pinnedRow) float64 { return r.AfterSE }
	for _, d := range diffs {
		ref := d.Then
		if ref == nil {
			ref = d.Now
		}
		verdict, cls := "no", ""
		switch {
		case d.Then == nil:
			verdict, cls = "new pair", "caution"
		case d.Now == nil:
			verdict, cls = "pair gone", "caution"
		case d.Crossed:
			verdict, cls = "yes: a conclusion changes", "caution"
		case d.Changed:
			verdict, cls = "yes", "caution"
		}
		pulse := ref.PulseLabel
		if d.Then != nil && d.Now != nil && d.Then.Pulse != d.Now.Pulse {
			pulse = d.Then.PulseLabel + " (today the " + d.Now.PulseLabel + ")"
		} else if d.Then != nil && d.Now == nil && d.Then.Pulse != "" {
			pulse += " (no counterpart today)"
		}
		t.Rows = append(t.Rows, []views.Cell{{Text: ref.Event}, {Text: ref.Section}, {Text: upperFirst(pulse)},
			{Text: prob(d.Then, within, withinSE), Num: true}, {Text: prob(d.Now, within, withinSE), Num: true},
			{Text: prob(d.Then, after, afterSE), Num: true}, {Text: prob(d.Now, after, afterSE), Num: true},
			{Text: verdict, Class: cls}})
	}
	return t
}

// captured is a response held in memory (the JSON of a comparison read by the pinned page).
type captured struct {
	header http.Header
	status int
	body   bytes.Buffer
}

func (c *captured) Header() http.Header { return c.header }
func (c *captured) WriteHeader(s int) {
	if c.status == 0 {
		c.status = s
	}
}
func (c *captured) Write(p []byte) (int, error) {
	if c.status == 0 {
		c.status = http.StatusOK
	}
	return c.body.Write(p)
}
