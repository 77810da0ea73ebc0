package web

import (
	"errors"
	"fmt"
	"io"
	"net/http"
	"strconv"

	"github.com/go-chi/chi/v5"

	"coeval/store"
	"coeval/views"
)

func (s *Server) registerDateRoutes(r chi.Router) {
	r.Get("/dates", s.handle(s.handleDateList))
	r.Get("/dates/{id}", s.handle(s.handleDateShow))
}

func methodLabel(code string) string {
	if m, ok := store.MethodByCode(code); ok {
		return m.Label
	}
	return code
}

// calibrationNote says which calibration an ⁴⁰Ar/³⁹Ar age was published against.
func calibrationNote(d store.Date) (string, bool) {
	if !store.IsArAr(d.Method) {
		return "", true
	}
	if d.MonitorAgeMa == nil || d.LambdaPerA == nil {
		return "published without monitor age or decay constant: cannot be recalculated to another calibration", false
	}
	mon := orDash(d.Monitor)
	return fmt.Sprintf("published against %s = %s Ma, λ = %s", mon, num(*d.MonitorAgeMa), lambda(*d.LambdaPerA)), true
}

// owner is what a date dates: a unit or a horizon of a section.
func owner(d store.Date) (string, string) {
	if d.UnitID != nil {
		return d.Unit, idURL("/units", *d.UnitID)
	}
	if d.SectionID != nil {
		h := ""
		if d.HeightM != nil {
			h = " at " + num(*d.HeightM) + " m"
		}
		return d.Section + h, idURL("/sections", *d.SectionID)
	}
	return "—", ""
}

// dateTable lists dates with ages as published and, for ⁴⁰Ar/³⁹Ar, recalculated to the view's
// calibration, side by side, with ± at the chosen σ level. sortable makes the headers sort links.
func dateTable(r *http.Request, ds []store.Date, level int, sortable bool, cal calChoice) views.Table {
	sigmaLabel := fmt.Sprintf("± %dσ", level)
	cols := []views.Column{{Label: "Sample"}, {Label: "Unit or horizon"}, {Label: "Method"}, {Label: "Material"},
		{Label: "Age", Unit: "Ma, as published", Num: true}, {Label: sigmaLabel, Unit: "Ma, analytical", Num: true,
			Title: "Analytical uncertainty (U–Pb: X) at the σ level chosen for this view"},
		{Label: "⁴⁰Ar/³⁹Ar age recalculated", Unit: "Ma, on " + cal.Cal.Name, Num: true,
			Title: "⁴⁰Ar/³⁹Ar ages moved to this calibration by the exact relation (sample/monitor ratio kept)"},
		{Label: sigmaLabel, Unit: "Ma, analytical, recalculated", Num: true,
			Title: "Analytical uncertainty of the recalculated age; without the monitor-age and decay-constant terms"},
		{Label: "Interpretation"}, {Label: "Laboratory"}, {Label: "Review"}}
	if sortable {
		keys := []string{"sample", "unit", "method", "material", "age", "sigma", "", "", "", "lab", ""}
		cur := r.URL.Query().Get("sort")
		if cur == "" {
			cur = "-age"
		}
		for i, k := range keys {
			if k == "" {
				continue
			}
			next, mark := k, ""
			switch cur {
			case k:
				next, mark = "-"+k, "asc"
			case "-" + k:
				mark = "desc"
			}
			cols[i].SortURL = withQuery(r, "sort", next, "page", "", "after", "", "before", "")
			cols[i].Sorted = mark
		}
	}
	t := views.Table{ID: "dates", Columns: cols, Empty: "No date matches."}
	anyArAr := false
	for _, d := range ds {
		age, sigma := ageSigma(d.AgeMa, d.SigmaMa, level)
		own, ownURL := owner(d)
		note, ok := calibrationNote(d)
		ageCell := views.Cell{Text: age, Num: true, Title: note}
		if store.IsArAr(d.Method) {
			anyArAr = true
			ageCell.Text += " †"
			if !ok {
				ageCell.Class = "caution"
				ageCell.Text = age + " ‡"
			}
		}
		review := views.Cell{Text: store.Label(store.ReviewStates(), d.ReviewState)}
		if d.ReviewState != store.ReviewAccepted {
			review.Class = "pending"
		}
		recAge, recSigma := recalcCells(d, cal, level)
		t.Rows = append(t.Rows, []views.Cell{{Text: d.SampleCode, URL: idURL("/dates", d.ID)}, {Text: own, URL: ownURL},
			{Text: methodLabel(d.Method)}, {Text: orDash(d.Material)}, ageCell, {Text: sigma, Num: true}, recAge, recSigma,
			{Text: store.Label(store.Interpretations(), d.Interpretation)}, {Text: orDash(d.Laboratory)}, review})
	}
	t.Notes = append(t.Notes, fmt.Sprintf("Ages are as published. ± is the analytical uncertainty at %dσ (for U–Pb: X, without tracer or decay-constant terms); use it to compare dates of one system and one laboratory only.", level))
	if anyArAr {
		t.Notes = append(t.Notes, "† ⁴⁰Ar/³⁹Ar age on the calibration (monitor age, decay constant) its authors used: not directly comparable with U–Pb or with ⁴⁰Ar/³⁹Ar ages on another calibration. ‡ published without calibration details: cannot be recalculated. Hover an age for its calibration.",
			"Recalculated to "+cal.label()+": the exact relation that keeps the sample/monitor ratio (never linear scaling). Its ± is analytical; compare it with another system only at the full external level (the date's page gives it). Choose another calibration with the filters above.")
	}
	return t
}

