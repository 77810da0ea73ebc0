package web

import (
	"net/http"
	"slices"
	"strings"

	"coeval/views"
)

// paramDoc describes one URL parameter for people who script downloads. Every parameter a page reads is
// described here; TestEveryParameterAPageReadsIsDocumented fails otherwise, so the reference page cannot
// drift from the parsers. A name may have several entries when its meaning differs between pages.
type paramDoc struct {
	Name    string
	Where   string // the pages that read it, in words
	Values  string
	Default string
	Meaning string
}

const (
	whereLists    = "lists of dates, tie points, events, changes"
	whereSummary  = "province and unit pages, unit summaries, timeline, comparison, coincidence test"
	whereTimeline = "timeline, comparison, coincidence test"
	whereSection  = "section pages (ratios, anomalies, age model, figures), aligned sections, comparison, coincidence test"
	whereCompare  = "comparison"
	whereCoincide = "coincidence test"
	whereEvents   = "comparison, coincidence test"
)

var paramDocs = []paramDoc{
	{"format", "every page", "html, csv, json; figures svg, png, pdf; the comparison and the compilation view also xlsx", "html", "What the address returns: the page, or a download of the same data."},
	{"sigma", "every page with uncertainties", "1, 2", "2", "The σ level at which ± are shown and written."},
	{"per", whereLists, "whole number", "50", "Rows per page."},
	{"page", whereLists, "whole number from 1", "1", "Page number (older links; the next and previous links use a position instead)."},
	{"after", "list of dates", "a position the list gave", "", "Continue the list after this position (set by the next link)."},
	{"before", "list of dates", "a position the list gave", "", "Continue the list before this position (set by the previous link)."},
	{"sort", whereLists, "a column of the list; the comparison: pulse, event, after, within, lag, near, ovl, volume", "", "Order of the rows."},
	{"dir", whereLists + ", comparison", "asc, desc", "asc", "Direction of the order."},
	{"q", "list of dates", "text", "", "Text searched in sample codes, laboratories, citations and notes."},
	{"method", "list of dates", "a dating method's code (see the dates file format)", "all", "Only dates of this method."},
	{"material", "list of dates", "text", "all", "Only dates of this material."},
	{"province", "list of dates; comparison", "a province's number", "all; the comparison: the first province", "Only this province; on the comparison, the province whose density gives the pulses."},
	{"unit", "list of dates", "a unit's number", "all", "Only dates of this unit."},
	{"section", "lists of dates, tie points and events", "a section's number", "all", "Only records of this section."},
	{"kind", "lists of events and changes", "an event kind (see the events file format); a kind of change", "all", "Only events, or changes, of this kind."},
	{"review", "list of dates", "pending, accepted, rejected", "all", "Only records in this review state."},
	{"age_min", "list of dates", "Ma", "", "Only dates at least this old."},
	{"age_max", "list of dates", "Ma", "", "Only dates at most this old."},
	{"rank", "timescale", "all, Supereon, Eon, Era, Period, Subperiod, Epoch, Age", "all", "Which ranks of the chart are listed."},
	{"user", "changes", "an account's name", "", "Only changes made by this account."},
	{"table", "timeline; comparison", "timeline: pulses, density, values; comparison: its tables", "pulses", "Which table a CSV download holds."},
	{"cal", whereSummary, "a calibration's code (listed on the calibrations page)", "the compilation's target", "The ⁴⁰Ar/³⁹Ar calibration (monitor age and ⁴⁰K decay constant) every ⁴⁰Ar/³⁹Ar date is recalculated to."},
	{"level", "province and unit pages, unit summaries, timeline", "analytical, tracer, full", "full", "Which uncertainty components the ± of a unit's mean includes."},
	{"level", whereCompare, "as-needed, analytical, full", "as-needed", "Which shared uncertainty components are drawn: as-needed draws a component only where the two things compared do not both carry it whole."},
	{"policy", whereSummary, "never, mswd-gt-1, p-lt-0.05", "p-lt-0.05", "When a weighted mean's uncertainty is enlarged by √MSWD."},
	{"rule", whereSummary, "none, mswd, chauvenet, gesd", "mswd", "The rule that flags outlying dates of a unit (flagged dates stay in the mean; the mean without them is given beside it)."},
	{"mswd_range", whereSummary, "chi2, wendt-carl", "chi2", "How the acceptable MSWD range is found: the exact quantiles of χ² (2.5 and 97.5 %), or the approximation of Wendt & Carl (1991)."},
	{"include", whereSummary + ", section pages", "accepted, pending (accepted and pending), all", "accepted", "Which records enter, by review state."},
	{"count", whereTimeline, "unit, date", "unit", "One value per unit (its weighted mean), or every date."},
	{"weight", whereTimeline, "none, volume", "none", "Weight each unit by its erupted volume."},
	{"bw", whereTimeline, "isj, scott, silverman, silverman-robust, user", "isj", "How the smoothing width is chosen: automatic (Botev's diffusion method), the rules of thumb of Scott or Silverman, or fixed."},
	{"h", whereTimeline, "Ma, above 0", "", "The fixed smoothing width, with bw=user (needed then)."},
	{"adaptive", whereTimeline, "0, 1", "0", "1: the width adapts to the data (Abramson's method, with the chosen width as pilot)."},
	{"bw_each", whereTimeline, "0, 1", "0", "1: choose the width afresh in every bootstrap replicate, so the band includes the width's own uncertainty (rules of thumb only)."},
	{"pdp", "timeline", "0, 1", "0", "1: draw the sum of the values' own normal curves over the density, for comparison."},
	{"from", "timeline, comparison", "Ma, 0 to 4600", "automatic", "One end of the age window (either order)."},
	{"to", "timeline, comparison", "Ma, 0 to 4600", "automatic", "The other end of the age window."},
	{"from", "compilation view", "Ma, 0 to 4600", "the whole record", "One end of the window shown (either order; an end left out stays automatic). The densities and probabilities do not change with it."},
	{"to", "compilation view", "Ma, 0 to 4600", "the whole record", "The other end of the window shown."},
	{"from", whereCoincide, "Ma, 0 to 4600", "automatic", "One end of the window the test places events or shifts onsets in (either order; give both ends or neither). The densities keep their automatic windows."},
	{"to", whereCoincide, "Ma, 0 to 4600", "automatic", "The other end of the test's window."},
	{"null", whereCoincide, "events, pulses", "events", "What chance means: events placed at random in the window, or the pulse onsets shifted together by a random offset (wrapping round within the window)."},
	{"ages", whereCoincide, "drawn, median", "drawn", "drawn: each event's age is drawn from its distribution in every replicate, so the p-value carries the ages' uncertainty; median: the median ages."},
	{"onsets", whereCoincide, "reference, drawn", "reference", "reference: the onsets of each province's reference density, taken as known; drawn: in every replicate each province's onsets come from one bootstrap replicate of its density, so the p-value carries their uncertainty (and is conservative)."},
	{"n", whereCoincide, "99 to 99999", "9999", "Monte Carlo replicates of the test."},
	{"table", whereCoincide, "result, events, onsets", "result", "Which table a CSV download holds."},
	{"seed", whereTimeline + ", section pages", "whole number", "1", "Seed of the random draws, so a result can be reproduced exactly."},
	{"reps", whereTimeline, "100 to 10000", "1000", "Bootstrap replicates of the density's band and its pulses."},
	{"rows", whereCompare, "pulses, units, both", "pulses", "What the comparison's rows are: pulses of the density, single units, or both."},
	{"pulses", whereCompare, "pulses by their age, comma-separated: P and an age in Ma within the pulse (P155.4, as the downloads' pulse column writes it)", "all", "Only these pulses. A pulse is named by its age, not its place, so the choice keeps naming the same pulse after the data or the density's choices change, as long as it still covers that age."},
	{"units", whereCompare, "units' numbers, comma-separated", "every unit with a mean", "The units compared as rows, in this order."},
	{"sections", whereEvents, "sections' numbers, comma-separated", "all", "Only events of these sections."},
	{"events", whereEvents, "events' numbers, comma-separated", "every event with an age", "Only these events."},
	{"group", whereCompare, "an event kind's code, repeatable", "", "Treat the events of that kind across sections as one synchronous event."},
	{"anomalies", whereEvents, "0, 1", "0", "1: compare the mercury anomalies found in the sections too."},
	{"point", whereEvents, "base, peak, top", "base", "Which point of an event with an extent is compared."},
	{"delta", whereCompare, "Ma, 0 or more", "0.1", "δ of the probability that two ages lie within δ of each other."},
	{"n", whereCompare, "1000 to 100000", "10000", "Joint draws of the comparison (above the default: signed-in users only)."},
	{"sens", whereCompare, "0, 1", "1", "1: show how the probabilities change under the alternative choices."},
	{"order", whereCompare, "codes of pulses, units and events", "", "Items of the table of orders."},
	{"saved", whereCompare, "a saved comparison's number", "", "Set when a saved comparison is opened: the page says whether the data changed since."},
	{"model", whereSection, "mc, linear", "mc", "The age–height model: Monte Carlo with deposition that may vary, or straight lines between tie points."},
	{"draws", whereSection, "100 to 20000", "2000", "Draws of the Monte Carlo age model."},
	{"toc_min", whereSection, "wt %", "the section's own", "TOC (or other host) below which Hg/TOC is not computed."},
	{"tie_level", "section pages", "analytical, tracer, full", "full", "Which shared components the tie points that come from dates carry in the age model."},
	{"host", "section pages", "auto, toc, ts, al", "auto", "The phase mercury is normalised to."},
	{"baseline", "section pages", "section, window, running", "section", "The background anomalies are measured against: the whole section, a window of heights, or a running window."},
	{"bg_base", "section pages", "m", "", "Base of the background window, with baseline=window."},
	{"bg_top", "section pages", "m", "", "Top of the background window, with baseline=window."},
	{"bg_width", "section pages", "odd whole number of samples", "", "Width of the running background, with baseline=running."},
	{"z_min", "section pages", "0.5 to 50", "3.5", "Modified z-score above which a sample is anomalous."},
	{"min_run", "section pages", "1 to 50", "2", "Anomalous samples in a row that make an anomaly."},
	{"penalty", "section pages", "above 0, up to 1e6", "2·ln n", "Penalty of the change-point search (larger: fewer changes)."},
	{"release", "every page", "a release's version", "", "Show the page as of that release: the compilation as it was when the release was made."},
	{"against", "a release's page", "another release's version", "the release before", "The release the changes are listed against."},
	{"series", "aligned sections", "ratio, hg", "ratio", "What the aligned figure shows: Hg/TOC or Hg."},
}

