package web

import (
	"cmp"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"

	"coeval/stats"
	"coeval/views"
	"coeval/web/analysis"
)

// Which came first: every pair of the comparison's items (pulse onsets and ends, units, events) with the
// probability that one came before the other, from the same joint draws as the table (stats.Order). The
// page says the decisive pairs in sentences, most certain first, and shades a grid of every pair; the
// workbook and the JSON list every pair with its standard error.

// precDecisive is the probability from which an order is said in a sentence.
const precDecisive = 0.95

// precItem is one item of the order: what it is, in words, and its code in addresses (order=) and files.
type precItem struct {
	Code  string
	Words string // "the onset of the pulse at ~155.4 Ma", "the base of the Hg anomaly in Skarfell Creek"
	Short string // for the grid's headers: "onset ~155.4 Ma", "Hg anomaly, Skarfell Creek"
	Kind  string // pulse, unit or event
	Pulse string // a pulse edge's pulse code, so that a pulse's onset and end are not set against each other
}

// precItems names the items of the order matrix by what they are.
func precItems(res *compareResult) []precItem {
	out := make([]precItem, len(res.OrderCodes))
	for i, code := range res.OrderCodes {
		out[i] = precItemOf(res, code)
	}
	return out
}

func precItemOf(res *compareResult, code string) precItem {
	for _, u := range res.In.UnitRows {
		if u.Code == code {
			return precItem{Code: code, Words: "the mean age of the " + u.Name, Short: u.Name + " (mean)", Kind: "unit"}
		}
	}
	for _, e := range res.In.Events {
		if e.Code == code {
			w := e.Name
			switch {
			case strings.HasPrefix(code, "G:"):
				w += " (across " + e.Section + ")"
			case e.Section != "":
				w += " in " + e.Section
			}
			short := strings.Replace(w, " in ", ", ", 1)
			if p := strings.SplitN(e.Point, " ", 2)[0]; p != "" && p != "height" {
				return precItem{Code: code, Words: "the " + p + " of the " + w, Short: short + " (" + p + ")", Kind: "event"}
			}
			return precItem{Code: code, Words: "the " + w, Short: short, Kind: "event"}
		}
	}
	ids := make([]analysis.PulseID, len(res.In.Pulses))
	for i, p := range res.In.Pulses {
		ids[i] = p.ID
	}
	pulse, edge := code, "onset"
	for _, suffix := range []string{".onset", ".end"} {
		if c, ok := strings.CutSuffix(code, suffix); ok {
			pulse, edge = c, suffix[1:]
		}
	}
	if i := analysis.PulseByCode(ids, pulse); i >= 0 {
		p := res.In.Pulses[i]
		return precItem{Code: code, Words: "the " + edge + " of the " + p.ID.Label, Short: edge + " " + figurePulseLabel(p.ID), Kind: "pulse", Pulse: p.Name}
	}
	return precItem{Code: code, Words: code, Short: code}
}

// precPair is one pair of items in the likelier order: Earlier came first with probability P; Reverse is
// the probability of the other order (1 − P unless the two can be equal in a draw).
type precPair struct {
	Earlier, Later int
	P              stats.Probability
	Reverse        float64
}

// precPairs lists every pair of items once, in its likelier order: pairs setting an eruption (a pulse
// edge or a unit) against the sedimentary record first, then the others; within each, the most certain
// first. A pulse's onset and its own end (always in that order) are left out.
func precPairs(res *compareResult, items []precItem) []precPair {
	o := res.Order
	var out []precPair
	for i := range o.Names {
		for k := i + 1; k < len(o.Names); k++ {
			if items[i].Pulse != "" && items[i].Pulse == items[k].Pulse {
				continue
			}
			// P[i][k] is P(i older than k): i came first.
			pr := precPair{Earlier: i, Later: k, P: stats.Probability{P: o.P[i][k], SE: o.SE[i][k]}, Reverse: o.P[k][i]}
			if o.P[k][i] > o.P[i][k] {
				pr = precPair{Earlier: k, Later: i, P: stats.Probability{P: o.P[k][i], SE: o.SE[k][i]}, Reverse: o.P[i][k]}
			}
			out = append(out, pr)
		}
	}
	cross := func(p precPair) int {
		a, b := items[p.Earlier].Kind, items[p.Later].Kind
		if (a == "event") != (b == "event") {
			return 0
		}
		return 1
	}
	slices.SortStableFunc(out, func(a, b precPair) int {
		return cmp.Or(cmp.Compare(cross(a), cross(b)), cmp.Compare(b.P.P, a.P.P), cmp.Compare(a.P.SE, b.P.SE))
	})
	return out
}

// precSentence says a pair in words: "The base of the Hg anomaly in Skarfell Creek came after the onset
// of the pulse at ~155.4 Ma: P = 0.998 ± 0.001".
func precSentence(items []precItem, p precPair, n int) string {
	return upperFirst(items[p.Later].Words) + " came after " + items[p.Earlier].Words + ": " + pWords(p.P, n)
}

// pWords is "P = 0.998 ± 0.001", or "P > 0.9997" where the draws give a bound (probText).
func pWords(p stats.Probability, n int) string {
	w := probText(p, n)
	if strings.HasPrefix(w, ">") || strings.HasPrefix(w, "<") {
		return "P " + w
	}
	return "P = " + w
}

// precShade is the shade of a probability in the grid: 0 (white) to 10 (darkest), in tenths.
func precShade(p float64) int {
	if math.IsNaN(p) {
		return -1
	}
	return min(10, max(0, int(math.Round(10*p))))
}