// recalcCells gives the recalculated age and its analytical ± of one date for a table row.
func recalcCells(d store.Date, cal calChoice, level int) (views.Cell, views.Cell) {
	rc := recalculate(d, cal.Stats)
	switch {
	case !rc.Applies:
		return views.Cell{Text: "—", Num: true, Title: "not an ⁴⁰Ar/³⁹Ar date: the calibration does not apply"}, views.Cell{Text: "—", Num: true}
	case !rc.OK:
		return views.Cell{Text: "not recalculable", Class: "caution", Title: rc.Reason}, views.Cell{Text: "—", Num: true}
	}
	a, sg := ageSigma(rc.AgeMa, rc.AnalyticalSigmaMa, level)
	return views.Cell{Text: a, Num: true, Title: "on " + cal.Cal.Name}, views.Cell{Text: sg, Num: true}
}

func (s *Server) handleDateList(w http.ResponseWriter, r *http.Request) error {
	ctx := r.Context()
	p := newParams(r)
	format := p.format()
	level := p.sigmaLevel()
	cal, err := s.calibration(ctx, p)
	if err != nil {
		return err
	}
	var methods []string
	for _, m := range store.Methods() {
		methods = append(methods, m.Code)
	}
	f := store.DateFilter{
		ProvinceID:  p.id("province"),
		UnitID:      p.id("unit"),
		SectionID:   p.id("section"),
		Method:      p.oneOf("method", methods, ""),
		Material:    p.str("material"),
		MinAgeMa:    p.optFloat("age_min", "an age in Ma"),
		MaxAgeMa:    p.optFloat("age_max", "an age in Ma"),
		Text:        p.str("q"),
		ReviewState: store.ReviewState(p.oneOf("review", []string{string(store.ReviewPending), string(store.ReviewAccepted), string(store.ReviewRejected)}, "")),
		Sort:        p.oneOf("sort", sortChoices(store.DateSortKeys()), "-age"),
	}
	per := p.int("per", 50, 1, 1000)
	page := p.int("page", 1, 1, 1_000_000)
	if f.MinAgeMa != nil && f.MaxAgeMa != nil && *f.MinAgeMa > *f.MaxAgeMa {
		p.problems = append(p.problems, "age_min is older than age_max: the window is empty (ages in Ma, older = larger)")
	}
	if err := p.err(); err != nil {
		return err
	}
	if format == "csv" { // every matching date, streamed
		return writeDatesCSVStream(ctx, s.store, w, f, cal)
	}
	// Pages go by keyset (after= and before= carry the position of the last or first date shown), so a
	// page deep in the list costs what the first does; page= (rows skipped) still works for old links.
	f.Limit, f.Offset, f.After, f.Before = per, (page-1)*per, p.str("after"), p.str("before")
	pg, err := s.store.DatesPage(ctx, f)
	if errors.Is(err, store.ErrBadCursor) {
		return badRequest{problems: []string{"after/before: not a page position this list gave (the list may have been sorted otherwise since); start again from the first page"}}
	}
	if err != nil {
		return err
	}
	ds, total := pg.Dates, pg.Total
	if format == "json" {
		return writeList(w, "dates", total, pg.First, len(ds), datesJSON(ds, cal))
	}
	form, err := s.dateFilterForm(r, f, level, per, cal)
	if err != nil {
		return err
	}
	l := views.List{Page: s.page(ctx, "Dates", "Dates"), Form: form, Table: dateTable(r, ds, level, true, cal)}
	l.Page.Downloads = toLinks(downloads(r))
	l.Intro = "Every date of the compilation, filtered, sorted and paged here; the address keeps every choice, so a view can be bookmarked or shared. The CSV download holds every matching date in the import format (its columns are described on the help page of the dates file), followed by the ⁴⁰Ar/³⁹Ar age recalculated to the view's calibration, which an import ignores."
	l.Pager = keysetPager(r, pg)
	s.render(w, r, http.StatusOK, views.ListPage(l))
	return nil
}

