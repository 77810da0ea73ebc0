package analysis

import (
	"coeval/stats"
	"coeval/store"
	"context"
	"fmt"
	"hash/fnv"
	"math"
	"math/rand/v2"
	"slices"
	"sort"
	"strconv"
	"strings"
)

// pulseInputs computes the density with the choice and returns its pulses with their edge draws, the
// density (for the figure) and the unit summaries.
func pulseInputs(d *CompareData, dc DensityOptions) ([]ComparePulse, Density, []UnitSummary, string, error) {
	sums, err := SummarizeUnits(d.Units, d.Dates, dc.Summary)
	if err != nil {
		return nil, Density{}, nil, "", err
	}
	res, err := ComputeDensity(sums, dc, DateBars(sums, dc.WindowSigmas))
	if err != nil {
		return nil, res, sums, "", err
	}
	if res.Band == nil {
		return nil, res, sums, "", nil
	}
	edges, err := stats.PulseEdgeDraws(*res.Band, stats.PulseOptions{})
	if err != nil {
		return nil, res, sums, "", err
	}
	// stats lists pulses youngest first (ascending mode); name them from the oldest.
	apply, note := edgeSystematics(sums, res, dc)
	summaries := OldestFirst(res.Pulses)
	ids := PulseNames(summaries)
	var out []ComparePulse
	for i := range edges {
		e := edges[len(edges)-1-i]
		if len(e.StartMa) == 0 || i >= len(summaries) {
			continue
		}
		id := ids[i]
		// The draws' stream is keyed by the pulse's place (the group), as before pulses were named by
		// their age, so the numbers stay digit for digit; the sensitivity gives an alternative's
		// matching pulse the stream of the pulse it matches.
		on, end := e.Quantities(id.Code, "pulse "+PulseName(i))
		cp := ComparePulse{Name: id.Code, ID: id, Edges: e, Onset: apply(on), End: apply(end), Summary: summaries[i]}
		out = append(out, cp)
	}
	return out, res, sums, note, nil
}

// edgeSystematics decides which systematic components the pulse edges carry: those of the decay system
// of the values counted in the density (all U–Pb: λ238 and, with one tracer, its calibration; all
// ⁴⁰Ar/³⁹Ar: the chosen calibration's monitor age and λ). A density that mixes systems gets the
// majority's components, with a note saying so.
func edgeSystematics(sums []UnitSummary, res Density, dc DensityOptions) (func(stats.Quantity) stats.Quantity, string) {
	count := map[string]int{}
	for _, v := range res.Values {
		count[v.System]++
	}
	major, n := "", 0
	for sys, c := range count {
		if c > n || (c == n && sys < major) {
			major, n = sys, c
		}
	}
	mixed := len(count) > 1
	tracer, rel := upbTracer(sums, dc)
	var apply func(stats.Quantity) stats.Quantity
	var note string
	switch major {
	case "U–Pb":
		apply = func(q stats.Quantity) stats.Quantity { return q.With(stats.UPbSystematics(tracer, rel)...) }
		note = "pulse edges carry the U–Pb systematic components: λ238"
		if tracer != "" {
			note += fmt.Sprintf(" and the %s tracer (%.3f %% 2σ)", tracer, 200*rel)
		}
	case "⁴⁰Ar/³⁹Ar":
		cal := dc.Summary.Calibration
		apply = func(q stats.Quantity) stats.Quantity { q.ArAr = &cal; return q }
		note = "pulse edges carry the ⁴⁰Ar/³⁹Ar calibration " + cal.Name + " " + CalDrawn(cal, "draw")
	default:
		apply = func(q stats.Quantity) stats.Quantity { return q }
		note = "pulse edges carry no systematic component (no U–Pb or ⁴⁰Ar/³⁹Ar value counted)"
	}
	if mixed {
		var parts []string
		for sys, c := range count {
			parts = append(parts, fmt.Sprintf("%d %s", c, sys))
		}
		slices.Sort(parts)
		note += fmt.Sprintf("; the density mixes systems (%s values): the edges carry the majority's components only, so against other systems the edges are slightly too narrow — compare at the full external level or count one system", strings.Join(parts, ", "))
	}
	return apply, note
}

