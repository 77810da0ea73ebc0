package web

import (
	"fmt"
	"io"
	"net/http"

	"github.com/go-chi/chi/v5"

	"coeval/store"
	"coeval/views"
)

func (s *Server) registerSectionRoutes(r chi.Router) {
	r.Get("/sections", s.handle(s.handleSectionList))
	r.Get("/sections/aligned", s.handle(s.handleSectionsAligned))
	r.Get("/sections/aligned/figure.svg", s.handle(s.alignedFigureAs("svg")))
	r.Get("/sections/aligned/figure.png", s.handle(s.alignedFigureAs("png")))
	r.Get("/sections/aligned/figure.pdf", s.handle(s.alignedFigureAs("pdf")))
	r.Get("/sections/{id}", s.handle(s.handleSectionShow))
	r.Get("/sections/{id}/figure.svg", s.handle(s.sectionFigureAs("svg")))
	r.Get("/sections/{id}/figure.png", s.handle(s.sectionFigureAs("png")))
	r.Get("/sections/{id}/figure.pdf", s.handle(s.sectionFigureAs("pdf")))
	r.Get("/sections/{id}/ratios", s.handle(s.handleSectionRatios))
	r.Get("/sections/{id}/anomalies", s.handle(s.handleSectionAnomalies))
	r.Get("/sections/{id}/agemodel", s.handle(s.handleSectionAgeModel))
	r.Get("/sections/{id}/measurements", s.handle(s.handleSectionMeasurements))
	r.Get("/sections/{id}/ties", s.handle(s.handleSectionTies))
	r.Get("/sections/{id}/events", s.handle(s.handleSectionEvents))
	s.registerSectionChangeRoutes(r)
}

func heightRange(sec store.Section) string {
	if sec.MinHeightM == nil || sec.MaxHeightM == nil {
		return "—"
	}
	return fixed(*sec.MinHeightM, 2) + " – " + fixed(*sec.MaxHeightM, 2)
}

func sectionTable(ss []store.Section) views.Table {
	t := views.Table{ID: "sections", Columns: []views.Column{{Label: "Section"}, {Label: "Kind"}, {Label: "Samples", Num: true},
		{Label: "Heights", Unit: "m", Num: true}, {Label: "Tie points", Num: true}, {Label: "Events", Num: true},
		{Label: "Thermal maturity"}}, Empty: "No section yet: import a sections file."}
	for _, s := range ss {
		t.Rows = append(t.Rows, []views.Cell{{Text: s.Name, URL: idURL("/sections", s.ID)}, {Text: s.Kind},
			{Text: itoa(s.NSamples), Num: true}, {Text: heightRange(s), Num: true}, {Text: itoa(s.NTies), Num: true},
			{Text: itoa(s.NEvents), Num: true}, {Text: orDash(s.ThermalMaturity)}})
	}
	return t
}

func (s *Server) handleSectionList(w http.ResponseWriter, r *http.Request) error {
	ss, err := s.store.Sections(r.Context())
	if err != nil {
		return err
	}
	return respondList(s, w, r, "sections", ss, store.WriteSectionsCSV, func() views.List {
		l := views.List{Page: s.page(r.Context(), "Sections", "Sections"), Table: sectionTable(ss)}
		addLink(r, &l.Page, "New section", "/sections/new")
		return l
	})
}