func sortChoices(keys []string) []string {
	out := make([]string, 0, 2*len(keys))
	for _, k := range keys {
		out = append(out, k, "-"+k)
	}
	return out
}

// keysetPager links the pages before and after pg by their cursors.
func keysetPager(r *http.Request, pg store.DatePage) *views.Pager {
	out := &views.Pager{Summary: fmt.Sprintf("%d–%d of %d", pg.First+1, pg.First+len(pg.Dates), pg.Total)}
	if len(pg.Dates) == 0 {
		out.Summary = fmt.Sprintf("none of %d", pg.Total)
	}
	if pg.Prev != "" {
		out.Prev = withQuery(r, "before", pg.Prev, "after", "", "page", "")
	}
	if pg.Next != "" {
		out.Next = withQuery(r, "after", pg.Next, "before", "", "page", "")
	}
	return out
}

func pagerFor(r *http.Request, total, page, per, shown int) *views.Pager {
	first := (page-1)*per + 1
	pg := &views.Pager{Summary: fmt.Sprintf("%d–%d of %d", first, first+shown-1, total)}
	if shown == 0 {
		pg.Summary = fmt.Sprintf("none of %d", total)
	}
	if page > 1 {
		pg.Prev = withQuery(r, "page", strconv.Itoa(page-1))
	}
	if page*per < total {
		pg.Next = withQuery(r, "page", strconv.Itoa(page+1))
	}
	return pg
}

func (s *Server) dateFilterForm(r *http.Request, f store.DateFilter, level, per int, cal calChoice) (*views.Form, error) {
	ctx := r.Context()
	// Names only: the lists of provinces, units and sections count their dates and samples, reading every date.
	choices, err := s.store.DateFilterChoices(ctx, f.ProvinceID)
	if err != nil {
		return nil, err
	}
	provinces, units, sections, materials := choices.Provinces, choices.Units, choices.Sections, choices.Materials
	idOpt := func(id, cur int64, label string) views.Option {
		return views.Option{Value: strconv.FormatInt(id, 10), Label: label, Selected: id == cur}
	}
	prov := []views.Option{{Value: "", Label: "all"}}
	for _, p := range provinces {
		prov = append(prov, idOpt(p.ID, f.ProvinceID, p.Name))
	}
	unit := []views.Option{{Value: "", Label: "all"}}
	for _, u := range units {
		unit = append(unit, idOpt(u.ID, f.UnitID, u.Name))
	}
	sec := []views.Option{{Value: "", Label: "all"}}
	for _, s := range sections {
		sec = append(sec, idOpt(s.ID, f.SectionID, s.Name))
	}
	meth := []views.Option{{Value: "", Label: "all"}}
	for _, m := range store.Methods() {
		meth = append(meth, views.Option{Value: m.Code, Label: m.Label, Selected: m.Code == f.Method})
	}
	mat := []views.Option{{Value: "", Label: "all"}}
	for _, m := range materials {
		mat = append(mat, views.Option{Value: m, Label: m, Selected: m == f.Material})
	}
	rev := []views.Option{{Value: "", Label: "all"}}
	for _, t := range store.ReviewStates() {
		rev = append(rev, views.Option{Value: t.Code, Label: t.Label, Selected: t.Code == string(f.ReviewState)})
	}
	sig := []views.Option{{Value: "1", Label: "1σ", Selected: level == 1}, {Value: "2", Label: "2σ", Selected: level == 2}}
	return &views.Form{Action: "/dates", Reset: "/dates", Fields: []views.Field{
		{Name: "province", Label: "Province", Kind: "select", Options: prov},
		{Name: "unit", Label: "Unit", Kind: "select", Options: unit},
		{Name: "section", Label: "Section (horizon dates)", Kind: "select", Options: sec},
		{Name: "method", Label: "Method", Kind: "select", Options: meth},
		{Name: "material", Label: "Material", Kind: "select", Options: mat},
		{Name: "age_min", Label: "Younger limit (Ma)", Kind: "number", Value: optNumEmpty(f.MinAgeMa), Step: "any", Placeholder: "e.g. 154"},
		{Name: "age_max", Label: "Older limit (Ma)", Kind: "number", Value: optNumEmpty(f.MaxAgeMa), Step: "any", Placeholder: "e.g. 156"},
		{Name: "q", Label: "Text", Kind: "text", Value: f.Text, Placeholder: "sample, lab, citation, DOI…"},
		{Name: "review", Label: "Review", Kind: "select", Options: rev},
		{Name: "sigma", Label: "Show ± at", Kind: "select", Options: sig},
		calibrationField(cal),
		{Name: "per", Label: "Per page", Kind: "number", Value: strconv.Itoa(per), Step: "1"},
	}}, nil
}