// upbTracer returns the tracer of the U–Pb dates of the province when there is one, with its relative
// 1σ (from the dates' published X and Y, or the default).
func upbTracer(sums []UnitSummary, dc DensityOptions) (string, float64) {
	tracers := map[string]bool{}
	var rel float64
	wt := dc.Summary
	wt.Level = stats.WithTracer
	for _, us := range sums {
		for _, sys := range us.Systems {
			if sys.Key != "upb" || !sys.Computed {
				continue
			}
			for _, e := range sys.Entries {
				if e.D.Tracer != "" {
					tracers[e.D.Tracer] = true
				}
			}
			c := sys
			rel = math.Max(rel, c.TracerRelSigma(wt))
		}
	}
	if len(tracers) != 1 {
		return "", 0
	}
	for t := range tracers {
		return t, rel
	}
	return "", 0
}

// unitInputs returns the unit means of units with a volume, each with its decay system's components.
func unitInputs(sums []UnitSummary, dc DensityOptions) []CompareUnit {
	tracer, rel := upbTracer(sums, dc)
	var out []CompareUnit
	for _, us := range sums {
		u := us.Unit
		if u.VolumeKm3 == nil {
			continue
		}
		sys, ok := unitMean(us)
		if !ok {
			continue
		}
		v := stats.Volume{Km3: *u.VolumeKm3}
		if u.VolumeSigmaKm3 != nil {
			v.SigmaKm3 = *u.VolumeSigmaKm3
		}
		out = append(out, CompareUnit{ID: u.ID, Name: u.Name, Q: unitQuantity(u.Name, sys, tracer, rel, dc), Volume: v})
	}
	return out
}

// unitMean returns the mean that stands for a unit: its first computed system in the order U–Pb,
// ⁴⁰Ar/³⁹Ar, K–Ar, Re–Os, as the density counts it.
func unitMean(us UnitSummary) (*SystemSummary, bool) {
	for i := range us.Systems {
		if us.Systems[i].Computed {
			return &us.Systems[i], true
		}
	}
	return nil, false
}

// unitQuantity is a unit's weighted mean (all the dates in it, analytical σ as the policy leaves it) as a
// quantity of the engine, with its decay system's systematic components: U–Pb λ238 and the province's
// tracer, ⁴⁰Ar/³⁹Ar the chosen calibration's monitor age and λ; other systems none.
func unitQuantity(name string, sys *SystemSummary, tracer string, rel float64, dc DensityOptions) stats.Quantity {
	switch sys.Key {
	case "upb":
		return stats.UPbDate(name, sys.All.MeanMa, sys.All.Sigma1s, tracer, rel)
	case "arar":
		return stats.ArArDate(name, sys.All.MeanMa, sys.All.Sigma1s, dc.Summary.Calibration)
	}
	return stats.NormalAge(name, sys.All.MeanMa, sys.All.Sigma1s)
}

// unitRowInputs returns every unit of the province with a mean as a point-like age, oldest first, with
// how its mean is made. Units without a mean are named in the notes.
func unitRowInputs(sums []UnitSummary, dc DensityOptions) ([]CompareUnitRow, []string) {
	tracer, rel := upbTracer(sums, dc)
	var out []CompareUnitRow
	var notes []string
	for _, us := range sums {
		u := us.Unit
		sys, ok := unitMean(us)
		if !ok {
			if len(us.Systems) > 0 {
				notes = append(notes, fmt.Sprintf("unit %s (U%d): no date enters a mean (%s), so it is not compared", u.Name, u.ID, IncludeLabel(dc.Summary.Include)))
			}
			continue
		}
		q := unitQuantity(u.Name, sys, tracer, rel, dc)
		r := CompareUnitRow{Code: "U" + strconv.FormatInt(u.ID, 10), ID: u.ID, Name: u.Name,
			System: sys.Label, MeanMa: sys.All.MeanMa, Sigma1s: sys.All.Sigma1s, N: sys.All.N, Q: q}
		r.How = unitMeanHow(us, sys, dc)
		switch {
		case q.ArAr != nil:
			r.Syst = "the ⁴⁰Ar/³⁹Ar calibration " + q.ArAr.Name + " " + CalDrawn(*q.ArAr, "joint draw")
		case len(q.Systematics) > 0:
			r.Syst = "λ238"
			if tracer != "" {
				r.Syst += fmt.Sprintf(" and the %s tracer (%.3f %% 2σ)", tracer, 200*rel)
			}
			r.Syst += ", drawn once per joint draw"
		default:
			r.Syst = "none (no systematic terms are stored for " + sys.Label + ")"
		}
		out = append(out, r)
	}
	slices.SortStableFunc(out, func(a, b CompareUnitRow) int { return CmpF(b.MeanMa, a.MeanMa) })
	return out, notes
}