// tieTable lists tie points with ages at the chosen σ level and their review state (pending and rejected
// marked as for dates and events).
func tieTable(ts []store.TiePoint, level int, withSection bool) views.Table {
	cols := []views.Column{{Label: "Tie point"}, {Label: "Height", Unit: "m", Num: true}, {Label: "Kind"},
		{Label: "Age", Unit: fmt.Sprintf("Ma ± %dσ, or range", level), Num: true}, {Label: "Linked date"}, {Label: "Review"}, {Label: "Notes"}}
	if withSection {
		cols = append([]views.Column{{Label: "Section"}}, cols...)
	}
	t := views.Table{ID: "ties", Columns: cols, Empty: "No tie points."}
	for _, tp := range ts {
		age := "—"
		switch {
		case tp.Distribution == "normal" && tp.AgeMa != nil && tp.SigmaMa != nil:
			a, s := ageSigma(*tp.AgeMa, *tp.SigmaMa, level)
			age = a + " ± " + s
		case tp.AgeMinMa != nil && tp.AgeMaxMa != nil:
			age = num(*tp.AgeMaxMa) + " – " + num(*tp.AgeMinMa) + " (uniform)"
		}
		linked := views.Cell{Text: "—"}
		if tp.DateID != nil {
			linked = views.Cell{Text: tp.DateSampleCode + " (" + methodLabel(tp.DateMethod) + ")", URL: idURL("/dates", *tp.DateID)}
		}
		review := views.Cell{Text: store.Label(store.ReviewStates(), tp.ReviewState)}
		if tp.ReviewState != "accepted" {
			review.Class = "pending"
			if tp.ReviewNote != "" {
				review.Title = tp.ReviewNote
			}
		}
		row := []views.Cell{{Text: tp.Label, URL: idURL("/ties", tp.ID)}, {Text: num(tp.HeightM), Num: true}, {Text: store.Label(store.TieKinds(), tp.Kind)},
			{Text: age, Num: true}, linked, review, {Text: orDash(tp.Notes)}}
		if withSection {
			row = append([]views.Cell{{Text: tp.Section, URL: idURL("/sections", tp.SectionID)}}, row...)
		}
		t.Rows = append(t.Rows, row)
	}
	return t
}

// eventTable lists events of the sedimentary record.
func eventTable(es []store.Event, withSection bool) views.Table {
	cols := []views.Column{{Label: "Event"}, {Label: "Kind"}, {Label: "Base", Unit: "m", Num: true}, {Label: "Top", Unit: "m", Num: true},
		{Label: "Found"}, {Label: "Review"}, {Label: "Notes"}}
	if withSection {
		cols = append([]views.Column{{Label: "Section"}}, cols...)
	}
	t := views.Table{ID: "events", Columns: cols, Empty: "No events."}
	for _, e := range es {
		top := "horizon"
		if e.TopHeightM != nil {
			top = num(*e.TopHeightM)
		}
		review := views.Cell{Text: store.Label(store.ReviewStates(), e.ReviewState)}
		if e.ReviewState != "accepted" {
			review.Class = "pending"
		}
		row := []views.Cell{{Text: e.Name, URL: idURL("/events", e.ID)}, {Text: store.Label(store.EventKinds(), e.Kind)}, {Text: optNum(e.BaseHeightM), Num: true},
			{Text: top, Num: true}, {Text: e.Origin}, review, {Text: orDash(e.Notes)}}
		if withSection {
			sec := views.Cell{Text: orDash(e.Section)}
			if e.SectionID != nil {
				sec.URL = idURL("/sections", *e.SectionID)
			}
			row = append([]views.Cell{sec}, row...)
		}
		t.Rows = append(t.Rows, row)
	}
	return t
}