func optNumEmpty(v *float64) string {
	if v == nil {
		return ""
	}
	return num(*v)
}

func (s *Server) handleDateShow(w http.ResponseWriter, r *http.Request) error {
	ctx := r.Context()
	id, err := pathID(r, "id")
	if err != nil {
		return err
	}
	p := newParams(r)
	format := p.format()
	level := p.sigmaLevel()
	cal, err := s.calibration(ctx, p)
	if err != nil {
		return err
	}
	if err := p.err(); err != nil {
		return err
	}
	d, err := s.store.Date(ctx, id)
	if err != nil {
		return err
	}
	switch format {
	case "csv":
		return writeDownload(w, fmt.Sprintf("date-%d.csv", id), func(w io.Writer) error { return writeDatesCSV(w, []store.Date{d}, cal) })
	case "json":
		writeJSON(w, http.StatusOK, map[string]any{"date": datesJSON([]store.Date{d}, cal)[0], "uncertainties": jsonSigmaNote})
		return nil
	}
	revs, err := s.store.RevisionCount(ctx, "date", id)
	if err != nil {
		return err
	}
	v := views.Detail{Page: s.page(ctx, d.SampleCode+" · "+methodLabel(d.Method), "Dates")}
	own, ownURL := owner(d)
	v.Page.Crumbs = []views.Link{{Label: "Dates", URL: "/dates"}}
	if d.ProvinceID != nil {
		v.Page.Crumbs = append(v.Page.Crumbs, views.Link{Label: d.Province, URL: idURL("/provinces", *d.ProvinceID)})
	}
	v.Page.Crumbs = append(v.Page.Crumbs, views.Link{Label: own, URL: ownURL})
	v.Page.Downloads = toLinks(downloads(r))
	other := 3 - level
	v.Links = []views.Link{{Label: fmt.Sprintf("Show uncertainties at %dσ", other), URL: withQuery(r, "sigma", strconv.Itoa(other))}}
	v.Groups = append(v.Groups, dateAgeGroup(d, level))
	if store.IsArAr(d.Method) || d.Method == "kar" {
		note, ok := calibrationNote(d)
		cls := ""
		if !ok {
			cls = "caution"
		}
		v.Groups = append(v.Groups, views.FieldGroup{Title: "Calibration as published", Fields: []views.KV{
			{Label: "Fluence monitor", Value: orDash(d.Monitor)},
			{Label: "Monitor age", Value: optNum(d.MonitorAgeMa) + " Ma"},
			{Label: "Total ⁴⁰K decay constant", Value: optLambda(d.LambdaPerA)},
			{Label: "Comparability", Value: note, Class: cls},
		}})
	}
	if store.IsArAr(d.Method) {
		v.Groups = append(v.Groups, recalcGroup(d, cal, level))
		for _, c := range cal.All {
			if c.Code != cal.Cal.Code {
				v.Links = append(v.Links, views.Link{Label: "Recalculate to " + c.Name, URL: withQuery(r, "cal", c.Code)})
			}
		}
	}
	v.Groups = append(v.Groups, dateSourceGroups(d, own, ownURL)...)
	review := reviewField(d.ReviewState)
	v.Groups = append(v.Groups, views.FieldGroup{Title: "Record", Fields: append(append([]views.KV{review},
		recordFields(d.ID, d.Version, d.CreatedAt, d.UpdatedAt)...), views.KV{Label: "Revisions recorded", Value: itoa(revs)})})
	links, acts := recordPage(r, s.dateEdit(), d.ID, stored{version: d.Version, review: d.ReviewState})
	v.Links, v.Actions = append(v.Links, links...), acts
	if d.ReviewNote != "" {
		v.Notes = append(v.Notes, "Review note: "+d.ReviewNote)
	}
	s.render(w, r, http.StatusOK, views.DetailPage(v))
	return nil
}