// unitMeanHow says how a unit's mean was made: system, dates, ± and the choices behind it.
func unitMeanHow(us UnitSummary, sys *SystemSummary, dc DensityOptions) string {
	var codes []string
	for _, e := range sys.Entries {
		codes = append(codes, e.D.SampleCode)
	}
	slices.Sort(codes)
	a := sys.Report.All
	parts := []string{fmt.Sprintf("%s weighted mean of %s (%s): %s ± %s Ma (1σ analytical",
		sys.Label, count(sys.All.N, "date"), strings.Join(codes, ", "), fixed(sys.All.MeanMa, 4), fixed(sys.All.Sigma1s, 4))}
	if a.Inflated {
		parts[0] += fmt.Sprintf(", inflated by √MSWD = %.2f: %s)", a.Factor, PolicyWords(dc.Summary.Policy))
	} else {
		parts[0] += ", " + PolicyWords(dc.Summary.Policy) + ")"
	}
	if a.MSWDDefined {
		parts = append(parts, fmt.Sprintf("MSWD %s (p %s)", FormatMSWD(a.MSWD), FormatP(a.P)))
	}
	if sys.Key == "arar" {
		parts = append(parts, "recalculated to "+dc.Summary.Calibration.Name)
	}
	switch f := FlaggedCodes(*sys); {
	case dc.Summary.Rule == stats.RuleNone:
	case sys.Report.Skipped != "":
		parts = append(parts, "outlier rule ("+RuleWords(dc.Summary.Rule)+") not applied: "+sys.Report.Skipped)
	case len(f) > 0:
		parts = append(parts, fmt.Sprintf("outlier rule (%s) flags %s: flagged, not dropped (the mean is the unit summary's, as the density counts it)", RuleWords(dc.Summary.Rule), strings.Join(f, ", ")))
	default:
		parts = append(parts, "outlier rule ("+RuleWords(dc.Summary.Rule)+"): none flagged")
	}
	var left int
	for _, x := range sys.Excluded {
		if x.Review {
			left++
		}
	}
	parts = append(parts, IncludeLabel(dc.Summary.Include))
	if left > 0 {
		parts[len(parts)-1] += fmt.Sprintf(" (%s left out by their review state)", count(left, "date"))
	}
	if us.Mixed {
		parts = append(parts, "the unit's other systems' means are set aside (one value per unit, first in the order U–Pb, ⁴⁰Ar/³⁹Ar, K–Ar, Re–Os)")
	}
	return strings.Join(parts, "; ")
}

// sectionChoice are the section choices that decide event ages: the age model and the TOC threshold.
type sectionChoice struct {
	Model       string
	Draws       int
	Seed        uint64
	TocMinWtPct *float64 // nil: each section's own
}

// sectionEvents is one section analysed for the comparison, with what its events' accounts say.
type sectionEvents struct {
	sec       store.Section
	a         *SectionAnalysis
	comps     []stats.SharedComponent // the components its ties carry
	modelText string
	dep       []string
	group     string
	point     string
	out       []CompareEvent
	notes     []string
}

