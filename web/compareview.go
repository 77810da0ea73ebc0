package web

import (
	"context"
	"fmt"
	"math"
	"net/http"
	"net/url"
	"strconv"
	"strings"

	"github.com/go-chi/chi/v5"

	"coeval/stats"
	"coeval/store"
	"coeval/views"
)

// comparer serves the comparison pages; it holds the cache of computed comparisons (no package state:
// the cache lives as long as the router that registered it).
type comparer struct {
	*Server
	cache *compareCache
}

// compareCacheEntries bounds the comparisons kept: more than the default comparisons of the large
// compilation's 40 provinces, which the compilation view and the events' answers read in turn (at 32,
// with each comparison kept under two keys, the compilation's 30 comparisons pushed each other out and
// every view computed them all again). Kept by their data versions, one key each.
const compareCacheEntries = 48

func (s *Server) registerCompareRoutes(r chi.Router) {
	c := &comparer{Server: s, cache: newCompareCache(compareCacheEntries)}
	r.Get("/compare", s.handle(c.handleCompare))
	r.Get("/compare/saved", s.handle(c.handleSavedList))
	r.Get("/compare/saved/{id}", s.handle(c.handleSavedShow))
	r.With(s.requireRole(store.RoleContributor)).Post("/compare/saved", s.handle(c.handleSave))
}

func (c *comparer) handleCompare(w http.ResponseWriter, r *http.Request) error {
	res, cached, err := c.comparison(r)
	if err != nil {
		return err
	}
	ch := res.Choice
	// Display choices are read from this request, not from the cached result.
	p := newParams(r)
	sortKey := p.oneOf("sort", compareSorts, "pulse")
	dir := p.oneOf("dir", []string{"asc", "desc"}, "asc")
	format := p.oneOf("format", compareFormats, "html")
	base := fmt.Sprintf("comparison-province-%d", res.Province.ID)
	switch format {
	case "csv":
		return writeDownload(w, base+".csv", func(wr ioWriter) error { return writeCompareCSV(wr, res) })
	case "json":
		writeJSON(w, http.StatusOK, compareJSON(res))
		return nil
	case "xlsx":
		b, err := compareXLSX(res)
		if err != nil {
			return err
		}
		return writeFile(w, "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet", base+".xlsx", b)
	case "svg", "png", "pdf":
		fig, err := compareFigure(res)
		if err != nil {
			return err
		}
		switch format {
		case "svg":
			return writeFile(w, "image/svg+xml", base+".svg", fig.SVG())
		case "png":
			b, err := fig.PNG()
			if err != nil {
				return err
			}
			return writeFile(w, "image/png", base+".png", b)
		default:
			b, err := fig.PDF()
			if err != nil {
				return err
			}
			return writeFile(w, "application/pdf", base+".pdf", b)
		}
	}
	v, err := c.compareView(r, res, cached, sortKey, dir)
	if err != nil {
		return err
	}
	_ = ch
	c.render(w, r, http.StatusOK, views.ComparePage(v))
	return nil
}

// levelHelp explains the uncertainty levels of the comparison.
func levelHelp() []views.KV {
	return []views.KV{
		{Label: "as-needed (default)", Value: "Each pair draws the random part of both ages and every systematic component that only one of them carries; a component both carry whole (the same decay constant, tracer or ⁴⁰Ar/³⁹Ar calibration) moves them together and is held fixed; one that an event carries only in part (its age model rests partly on ties without that component, e.g. a biozone) is drawn once for both, so the shared part cancels and the rest counts. Tie points from dates enter the age models with their analytical σ only, never with Y or Z. U–Pb against U–Pb of the same tracer uses X, against another tracer Y, against another system Z; ⁴⁰Ar/³⁹Ar on one calibration uses the analytical σ, against anything else the full external σ."},
		{Label: "analytical", Value: "Only the random part of every age: too narrow unless every pair shares all its systematic components."},
		{Label: "full", Value: "Every component drawn once per draw and applied to every age that carries it (correlated, never added as independent terms); differences equal as-needed up to a second-order remainder. Use it when an absolute age matters."},
	}
}