// precedenceView lays out which came first: the decisive pairs in sentences, the rest counted, and the
// shaded grid of every pair with its legend.
func precedenceView(res *compareResult) views.Precedence {
	o := res.Order
	if len(o.Names) == 0 {
		return views.Precedence{}
	}
	n := res.Choice.N
	items := precItems(res)
	pairs := precPairs(res, items)
	v := views.Precedence{ID: "precedence", Title: "Which came first"}
	undecided := 0
	for _, p := range pairs {
		if p.P.P >= precDecisive {
			v.Sentences = append(v.Sentences, precSentence(items, p, n))
		} else {
			undecided++
		}
	}
	v.Intro = fmt.Sprintf("Of the %d pairs of %d items (pulse onsets and ends, units, events), %d have an order with P ≥ %s, said below — the eruptions against the sedimentary record first, then the others, the most certain first; %d are undecided (the grid shows them all).",
		len(pairs), len(items), len(v.Sentences), fixed(precDecisive, 2), undecided)
	if len(v.Sentences) > precInSight {
		v.More = v.Sentences[precInSight:]
		v.Sentences = v.Sentences[:precInSight]
	}
	g := views.Table{ID: "order", Caption: "Every pair: P(the row's item came before the column's)"}
	g.Columns = []views.Column{{Label: "Item"}}
	for k, it := range items {
		g.Columns = append(g.Columns, views.Column{Label: strconv.Itoa(k + 1), Num: true, Title: it.Short})
	}
	for i, it := range items {
		row := []views.Cell{{Text: strconv.Itoa(i+1) + " · " + it.Short, Title: it.Code}}
		for k := range items {
			if i == k {
				row = append(row, views.Cell{Text: "", Class: "shade-none"})
				continue
			}
			p := stats.Probability{P: o.P[i][k], SE: o.SE[i][k]}
			row = append(row, views.Cell{Text: strings.SplitN(probText(p, n), " ± ", 2)[0], Num: true, Class: "shade-" + strconv.Itoa(precShade(p.P)),
				Title: fmt.Sprintf("%s before %s: %s", upperFirst(it.Words), items[k].Words, pWords(p, n))})
		}
		g.Rows = append(g.Rows, row)
	}
	v.Grid = g
	for _, s := range []int{0, 2, 5, 8, 10} {
		v.Legend = append(v.Legend, views.LegendStep{Class: "shade-" + strconv.Itoa(s), Label: fixed(float64(s)/10, 1)})
	}
	v.LegendNote = "Shade: the probability that the row's item came before the column's, from white (0) to the darkest (1); hover a cell for it ± its Monte Carlo standard error. The shades are what this model gives — the density's pulses, the age models and the choices above — not the data alone: other choices give other shades (see the sensitivity in the table)."
	v.Notes = []string{"Each pair is drawn at the chosen level, so shared components cancel. A pulse's onset always comes before its own end, so that pair is not said. Other items can be chosen by their codes in the address (the Help page on addresses lists them); the workbook's sheet “Which came first” and the JSON list every pair with its standard error."}
	return v
}

// precInSight is how many sentences are shown before the rest are folded.
const precInSight = 12

// precedenceColumnDefs are the columns of the workbook's sheet "Which came first" and of the JSON's
// pairs: every pair once, in its likelier order.
var precedenceColumnDefs = []downloadColumn{
	{"earlier", "", "The item that more likely came first, in words: a pulse's onset or end by the pulse's age, a unit's mean age by the unit's name, an event by its name, section and the point compared."},
	{"earlier_code", "", "Its code in the comparison's address (order=): a pulse edge as P and the pulse's age (P155.4 its onset, P155.4.end its end), a unit as U and its number, an event as E and its number (A for a detected anomaly, G: for a correlated group)."},
	{"later", "", "The item that more likely came after it, in words."},
	{"later_code", "", "Its code."},
	{"p_earlier_first", "probability", "P(the earlier item is older than the later one), the share of joint draws in which it is. Written to the decimals its Monte Carlo SE supports (the SE to 2 significant digits)."},
	{"p_earlier_first_se", "probability", "Monte Carlo standard error of p_earlier_first, from the effective number of independent draws."},
	{"p_earlier_first_bound", "", "For a probability of exactly 1: the bound it stands for, >1−3/N (as the page writes it); empty otherwise."},
	{"p_later_first", "probability", "P(the later item is older): 1 − p_earlier_first, unless the two can be equal in a draw (ages sampled from the same draws). Decimals as p_earlier_first."},
	{"decisive", "", fmt.Sprintf("yes when p_earlier_first ≥ %s: the page says this pair in a sentence.", fixed(precDecisive, 2))},
}

// precedenceRecords are the rows of the workbook's sheet and the JSON's pairs (exact: every digit).
func precedenceRecords(res *compareResult, exact bool) [][]string {
	if len(res.Order.Names) == 0 {
		return nil
	}
	items := precItems(res)
	var out [][]string
	for _, p := range precPairs(res, items) {
		cells := probCells(p.P, res.Choice.N, exact)
		rev := probCells(stats.Probability{P: p.Reverse, SE: p.P.SE}, res.Choice.N, exact)[0]
		dec := "no"
		if p.P.P >= precDecisive {
			dec = "yes"
		}
		out = append(out, []string{upperFirst(items[p.Earlier].Words), items[p.Earlier].Code, upperFirst(items[p.Later].Words), items[p.Later].Code,
			cells[0], cells[1], cells[2], rev, dec})
	}
	return out
}