// eventInputs analyses each section with the choice and returns the chosen events with their ages.
func eventInputs(ctx context.Context, d *CompareData, o CompareOptions, sc sectionChoice) ([]CompareEvent, []string, error) {
	var out []CompareEvent
	var notes []string
	wanted := func(id int64) bool { return len(o.EventIDs) == 0 || slices.Contains(o.EventIDs, id) }
	for _, sec := range d.Sections {
		if err := ctx.Err(); err != nil {
			return nil, nil, err
		}
		so := DefaultSectionOptions(sec)
		so.Model, so.Draws, so.Seed, so.Include = sc.Model, sc.Draws, sc.Seed, o.Density.Summary.Include
		// The ties enter with their random part; their components are the engine's to draw, once per
		// joint draw, with every other quantity that carries them.
		so.TieLevel, so.SharedApart = "full", true
		if sc.TocMinWtPct != nil {
			so.TocMinWtPct = *sc.TocMinWtPct
		}
		a, err := AnalyseSection(sec, d.Samples[sec.ID], d.Ties[sec.ID], d.TieIns[sec.ID], d.Events[sec.ID], d.Hiatuses[sec.ID], so)
		if err != nil {
			return nil, nil, err
		}
		se := &sectionEvents{sec: sec, a: a, point: o.Point, dep: []string{"age model: " + sc.Model}, group: fmt.Sprintf("model %d", sec.ID),
			modelText: fmt.Sprintf("Monte Carlo age–height model of %s (%d draws, seed %d)", sec.Name, sc.Draws, sc.Seed)}
		if a.Model != nil {
			se.comps = TieComponents(a.Model.TieIns, "full")
		}
		if sc.Model == "linear" {
			se.modelText = "naive linear age–height model of " + sec.Name + " (normal with its 95 % interval)"
		}
		k := 0
		for _, ev := range a.Events {
			if ev.BaseHeightM == nil {
				continue
			}
			ea := a.EventAges[k]
			k++
			if !wanted(ev.ID) && !slices.Contains(o.Groups, ev.Kind) {
				continue
			}
			se.add("E"+strconv.FormatInt(ev.ID, 10), ev.Name, ev.Kind, ea, nil, !wanted(ev.ID))
		}
		if o.Anomalies {
			for _, an := range a.Anomalies {
				if an.Age == nil {
					continue
				}
				code := fmt.Sprintf("A%d.%d", sec.ID, an.Number)
				se.add(code, fmt.Sprintf("Anomaly %d (%s)", an.Number, an.Series), "hg_anomaly", *an.Age,
					[]string{fmt.Sprintf("Hg/TOC threshold %s wt%%", num(so.TocMinWtPct))}, false)
			}
		}
		out, notes = append(out, se.out...), append(notes, se.notes...)
	}
	for _, e := range d.Direct {
		if len(o.EventIDs) > 0 && !slices.Contains(o.EventIDs, e.ID) {
			continue
		}
		out = append(out, CompareEvent{Code: "E" + strconv.FormatInt(e.ID, 10), Name: e.Name, Kind: e.Kind,
			How:     fmt.Sprintf("direct age %s ± %s Ma (1σ, as stored), no systematic component", fixed(*e.AgeMa, 4), fixed(*e.SigmaMa, 4)),
			Q:       stats.NormalAge(e.Name, *e.AgeMa, *e.SigmaMa),
			Summary: stats.DrawSummary{Median: *e.AgeMa, Lo95: *e.AgeMa - 1.96**e.SigmaMa, Hi95: *e.AgeMa + 1.96**e.SigmaMa}})
	}
	out, gnotes := addGroups(out, o, sc.Seed)
	notes = append(notes, gnotes...)
	return out, notes, nil
}

// add adds an event of the section at the chosen point, with its age from the section's age model and
// the shared components of its ties; an event the model gives no age is noted instead.
func (se *sectionEvents) add(code, name, kind string, ea EventAge, extra []string, groupOnly bool) {
	sec, a := se.sec, se.a
	note := func(why string) { se.notes = append(se.notes, fmt.Sprintf("%s (%s): %s", name, sec.Name, why)) }
	if math.IsNaN(ea.Age.Median) {
		note(orDash(ea.Note))
		return
	}
	ce := CompareEvent{Code: code, Name: name, Section: sec.Name, SectionID: sec.ID, Kind: kind,
		Depends: append(slices.Clone(se.dep), extra...), Summary: ea.Age, groupOnly: groupOnly}
	h, where := eventPoint(ea, se.point)
	ce.Point = where
	var shares func(c stats.SharedComponent) ([]float64, error)
	switch {
	case a.Model != nil && a.Model.MC != nil:
		ag, err := a.Model.MC.EventAge(h, h, ea.Seed)
		if err != nil {
			note(err.Error())
			return
		}
		ce.Draws = ag.AgesMa
		ce.Summary = ag.Summary
		ce.Q = stats.SampledAge(name+" · "+sec.Name, ag.AgesMa, se.group)
		ce.How = fmt.Sprintf("%s, %s at %s m", se.modelText, PointWords(where), num(h))
		shares = func(c stats.SharedComponent) ([]float64, error) { return a.Model.MC.Shares(c.Carries, h) }
	case a.Model != nil && a.Model.Linear != nil:
		j, _ := slices.BinarySearch(a.Model.Linear.HeightsM, h)
		mu, sd := a.Model.Linear.AgeMa[j], a.Model.Linear.SigmaMa[j]
		ce.Summary = stats.DrawSummary{Median: mu, Lo95: a.Model.Linear.Lo95[j], Hi95: a.Model.Linear.Hi95[j]}
		ce.Q = stats.NormalAge(name+" · "+sec.Name, mu, sd)
		ce.How = fmt.Sprintf("%s, %s at %s m: N(%s, %s²) Ma", se.modelText, PointWords(where), num(h), fixed(mu, 4), fixed(sd, 4))
		shares = func(c stats.SharedComponent) ([]float64, error) {
			x, err := a.Model.Linear.Shares(c.Carries, h)
			return []float64{x}, err
		}
	default:
		note(orDash(ea.Note))
		return
	}
	q, how, err := withSharedComponents(ce.Q, se.comps, shares)
	if err != nil {
		note(err.Error())
		return
	}
	ce.Q = q
	ce.How += "; " + how
	se.out = append(se.out, ce)
}