// seRuleText says how the Monte Carlo SE of every probability of a comparison is made (stats.Probability).
const seRuleText = "± is the Monte Carlo standard error sqrt(P(1 − P)/Neff), Neff the effective number of independent draws: 1/Neff = 1/N + 1/M for each input given by only M draws that are resampled (a pulse's bootstrap replicates, an age model's draws), so an input's own draws count, not N alone. It is an upper bound, close when such an input decides the outcome."

// seHow says, for one row's account, how many effective draws its SEs rest on: after for P(after) and
// P(|lag| < δ), within for P(within) (NaN when it does not apply).
func seHow(n int, after, within float64) string {
	s := fmt.Sprintf("sqrt(P(1 − P)/Neff) with Neff = %.0f effective draws", after)
	if !math.IsNaN(within) && math.Round(within) != math.Round(after) {
		s = fmt.Sprintf("sqrt(P(1 − P)/Neff) with Neff = %.0f effective draws for P(after) and P(|lag| < δ), %.0f for P(within)", after, within)
	}
	if math.Round(after) >= float64(n) {
		return s + fmt.Sprintf(": the N = %d joint draws, no input being resampled from fewer", n)
	}
	return s + fmt.Sprintf(" of the N = %d joint draws: 1/Neff = 1/N + 1/M for each input resampled from only M draws (the pulse's replicates, the event's age-model draws)", n)
}

// dataAsOf is the status line's "data" entry as a scientist reads it: the release the page shows, or the
// time of the latest change to the compilation the numbers were computed on, linked to that change.
func (c *comparer) dataAsOf(ctx context.Context, stamp int64) views.KV {
	if c.release != "" {
		return views.KV{Label: "data", Value: "as of release " + c.release}
	}
	if stamp == 0 {
		return views.KV{Label: "data", Value: "the compilation is empty"}
	}
	kv := views.KV{Label: "data", Value: "as of the latest change to the compilation", URL: idURL("/changes", stamp)}
	if b, err := c.store.BatchByID(ctx, stamp); err == nil {
		kv.Value = "as of " + when(b.At) + " (the latest change to the compilation)"
	}
	return kv
}

// probText formats a probability with its Monte Carlo SE; 0 and 1 read as below 3/N and above 1 − 3/N.
func probText(p stats.Probability, n int) string {
	switch {
	case p.P == 0:
		return "< " + fixed(3/float64(n), 4)
	case p.P == 1:
		return "> " + fixed(1-3/float64(n), 4)
	}
	// The SE to one significant figure, the probability to the same decimals (at least 3).
	d := 3
	if p.SE > 0 {
		d = max(3, int(math.Ceil(-math.Log10(p.SE))))
	}
	return fixed(p.P, d) + " ± " + fixed(p.SE, d)
}

func lagText(s stats.DrawSummary) string {
	return fixed(s.Median, 3) + " [" + fixed(s.Lo95, 3) + ", " + fixed(s.Hi95, 3) + "]"
}