func optLambda(v *float64) string {
	if v == nil {
		return "—"
	}
	return lambda(*v)
}

// dateAgeGroup is a date's age as published, its uncertainties at the page's σ level and its
// interpretation.
func dateAgeGroup(d store.Date, level int) views.FieldGroup {
	sig := func(x *float64) string {
		if x == nil {
			return "not published"
		}
		// All components at the decimals of the analytical σ, so X, Y and Z line up and keep their digits.
		dec := sigmaDecimals(d.SigmaMa * float64(level))
		return fixed(*x*float64(level), dec) + fmt.Sprintf(" Ma (%dσ)", level)
	}
	ageField := views.KV{Label: "Age as published", Value: plusMinus(d.AgeMa, d.SigmaMa, level) + " Ma, analytical"}
	if level == d.SigmaLevel {
		// At the level it was published at, the age and its ± keep the digits they were entered with.
		ageField.Value = fmt.Sprintf("%s ± %s (%dσ) Ma, analytical", asEntered(d.AgeMa), asEntered(d.SigmaMa*float64(level)), level)
	}
	ageGroup := views.FieldGroup{Title: "Age", Fields: []views.KV{ageField,
		{Label: "Analytical σ", Value: sig(&d.SigmaMa)},
	}}
	if m, _ := store.MethodByCode(d.Method); m.DecaySystem == store.SystemUPb {
		ageGroup.Fields = append(ageGroup.Fields, views.KV{Label: "± with tracer (Y)", Value: sig(d.SigmaYMa)},
			views.KV{Label: "± with tracer and decay constant (Z)", Value: sig(d.SigmaZMa)},
			views.KV{Label: "Tracer", Value: orDash(d.Tracer)})
	} else {
		ageGroup.Fields = append(ageGroup.Fields, views.KV{Label: "± full external", Value: sig(d.SigmaZMa)})
	}
	ageGroup.Fields = append(ageGroup.Fields,
		views.KV{Label: "σ level published", Value: fmt.Sprintf("%dσ", d.SigmaLevel)},
		views.KV{Label: "Interpretation", Value: store.Label(store.Interpretations(), d.Interpretation)})
	return ageGroup
}

// dateSourceGroups are a date's sample and its source.
func dateSourceGroups(d store.Date, own, ownURL string) []views.FieldGroup {
	sample := views.FieldGroup{Title: "Sample", Fields: []views.KV{
		{Label: "Sample code", Value: d.SampleCode},
		{Label: "Unit or horizon", Value: own, URL: ownURL},
		{Label: "Method", Value: methodLabel(d.Method)},
		{Label: "Material", Value: orDash(d.Material)},
		{Label: "Location", Value: coord(d.Latitude, d.Longitude)},
	}}
	source := views.FieldGroup{Title: "Source", Fields: []views.KV{
		{Label: "Laboratory", Value: orDash(d.Laboratory)},
		{Label: "Citation", Value: orDash(d.Citation)},
	}}
	if d.DOI != "" {
		source.Fields = append(source.Fields, views.KV{Label: "DOI", Value: d.DOI, URL: "https://doi.org/" + d.DOI})
	} else {
		source.Fields = append(source.Fields, views.KV{Label: "DOI", Value: "—"})
	}
	source.Fields = append(source.Fields, views.KV{Label: "Notes", Value: orDash(d.Notes)})
	return []views.FieldGroup{sample, source}
}