// EventsAtLeast counts, without computing anything, the events a comparison will surely have: the
// chosen events of each section that lie within the heights of its tie points with an age (at least two),
// and the chosen direct ages. Detected anomalies and correlated groups come on top; members used only by
// a group are not counted. Unless an age model fails to fit, it never counts more than the comparison
// will have.
func EventsAtLeast(d *CompareData, o CompareOptions) int {
	n := 0
	chosen := func(id int64) bool { return len(o.EventIDs) == 0 || slices.Contains(o.EventIDs, id) }
	for _, sec := range d.Sections {
		lo, hi, k := math.Inf(1), math.Inf(-1), 0
		for _, t := range d.Ties[sec.ID] {
			if TieHasAge(t) {
				lo, hi, k = math.Min(lo, t.HeightM), math.Max(hi, t.HeightM), k+1
			}
		}
		if k < 2 {
			continue
		}
		for _, e := range d.Events[sec.ID] {
			if e.BaseHeightM == nil || !chosen(e.ID) || *e.BaseHeightM < lo || *e.BaseHeightM > hi {
				continue
			}
			if e.TopHeightM != nil && (*e.TopHeightM < lo || *e.TopHeightM > hi) {
				continue
			}
			n++
		}
	}
	for _, e := range d.Direct {
		if chosen(e.ID) {
			n++
		}
	}
	return n
}

// withSharedComponents gives an event's age the components of its age model's ties, each with the share of
// the age its ties make up there (1 between two ties that carry it, less next to a tie that does not),
// and says so.
func withSharedComponents(q stats.Quantity, comps []stats.SharedComponent, shares func(stats.SharedComponent) ([]float64, error)) (stats.Quantity, string, error) {
	if len(comps) == 0 {
		return q, "its ties carry no shared component (none is linked to a U–Pb or ⁴⁰Ar/³⁹Ar date)", nil
	}
	q.Shares = map[string][]float64{}
	var parts []string
	for _, c := range comps {
		sh, err := shares(c)
		if err != nil {
			return q, "", err
		}
		key := c.Key
		if c.Cal != nil {
			cal := *c.Cal
			q.ArAr = &cal
			key = stats.ArArCalibrationKey(cal)
		} else {
			q.Systematics = append(q.Systematics, c.Systematic)
		}
		if !allOne(sh) {
			q.Shares[key] = sh
		}
		med := stats.Median(sh)
		parts = append(parts, fmt.Sprintf("%s (share %s)", ComponentLabel(c), fixed(med, 2)))
	}
	return q, "its ties enter with their random part and carry " + strings.Join(parts, "; ") +
		" (the part of the age the ties carrying it make up; each drawn once per joint draw with every quantity that carries it)", nil
}

// allOne reports whether every share is 1 to within rounding: the component moves the whole age.
func allOne(sh []float64) bool {
	for _, x := range sh {
		if math.Abs(x-1) > 1e-9 {
			return false
		}
	}
	return true
}