func (c *comparer) compareView(r *http.Request, res *compareResult, cached bool, sortKey, dir string) (views.CompareView, error) {
	ctx := r.Context()
	ch := res.Choice
	v := views.CompareView{Page: c.page(ctx, "Compare: "+res.Province.Name, "Compare")}
	v.Subtitle = "Eruptive pulses against events of the sedimentary record, as probabilities from joint Monte Carlo draws"
	v.Crumbs = []views.Link{{Label: "Compare", URL: "/compare"}, {Label: "Saved comparisons", URL: "/compare/saved"}, {Label: "Coincidence test", URL: "/coincidence"}}
	for _, f := range []string{"csv", "json", "xlsx", "svg", "png", "pdf"} {
		v.Downloads = append(v.Downloads, views.Link{Label: strings.ToUpper(f), URL: withQuery(r, "format", f)})
	}
	v.Downloads = append(v.Downloads, views.Link{Label: "Columns explained", URL: "/help/downloads/comparison"})
	// The page leads with the answer: a short intro, the figure and the table; how rows are made is in the
	// method block, opened on demand.
	v.Intro = "Each row: how likely an event of the sedimentary record came after a pulse's onset, within the pulse, or near it, ± the Monte Carlo standard error. Ages in Ma, older = larger; lag = onset − event (positive: the event came after). Numbers link to how they were computed."
	method := "Each row compares one pulse of the province's density (onset = older edge, end = younger edge, from the bootstrap of the density) with one event's age (from its section's age–height model or a direct age). Ages in Ma, older = larger; the lag is onset − event (positive: the event came after the onset). Every probability is given ± its Monte Carlo standard error; numbers link to how they were computed."
	switch ch.Rows {
	case "units":
		v.Subtitle = "Single eruptive units against events of the sedimentary record, as probabilities from joint Monte Carlo draws"
		v.Intro = "Each row: how likely an event of the sedimentary record came after an eruptive unit's weighted mean, or near it, ± the Monte Carlo standard error. Ages in Ma, older = larger; lag = unit mean − event (positive: the event came after). Numbers link to how they were computed."
		method = "Each row compares one eruptive unit's weighted mean (a point-like age, with its decay system's systematic components) with one event's age (from its section's age–height model or a direct age). Ages in Ma, older = larger; the lag is unit mean − event (positive: the event came after the unit). Every probability is given ± its Monte Carlo standard error; numbers link to how they were computed."
	case "both":
		v.Subtitle = "Eruptive pulses and single units against events of the sedimentary record, as probabilities from joint Monte Carlo draws"
		v.Intro = "Each row: how likely an event of the sedimentary record came after a pulse's onset or a unit's weighted mean, within the pulse, or near it, ± the Monte Carlo standard error. Ages in Ma, older = larger; lag = onset (or unit mean) − event (positive: the event came after). Numbers link to how they were computed."
		method = "Each row compares one pulse of the province's density (onset = older edge, end = younger edge, from the bootstrap of the density), or one eruptive unit's weighted mean (a point-like age), with one event's age (from its section's age–height model or a direct age). Ages in Ma, older = larger; the lag is onset − event, or unit mean − event (positive: the event came after). Every probability is given ± its Monte Carlo standard error; numbers link to how they were computed."
	}
	v.Method = []string{method,
		"The ages compared are drawn together: every draw takes one value of each age, and a systematic term shared by several ages (a decay constant, a monitor age, a tracer) is drawn once per draw for all of them, so a term common to both ages of a row moves them together and cancels in their difference (up to a negligible second-order remainder) instead of being counted twice. A probability is the share of draws in which the statement holds; its standard error counts the independent draws it rests on.",
		"The province's density is a kernel density estimate of its ages, its band and pulse edges from a bootstrap of the values; an event's age comes from its section's age–height model (Monte Carlo draws kept in stratigraphic order, with deposition between ties as in a Poisson-process deposition model, Bronk Ramsey 2008) or from a direct age.",
	}
	v.Form = compareForm(r, res)
	v.LevelHelp = levelHelp()
	v.Status = []views.KV{{Label: "seed", Value: strconv.FormatUint(ch.Dens.Seed, 10)}, {Label: "N", Value: strconv.Itoa(ch.N) + " joint draws"},
		{Label: "level", Value: levelWords(ch.Level)}, {Label: "δ", Value: num(ch.DeltaMa) + " Ma"},
		{Label: "calibration", Value: ch.Dens.Sum.Cal.Cal.Name}, c.dataAsOf(ctx, res.Stamp)}
	took := strconv.FormatInt(res.Computed.Milliseconds(), 10) + " ms"
	if cached {
		v.Status = append(v.Status, views.KV{Label: "computed", Value: took + ", served from the cache"})
	} else {
		v.Status = append(v.Status, views.KV{Label: "computed", Value: took})
	}
	if id := newParams(r).id("saved"); id > 0 {
		sc, err := c.store.Comparison(ctx, id)
		if err == nil {
			if sc.DataStamp != res.Stamp {
				v.Changed = fmt.Sprintf("Saved comparison “%s” was computed on the data of %s; the compilation has changed since: the numbers below are recomputed on the current data and may differ from those saved.",
					sc.Name, when(sc.CreatedAt))
				if sc.Pulses != nil {
					if ch := pulseChanges(spansOfSaved(sc.Pulses), spansOfPulses(res.In.Pulses), "of the saved comparison"); len(ch) > 0 {
						v.Changed += " " + strings.Join(ch, " ")
					} else {
						v.Changed += " Its pulses are today's, matched by their age ranges."
					}
				}
			} else {
				v.Status = append(v.Status, views.KV{Label: "saved as", Value: fmt.Sprintf("“%s”, data unchanged since it was saved (%s)", sc.Name, when(sc.CreatedAt))})
			}
		}
	}
	v.Cautions = append(v.Cautions, res.Cautions...)
	if res.MinSamples > 0 && res.MinSamples < ch.N {
		v.Cautions = append(v.Cautions, fmt.Sprintf("Some inputs are given by only %d draws (bootstrap replicates or age-model draws) and are resampled to %d: a probability cannot be known better than about ±sqrt(P(1 − P)/%d), whatever N. Every ± on this page and in the downloads counts those draws.", res.MinSamples, ch.N, res.MinSamples))
	}
	if res.Density.Bandwidth.Note != "" {
		v.Cautions = append(v.Cautions, "Smoothing width: "+bandwidthNoteWords(res.Density.Bandwidth.Note))
	}
	fig, err := compareFigure(res)
	if err != nil {
		return v, err
	}
	if len(res.Table.Cells) > 0 || res.Density.Band != nil {
		v.SVG = string(fig.SVG())
		v.Caption = "The province's density with its pulses and each event's age distribution (its draws, 95 % interval whiskered), by section, on one age axis with the ICS timescale."
		if ch.unitRows() && len(res.In.UnitRows) > 0 {
			v.Caption = "The province's density with its pulses, each unit's weighted mean compared (its analytical spread, 95 % interval whiskered) and each event's age distribution (its draws, 95 % interval whiskered), by section, on one age axis with the ICS timescale."
		}
	}
	rows := compareRows(res)
	sortRows(rows, sortKey, dir)
	v.Table = compareTable(r, res, rows, sortKey, dir)
	v.Events = eventsTable(res)
	v.Order = precedenceView(res)
	v.How = howList(res, rows)
	v.Contents = compareContents(v)
	v.Notes = append(v.Notes, res.In.EdgeNote+".")
	if res.VolumeNote != "" {
		v.Notes = append(v.Notes, res.VolumeNote)
	}
	v.Notes = append(v.Notes, res.In.Notes...)
	v.Notes = append(v.Notes, "Results are kept for the same choices and the same data: any import, edit, review or undo of what a comparison reads computes it afresh.")
	if u, ok := currentUser(ctx); ok && store.RoleAtLeast(u.Role, store.RoleContributor) {
		v.Save = &views.SaveForm{Action: "/compare/saved", Query: saveQuery(r), Releases: c.releaseChoices(ctx)}
	}
	return v, nil
}

