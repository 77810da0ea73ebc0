package web

import (
	"bytes"
	"cmp"
	_ "embed"
	"encoding/csv"
	"fmt"
	"io"
	"net/http"
	"slices"
	"strconv"
	"strings"
	"sync"
	"unicode"

	"coeval/store"
	"coeval/views"
)

// The built-in reference timescale: the ICS chart v2024/12 embedded unchanged (web/data/README.md).

//go:embed data/ics-chart-2024-12.csv
var icsChartCSV []byte

const (
	// timescaleVersion names the embedded chart; every page and figure that uses it says so.
	timescaleVersion = "ICS International Chronostratigraphic Chart v2024/12"
	// timescaleCredit is the attribution the chart's CC BY 4.0 licence requires.
	timescaleCredit = "International Commission on Stratigraphy, International Chronostratigraphic Chart v2024/12 (CC BY 4.0); values of the Geologic Time Scale 2020 (Gradstein, Ogg, Schmitz & Ogg, eds., Elsevier, 2020)."
)

// chronoUnit is one unit of the chart. Ages in Ma; ± as the chart gives them (nil where it gives none).
type chronoUnit struct {
	ID        string   `json:"id"`
	Name      string   `json:"name"`
	Rank      string   `json:"rank"`
	Parent    string   `json:"parent_id"`
	BaseMa    float64  `json:"base_ma"`
	BasePmMa  *float64 `json:"base_pm_ma"`
	Uncertain bool     `json:"base_uncertain"`
	TopMa     float64  `json:"top_ma"`
	TopPmMa   *float64 `json:"top_pm_ma"`
	Status    string   `json:"boundary_status"` // "true" (GSSP), "gssa", "" (not ratified)
	Colour    string   `json:"colour_hex"`
}

// label is the name for people: the chart's ids run words together ("UpperJurassic").
func (u chronoUnit) label() string {
	var b strings.Builder
	for i, r := range u.Name {
		if i > 0 && unicode.IsUpper(r) {
			b.WriteByte(' ')
		}
		b.WriteRune(r)
	}
	return b.String()
}

func (u chronoUnit) statusLabel() string {
	switch u.Status {
	case "true":
		return "GSSP ratified"
	case "gssa":
		return "GSSA ratified"
	}
	return "not ratified"
}

// baseText writes the base age with its ± ("154.8 ± 0.8", "~ 4.567" style marks left to the note).
func (u chronoUnit) baseText() string {
	s := num(u.BaseMa)
	if u.BasePmMa != nil {
		s += " ± " + num(*u.BasePmMa)
	}
	if u.Uncertain {
		s = "~" + s
	}
	return s
}

// icsChart parses the embedded chart once; the values never change while the program runs.
var icsChart = sync.OnceValues(func() ([]chronoUnit, error) { return parseChart(bytes.NewReader(icsChartCSV)) })

func parseChart(r io.Reader) ([]chronoUnit, error) {
	rows, err := csv.NewReader(r).ReadAll()
	if err != nil {
		return nil, fmt.Errorf("timescale: %w", err)
	}
	if len(rows) < 2 {
		return nil, fmt.Errorf("timescale: no rows")
	}
	col := map[string]int{}
	for i, h := range rows[0] {
		col[h] = i
	}
	for _, h := range []string{"id", "name", "rank", "parent_id", "base_ma", "base_pm_ma", "base_note", "top_ma", "top_pm_ma", "boundary_status", "colour_hex"} {
		if _, ok := col[h]; !ok {
			return nil, fmt.Errorf("timescale: no column %s", h)
		}
	}
	opt := func(s string) (*float64, error) {
		if s == "" {
			return nil, nil
		}
		v, err := strconv.ParseFloat(s, 64)
		return &v, err
	}
	var out []chronoUnit
	for i, row := range rows[1:] {
		u := chronoUnit{ID: row[col["id"]], Name: row[col["name"]], Rank: row[col["rank"]], Parent: row[col["parent_id"]],
			Uncertain: row[col["base_note"]] == "uncertain", Status: row[col["boundary_status"]], Colour: row[col["colour_hex"]]}
		var err1, err2, err3, err4 error
		u.BaseMa, err1 = strconv.ParseFloat(row[col["base_ma"]], 64)
		u.TopMa, err2 = strconv.ParseFloat(row[col["top_ma"]], 64)
		u.BasePmMa, err3 = opt(row[col["base_pm_ma"]])
		u.TopPmMa, err4 = opt(row[col["top_pm_ma"]])
		for _, e := range []error{err1, err2, err3, err4} {
			if e != nil {
				return nil, fmt.Errorf("timescale: line %d: %w", i+2, e)
			}
		}
		out = append(out, u)
	}
	return out, nil
}

// chartUnit finds a unit of the chart by its id.
func chartUnit(chart []chronoUnit, id string) (chronoUnit, bool) {
	for _, u := range chart {
		if u.ID == id {
			return u, true
		}
	}
	return chronoUnit{}, false
}