// measurementTable lists the samples of a section in wide form, one column per proxy with its unit.
func measurementTable(samples []store.Sample, proxies []string, known []store.Proxy) views.Table {
	names := map[string]store.Proxy{}
	for _, p := range known {
		names[p.Code] = p
	}
	cols := []views.Column{{Label: "Sample"}, {Label: "Height", Unit: "m", Num: true}}
	for _, p := range proxies {
		cols = append(cols, views.Column{Label: names[p].Name, Unit: names[p].Unit, Num: true, Title: names[p].Description})
	}
	t := views.Table{ID: "measurements", Caption: fmt.Sprintf("Samples (%d), lowest first", len(samples)), Columns: cols, Empty: "No measurements."}
	// Each column at one number of decimals (the most any of its values was given with), so digits align.
	dec := map[string]int{}
	hdec := 0
	for _, s := range samples {
		hdec = max(hdec, decimals(s.HeightM))
		for p, m := range s.Values {
			if m.Value != nil {
				dec[p] = max(dec[p], decimals(*m.Value))
			}
		}
	}
	for _, s := range samples {
		row := []views.Cell{{Text: s.Sample}, {Text: fixed(s.HeightM, hdec), Num: true}}
		for _, p := range proxies {
			m, ok := s.Values[p]
			switch {
			case !ok:
				row = append(row, views.Cell{Text: "", Num: true})
			case m.BelowDetection:
				txt, title := "<DL", "below detection"
				if m.DetectionLimit != nil {
					txt = "<" + num(*m.DetectionLimit)
					title = "below the detection limit of " + num(*m.DetectionLimit) + " " + names[p].Unit
				}
				row = append(row, views.Cell{Text: txt, Num: true, Class: "muted", Title: title})
			default:
				c := views.Cell{Text: optFixed(m.Value, dec[p]), Num: true}
				if m.Sigma != nil {
					c.Title = "± " + num(*m.Sigma) + " " + names[p].Unit + " (1σ)"
				}
				if m.Method != "" {
					c.Title += " · " + m.Method
				}
				row = append(row, c)
			}
		}
		t.Rows = append(t.Rows, row)
	}
	t.Notes = []string{"Values as measured, in each proxy's canonical unit (Hg in ppb = ng/g; TOC, TS, Al in wt%). Hover a value for its 1σ uncertainty and method; \"<\" marks a value below the detection limit, kept as such and never as a number."}
	return t
}

func (s *Server) sectionAndFormat(r *http.Request) (store.Section, string, int, error) {
	id, err := pathID(r, "id")
	if err != nil {
		return store.Section{}, "", 0, err
	}
	p := newParams(r)
	format := p.format()
	level := p.sigmaLevel()
	if err := p.err(); err != nil {
		return store.Section{}, "", 0, err
	}
	sec, err := s.store.Section(r.Context(), id)
	return sec, format, level, err
}

func optDeg(v *float64) string {
	if v == nil {
		return "—"
	}
	return num(*v) + "°"
}

func (s *Server) handleSectionMeasurements(w http.ResponseWriter, r *http.Request) error {
	ctx := r.Context()
	sec, format, _, err := s.sectionAndFormat(r)
	if err != nil {
		return err
	}
	samples, proxies, err := s.store.Samples(ctx, sec.ID)
	if err != nil {
		return err
	}
	switch format {
	case "csv":
		return writeDownload(w, fmt.Sprintf("section-%d-measurements.csv", sec.ID), func(w io.Writer) error { return store.WriteSamplesCSV(w, samples, proxies) })
	case "json":
		return writeList(w, "samples", len(samples), 0, len(samples), samples)
	}
	known, err := s.store.Proxies(ctx)
	if err != nil {
		return err
	}
	l := views.List{Page: s.page(ctx, "Measurements · "+sec.Name, "Sections"), Table: measurementTable(samples, proxies, known)}
	l.Page.Crumbs = []views.Link{{Label: "Sections", URL: "/sections"}, {Label: sec.Name, URL: idURL("/sections", sec.ID)}}
	l.Page.Downloads = toLinks(downloads(r))
	s.render(w, r, http.StatusOK, views.ListPage(l))
	return nil
}

func (s *Server) handleSectionTies(w http.ResponseWriter, r *http.Request) error {
	ctx := r.Context()
	sec, format, level, err := s.sectionAndFormat(r)
	if err != nil {
		return err
	}
	ties, err := s.store.TiePoints(ctx, sec.ID)
	if err != nil {
		return err
	}
	return s.respondTies(w, r, ties, format, level, "Tie points · "+sec.Name, fmt.Sprintf("section-%d-ties.csv", sec.ID), false)
}

func (s *Server) handleTieList(w http.ResponseWriter, r *http.Request) error {
	p := newParams(r)
	format := p.format()
	level := p.sigmaLevel()
	if err := p.err(); err != nil {
		return err
	}
	ties, err := s.store.TiePoints(r.Context(), 0)
	if err != nil {
		return err
	}
	return s.respondTies(w, r, ties, format, level, "Tie points", "ties.csv", true)
}