// compareContents lists the comparison page's parts that are there, for its in-page contents.
func compareContents(v views.CompareView) []views.Block {
	var bs []views.Block
	bs = append(bs, views.Block{ID: v.Table.ID, Title: "Table of probabilities"})
	if len(v.Events.Rows) > 0 {
		bs = append(bs, views.Block{ID: v.Events.ID, Title: "Events compared"})
	}
	if len(v.Order.Grid.Rows) > 0 {
		bs = append(bs, views.Block{ID: v.Order.ID, Title: v.Order.Title})
	}
	if len(v.Method) > 0 {
		bs = append(bs, views.Block{ID: "method", Title: "How this was computed"})
	}
	if len(v.How) > 0 {
		bs = append(bs, views.Block{ID: "how", Title: "How each row was computed"})
	}
	return bs
}

// saveQuery is the request's query without the display-only and bookkeeping parameters.
func saveQuery(r *http.Request) string {
	q := r.URL.Query()
	for _, k := range []string{"format", "saved"} {
		q.Del(k)
	}
	return q.Encode()
}

// handleSave saves the settings of a comparison page (contributors and up).
func (c *comparer) handleSave(w http.ResponseWriter, r *http.Request) error {
	if err := r.ParseForm(); err != nil {
		return badRequest{message: "The form could not be read."}
	}
	query := r.PostForm.Get("query")
	vals, err := url.ParseQuery(query)
	if err != nil {
		return badRequest{message: "The saved settings could not be read.", problems: []string{"query: not a query string"}}
	}
	vals.Del("format")
	vals.Del("saved")
	// Check the settings before saving them: a saved comparison must open.
	req := r.Clone(r.Context())
	req.URL = &url.URL{Path: "/compare", RawQuery: vals.Encode()}
	p := newParams(req)
	if _, err := c.compareChoiceFrom(r.Context(), p); err != nil {
		return err
	}
	if err := p.err(); err != nil {
		return err
	}
	stamp, err := c.store.DataStamp(r.Context())
	if err != nil {
		return err
	}
	// The pulses it has now are kept with it, so that opened again on changed data it can say which of
	// that day's pulses is which (the comparison is usually in the cache: its page was just shown).
	var pulses []store.SavedPulse
	if r.PostForm.Get("release") == "" {
		res, _, err := c.comparison(req)
		if err != nil {
			return err
		}
		pulses = savedPulses(res.In.Pulses)
	}
	id, err := c.store.SaveComparison(actingCtx(r).Context(), store.Comparison{Name: r.PostForm.Get("name"), Query: vals.Encode(), DataStamp: stamp,
		Release: r.PostForm.Get("release"), Pulses: pulses})
	if ve, ok := store.AsValidation(err); ok {
		var probs []string
		for _, pr := range ve.Problems {
			probs = append(probs, pr.Column+": "+pr.Message)
		}
		return badRequest{message: "The comparison could not be saved:", problems: probs}
	}
	if err != nil {
		return err
	}
	http.Redirect(w, r, idURL("/compare/saved", id), http.StatusSeeOther)
	return nil
}