// stagesIn returns the units of a rank that overlap [minMa, maxMa], as figure strips.
func stagesIn(chart []chronoUnit, rank string, minMa, maxMa float64) []views.FigureStage {
	var out []views.FigureStage
	for _, u := range chart {
		if u.Rank != rank || u.BaseMa <= minMa || u.TopMa >= maxMa {
			continue
		}
		s := views.FigureStage{Name: u.label(), BaseMa: u.BaseMa, TopMa: u.TopMa, Colour: strings.ToLower(u.Colour),
			Title: fmt.Sprintf("%s (%s): base %s Ma, %s; top %s Ma — %s", u.label(), strings.ToLower(u.Rank), u.baseText(), u.statusLabel(), num(u.TopMa), timescaleVersion)}
		if u.BasePmMa != nil {
			s.BasePmMa = *u.BasePmMa
		}
		out = append(out, s)
	}
	return out
}

var chartRanks = []string{"Supereon", "Eon", "Era", "Period", "Subperiod", "Epoch", "Age"}

func (s *Server) handleTimescale(w http.ResponseWriter, r *http.Request) error {
	p := newParams(r)
	format := p.format()
	rank := p.oneOf("rank", append([]string{"all"}, chartRanks...), "all")
	if err := p.err(); err != nil {
		return err
	}
	chart, err := icsChart()
	if err != nil {
		return err
	}
	var units []chronoUnit
	for _, u := range chart {
		if rank == "all" || u.Rank == rank {
			units = append(units, u)
		}
	}
	// Coarsest rank first; within a rank, youngest first, as the chart is read from the top.
	slices.SortStableFunc(units, func(a, b chronoUnit) int {
		if c := cmp.Compare(slices.Index(chartRanks, a.Rank), slices.Index(chartRanks, b.Rank)); c != 0 {
			return c
		}
		return cmp.Compare(a.TopMa, b.TopMa)
	})
	switch format {
	case "csv":
		return writeDownload(w, "ics-chart-2024-12.csv", func(w io.Writer) error {
			cw := store.NewCSVWriter(w)
			cw.Write([]string{"id", "name", "rank", "parent_id", "base_ma", "base_pm_ma", "base_note", "top_ma", "top_pm_ma", "boundary_status", "colour_hex"})
			for _, u := range units {
				note := ""
				if u.Uncertain {
					note = "uncertain"
				}
				cw.Write([]string{u.ID, u.Name, u.Rank, u.Parent, num(u.BaseMa), optNumEmpty(u.BasePmMa), note, num(u.TopMa), optNumEmpty(u.TopPmMa), u.Status, u.Colour})
			}
			cw.Flush()
			return cw.Error()
		})
	case "json":
		writeJSON(w, http.StatusOK, map[string]any{"version": timescaleVersion, "attribution": timescaleCredit,
			"uncertainties": "± as the chart gives them", "units": units})
		return nil
	}
	t := views.Table{ID: "timescale", Caption: fmt.Sprintf("%s: %d units, coarsest rank first, youngest first within each rank", timescaleVersion, len(units)),
		Columns: []views.Column{{Label: "Unit"}, {Label: "Rank"}, {Label: "Within"}, {Label: "Base", Unit: "Ma ± (as the chart gives it)", Num: true},
			{Label: "Top", Unit: "Ma", Num: true}, {Label: "Base defined by", Title: "GSSP: Global Boundary Stratotype Section and Point; GSSA: Global Standard Stratigraphic Age"},
			{Label: "Colour", Title: "CGMW standard colour"}}}
	for _, u := range units {
		parent := ""
		if pu, ok := chartUnit(chart, u.Parent); ok {
			parent = pu.label()
		}
		base := views.Cell{Text: u.baseText(), Num: true}
		if u.Uncertain {
			base.Title, base.Class = "the chart marks this base age as uncertain", "caution"
		}
		t.Rows = append(t.Rows, []views.Cell{{Text: u.label()}, {Text: u.Rank}, {Text: orDash(parent)}, base,
			{Text: num(u.TopMa), Num: true}, {Text: u.statusLabel()}, {Text: u.Colour, Swatch: u.Colour}})
	}
	t.Notes = []string{"Source: " + timescaleCredit,
		"Copied unchanged from the chart's machine-readable release. ~ marks a base the chart gives as uncertain. A later chart would be added beside this one under its own version, never mixed in silently."}
	rankField := views.Field{Name: "rank", Label: "Rank", Kind: "select"}
	for _, rk := range append([]string{"all"}, chartRanks...) {
		rankField.Options = append(rankField.Options, views.Option{Value: rk, Label: rk, Selected: rk == rank})
	}
	l := views.List{Page: s.page(r.Context(), "Reference timescale", "Timescale"),
		Intro: "The built-in timescale, " + timescaleVersion + ", used for the timescale strip of the province timelines. Attribution: " + timescaleCredit,
		Form:  &views.Form{Action: "/timescale", Reset: "/timescale", Fields: []views.Field{rankField}}, Table: t}
	l.Page.Downloads = toLinks(downloads(r))
	s.render(w, r, http.StatusOK, views.ListPage(l))
	return nil
}