func (s *Server) respondTies(w http.ResponseWriter, r *http.Request, ties []store.TiePoint, format string, level int, title, file string, all bool) error {
	switch format {
	case "csv":
		if all {
			return writeDownload(w, file, func(w io.Writer) error { return writeAllTiesCSV(w, ties) })
		}
		return writeDownload(w, file, func(w io.Writer) error { return store.WriteTiesCSV(w, ties) })
	case "json":
		return writeList(w, "tie_points", len(ties), 0, len(ties), ties)
	}
	l := views.List{Page: s.page(r.Context(), title, "Tie points"), Table: tieTable(ties, level, all)}
	l.Page.Downloads = toLinks(downloads(r))
	l.Intro = "Dated horizons of the sections. Normal ties give age ± σ at the level chosen here; uniform ties give the interval they are confined to."
	l.Form = &views.Form{Action: r.URL.Path, Fields: []views.Field{{Name: "sigma", Label: "σ level of the ±", Kind: "select", Options: []views.Option{
		{Value: "1", Label: "1σ", Selected: level == 1}, {Value: "2", Label: "2σ", Selected: level == 2}}}}}
	s.render(w, r, http.StatusOK, views.ListPage(l))
	return nil
}

// writeAllTiesCSV writes the ties of every section: the ties format with the section in front.
func writeAllTiesCSV(w io.Writer, ties []store.TiePoint) error {
	return store.WriteWithSection(w, ties, func(t store.TiePoint) string { return t.Section }, store.WriteTiesCSV)
}

func (s *Server) handleSectionEvents(w http.ResponseWriter, r *http.Request) error {
	ctx := r.Context()
	sec, format, _, err := s.sectionAndFormat(r)
	if err != nil {
		return err
	}
	events, err := s.store.Events(ctx, sec.ID)
	if err != nil {
		return err
	}
	return s.respondEvents(w, r, events, format, "Events · "+sec.Name, fmt.Sprintf("section-%d-events.csv", sec.ID), false)
}

func (s *Server) handleEventList(w http.ResponseWriter, r *http.Request) error {
	p := newParams(r)
	format := p.format()
	if err := p.err(); err != nil {
		return err
	}
	events, err := s.store.Events(r.Context(), 0)
	if err != nil {
		return err
	}
	return s.respondEvents(w, r, events, format, "Events", "events.csv", true)
}

func (s *Server) respondEvents(w http.ResponseWriter, r *http.Request, events []store.Event, format, title, file string, all bool) error {
	switch format {
	case "csv":
		if all {
			return writeDownload(w, file, func(w io.Writer) error {
				return store.WriteWithSection(w, events, func(e store.Event) string { return e.Section }, store.WriteEventsCSV)
			})
		}
		return writeDownload(w, file, func(w io.Writer) error { return store.WriteEventsCSV(w, events) })
	case "json":
		return writeList(w, "events", len(events), 0, len(events), events)
	}
	l := views.List{Page: s.page(r.Context(), title, "Events"), Table: eventTable(events, all)}
	l.Page.Downloads = toLinks(downloads(r))
	l.Intro = "Events of the sedimentary record by height in their sections. Their ages come from each section's age model."
	switch {
	case all && len(events) <= maxListedAnswers:
		// Answering computes: wait for a computing slot as a computing page does (the list of many
		// events, and its downloads, compute nothing and take none).
		release, ok := s.takeSlot(w, r)
		if !ok {
			return nil // answered: busy, or the client left
		}
		defer release()
		if err := s.addAnswers(r, &l.Table, events); err != nil {
			return err
		}
		l.Intro += " Each accepted event's age and the pulse it most likely belongs to are the answers of its own page (the comparison with its default choices); follow an event for the ranked pulses."
	case all:
		l.Intro += fmt.Sprintf(" With %d events, their ages and most likely pulses are not computed for the whole list at once: each event's page gives its own.", len(events))
	}
	s.render(w, r, http.StatusOK, views.ListPage(l))
	return nil
}