// addGroups adds one correlated event per group kind: in each draw the inverse-variance weighted mean
// of the members' ages (members from different sections are independent, so pairing their draws is
// fair); it assumes the members are one synchronous event. Members used only by a group are removed.
func addGroups(evs []CompareEvent, o CompareOptions, seed uint64) ([]CompareEvent, []string) {
	var notes []string
	var out []CompareEvent
	for _, e := range evs {
		if !e.groupOnly {
			out = append(out, e)
		}
	}
	for _, kind := range o.Groups {
		var members []CompareEvent
		for _, e := range evs {
			if e.Kind == kind && e.SectionID != 0 {
				members = append(members, e)
			}
		}
		label := store.Label(store.EventKinds(), kind)
		if len(members) < 2 {
			notes = append(notes, fmt.Sprintf("group %s: needs events of that kind in at least two sections, found %d", label, len(members)))
			continue
		}
		n := 0
		for _, m := range members {
			n = max(n, len(m.Draws))
		}
		if n == 0 {
			n = DefaultSectionDraws
		}
		draws := make([][]float64, len(members))
		w := make([]float64, len(members))
		var names []string
		for i, m := range members {
			ds := m.Draws
			if len(ds) == 0 { // a normal age: draw it
				h := fnv.New64a()
				h.Write([]byte("group " + kind + " " + m.Code))
				r := rand.New(rand.NewPCG(seed, h.Sum64()))
				ds = make([]float64, n)
				for k := range ds {
					ds[k] = m.Q.AgeMa + m.Q.SigmaMa*r.NormFloat64()
				}
			}
			draws[i] = ds
			v := variance(ds)
			if v <= 0 {
				v = 1e-12
			}
			w[i] = 1 / v
			names = append(names, m.Name+" ("+m.Section+")")
		}
		comb := make([]float64, n)
		for k := range comb {
			var sw, sx float64
			for i := range draws {
				x := draws[i][k%len(draws[i])]
				sw += w[i]
				sx += w[i] * x
			}
			comb[k] = sx / sw
		}
		// Only the components every member carries are kept.
		syst := slices.Clone(members[0].Q.Systematics)
		for _, m := range members[1:] {
			syst = slices.DeleteFunc(syst, func(s stats.Systematic) bool { return !slices.Contains(m.Q.Systematics, s) })
		}
		name := label + " (correlated)"
		q := stats.SampledAge(name, comb, "group "+kind).With(syst...)
		out = append(out, CompareEvent{Code: "G:" + kind, Name: name, Section: fmt.Sprintf("%d sections", len(members)), Kind: kind,
			How: "one synchronous event: in each draw the inverse-variance weighted mean of " + strings.Join(names, "; ") +
				"; shared components kept: " + keysText(syst),
			Depends: []string{"age model: " + o.Model, "synchroneity of the members assumed"}, Q: q, Draws: comb,
			Summary: summarize(comb)})
	}
	return out, notes
}

func keysText(s []stats.Systematic) string {
	if len(s) == 0 {
		return "none"
	}
	var k []string
	for _, x := range s {
		k = append(k, x.Key)
	}
	return strings.Join(k, ", ")
}

func variance(x []float64) float64 {
	if len(x) < 2 {
		return 0
	}
	var m float64
	for _, v := range x {
		m += v
	}
	m /= float64(len(x))
	var s float64
	for _, v := range x {
		s += (v - m) * (v - m)
	}
	return s / float64(len(x)-1)
}

// summarize returns the median and 2.5/97.5 % of draws (type 7).
func summarize(x []float64) stats.DrawSummary {
	s := slices.Clone(x)
	sort.Float64s(s)
	q := func(p float64) float64 {
		h := p * float64(len(s)-1)
		lo := math.Floor(h)
		if int(lo)+1 >= len(s) {
			return s[len(s)-1]
		}
		return s[int(lo)] + (h-lo)*(s[int(lo)+1]-s[int(lo)])
	}
	return stats.DrawSummary{Median: q(0.5), Lo95: q(0.025), Hi95: q(0.975)}
}

// ComparisonEvents are the events of d's sections with their ages, built as the comparison builds them
// (the same age models, points and components), with the notes on what was left out.
func ComparisonEvents(ctx context.Context, d *CompareData, o CompareOptions) ([]CompareEvent, []string, error) {
	o = d.resolve(o, ctx)
	sc := sectionChoice{Model: o.Model, Draws: o.ModelDraws, Seed: o.Density.Seed, TocMinWtPct: o.TocMinWtPct}
	return eventInputs(ctx, d, o, sc)
}

// ProvincePulses are the pulses and the density of province prov (its units and dates given), built as
// the comparison builds them from d's other data (its calibration, unit means at the analytical level).
func ProvincePulses(ctx context.Context, d *CompareData, prov store.Province, units []store.Unit, dates []store.Date, o CompareOptions) ([]ComparePulse, Density, error) {
	pd := *d
	pd.Province, pd.Units, pd.Dates = prov, units, dates
	o = pd.resolve(o, ctx)
	pulses, dens, _, _, err := pulseInputs(&pd, o.Density)
	return pulses, dens, err
}