// paramNamesDocumented lists the documented names, each once.
func paramNamesDocumented() []string {
	var names []string
	for _, d := range paramDocs {
		if !slices.Contains(names, d.Name) {
			names = append(names, d.Name)
		}
	}
	return names
}

func (s *Server) handleHelpAddresses(w http.ResponseWriter, r *http.Request) error {
	v := views.Detail{Page: s.page(r.Context(), "Addresses for scripts", "Help")}
	v.Crumbs = []views.Link{{Label: "Help", URL: "/help"}}
	v.Intro = "Every page's address carries its choices, so a bookmarked or shared address shows the same result, and the same address with a format gives its data as a file. This is the list of the choices an address can carry, for those who fetch data with scripts. A choice that cannot be used is answered with a message naming it."
	v.Notes = []string{
		"Signed-in scripts send an access token (made on the account page) as an Authorization: Bearer header; a token only reads.",
		"Downloads carry the choices they were made with, so a file copied elsewhere still says how it was made.",
	}
	t := views.Table{Caption: "Choices an address can carry", Columns: []views.Column{
		{Label: "Name"}, {Label: "Pages"}, {Label: "Values"}, {Label: "Default"}, {Label: "What it chooses"},
	}}
	docs := slices.Clone(paramDocs)
	slices.SortStableFunc(docs, func(a, b paramDoc) int { return strings.Compare(a.Name, b.Name) })
	for _, d := range docs {
		t.Rows = append(t.Rows, []views.Cell{{Text: d.Name, Class: "code"}, {Text: d.Where}, {Text: d.Values}, {Text: d.Default}, {Text: d.Meaning}})
	}
	v.Tables = []views.Table{t}
	s.render(w, r, http.StatusOK, views.DetailPage(v))
	return nil
}