// handleSavedShow opens a saved comparison: the comparison page with its settings, saying whether the
// data have changed since it was saved.
func (c *comparer) handleSavedShow(w http.ResponseWriter, r *http.Request) error {
	id, err := pathID(r, "id")
	if err != nil {
		return err
	}
	sc, err := c.store.Comparison(r.Context(), id)
	if err != nil {
		return err
	}
	if sc.Release != "" {
		return c.handlePinnedShow(w, r, sc)
	}
	q, _ := url.ParseQuery(sc.Query)
	q.Set("saved", strconv.FormatInt(sc.ID, 10))
	http.Redirect(w, r, "/compare?"+q.Encode(), http.StatusSeeOther)
	return nil
}

func (c *comparer) handleSavedList(w http.ResponseWriter, r *http.Request) error {
	ctx := r.Context()
	list, err := c.store.Comparisons(ctx)
	if err != nil {
		return err
	}
	stamp, err := c.store.DataStamp(ctx)
	if err != nil {
		return err
	}
	if wantsJSON(r) {
		writeJSON(w, http.StatusOK, map[string]any{"data_stamp": stamp, "comparisons": list})
		return nil
	}
	v := views.SavedView{Page: c.page(ctx, "Saved comparisons", "Compare"),
		Intro: "Comparisons saved with their settings. One of today's data is computed again on opening and says when the data have changed since it was saved; one pinned to a release keeps that release's numbers and says whether today's data would change them."}
	v.Crumbs = []views.Link{{Label: "Compare", URL: "/compare"}}
	v.Table = views.Table{ID: "saved", Columns: []views.Column{{Label: "Name"}, {Label: "Saved"}, {Label: "By"}, {Label: "Data"}, {Label: "Settings"}},
		Empty: "No comparison saved yet: contributors can save one from the comparison page."}
	for _, sc := range list {
		state, cls := savedState(sc, stamp)
		v.Table.Rows = append(v.Table.Rows, []views.Cell{{Text: sc.Name, URL: idURL("/compare/saved", sc.ID)}, {Text: when(sc.CreatedAt)},
			{Text: orDash(sc.User)}, {Text: state, Class: cls}, {Text: orDash(sc.Query)}})
	}
	c.render(w, r, http.StatusOK, views.SavedPage(v))
	return nil
}

// savedState is what the list says of a saved comparison's data: pinned to a release, or whether the
// compilation changed since it was saved (stamp is today's).
func savedState(sc store.Comparison, stamp int64) (string, string) {
	switch {
	case sc.Release != "":
		return "pinned to release " + sc.Release, ""
	case sc.DataStamp != stamp:
		n := stamp - sc.DataStamp
		return fmt.Sprintf("today's data, changed since it was saved (%d change%s to the compilation since)", n, map[bool]string{true: "", false: "s"}[n == 1]), "caution"
	}
	return "today's data, unchanged since it was saved", ""
}
