package web

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"net/http"
	"net/url"
	"sort"
	"strconv"
	"strings"

	"github.com/go-chi/chi/v5"

	"coeval/stats"
	"coeval/store"
	"coeval/views"
)

// The answer on an event's page: its age from its section's age model, and, for every province whose
// dates come near it, the pulses it could belong to, ranked — each number read from the comparison the
// comparison page computes with its default choices (the same cache), so the answer and the full
// comparison cannot differ.

// answerReachMa is how near a province's dates must come to the event's age for the province to be
// compared with it (a density of unit means does not reach further than a few Ma beyond its dates).
const answerReachMa = 5.0

// maxListedAnswers is the most events the list of events answers at once (each answer reads its section's
// model and its provinces' comparisons; beyond this the list would take minutes cold).
const maxListedAnswers = 40

// maxAnswerProvinces bounds the comparisons one event page runs: the provinces with most dates near the
// event first.
const maxAnswerProvinces = 6

type answerAge struct {
	Median, Lo95, Hi95 float64
	Model              string
}

// pulseAnswer is one pulse of a province against the event: the comparison's row, with the pulse's age.
type pulseAnswer struct {
	Province, Pulse                  string // Pulse: its code (P155.4)
	Name                             string // "pulse at ~155.4 Ma", from the province's timeline
	ProvinceID                       int64
	ModeMa, StartMa, EndMa           float64 // from the province's timeline (NaN when not found)
	Within, WithinSE, After, AfterSE float64
	LagMed, LagLo, LagHi             float64
	SensWithinMin, SensWithinMax     float64
	SensCaution                      string
	N                                int // joint draws of the comparison
	compareQuery                     url.Values
	hasPulseAge, sensitivityIsKnown  bool
}

type eventAnswer struct {
	Age       *answerAge
	Pulses    []pulseAnswer // ranked: P(within) descending
	Sentence  string
	Notes     []string
	Provinces int // compared
	// NotComputed are the provinces near the event whose comparison was not computed (the compilation
	// view computes for a bounded time): the answer says nothing of them.
	NotComputed []store.Province
}

// internalJSON reads path?q through the site's own handler as the request's user would, as JSON into v.
func internalJSON(h http.Handler, r *http.Request, path string, q url.Values, v any) error {
	q2, _ := url.ParseQuery(q.Encode())
	q2.Set("format", "json")
	req := r.Clone(r.Context())
	req.Method = http.MethodGet
	req.Body = http.NoBody
	req.URL = &url.URL{Path: path, RawQuery: q2.Encode()}
	req.RequestURI = req.URL.String()
	req = req.WithContext(context.WithValue(context.WithValue(req.Context(), chi.RouteCtxKey, nil), internalKey{}, true))
	rec := &captured{header: http.Header{}}
	h.ServeHTTP(rec, req)
	if rec.status != 0 && rec.status != http.StatusOK {
		var e struct {
			Error    string   `json:"error"`
			Problems []string `json:"problems"`
		}
		if json.Unmarshal(rec.body.Bytes(), &e) == nil && e.Error != "" {
			if len(e.Problems) > 0 {
				return fmt.Errorf("%s %s", e.Error, strings.Join(e.Problems, "; "))
			}
			return errors.New(e.Error)
		}
		return fmt.Errorf("status %d", rec.status)
	}
	if err := json.Unmarshal(rec.body.Bytes(), v); err != nil {
		return fmt.Errorf("reading %s: %w", path, err)
	}
	return nil
}

// sectionAges is what an answer reads of a section page: its age model and the ages of its events.
type sectionAges struct {
	AgeModel struct {
		Model     string `json:"model"`
		Draws     int    `json:"draws"`
		Seed      uint64 `json:"seed"`
		EventAges []struct {
			Name   string   `json:"name"`
			Median *float64 `json:"age_median_ma"`
			Lo     *float64 `json:"age_lo95_ma"`
			Hi     *float64 `json:"age_hi95_ma"`
		} `json:"event_ages"`
		Note string `json:"note"`
	} `json:"age_model"`
}

type comparisonRowsJSON struct {
	Rows []map[string]string `json:"rows"`
}

type timelinePulses struct {
	Pulses []struct {
		Pulse   string  `json:"pulse"`
		Name    string  `json:"name"`
		ModeMa  float64 `json:"mode_ma"`
		StartMa float64 `json:"start_ma"`
		EndMa   float64 `json:"end_ma"`
	} `json:"pulses"`
}

// answers reads each section, comparison and timeline once for the answers of many events (the list
// of events).
type answers struct {
	s         *Server
	r         *http.Request
	sections  map[int64]*sectionAges
	compares  map[string]*comparisonRowsJSON // by the comparison's address
	timelines map[int64]*timelinePulses
	errs      map[string]error
	provinces []store.Province // read once, on the first answer that needs them
	// keptOnly: a comparison not in compares is not computed; its province goes to NotComputed.
	keptOnly bool
	near     map[[2]float64]nearProvinces // by the age window read
}

// nearProvinces are the provinces compared with an event, and the note saying which were left out.
type nearProvinces struct {
	provs []store.Province
	note  string
}

// errNotComputed is a comparison an answer with keptOnly did not compute.
var errNotComputed = errors.New("not computed")

func (s *Server) answers(r *http.Request) *answers {
	return &answers{s: s, r: r, sections: map[int64]*sectionAges{}, compares: map[string]*comparisonRowsJSON{},
		timelines: map[int64]*timelinePulses{}, errs: map[string]error{}, near: map[[2]float64]nearProvinces{}}
}

func (as *answers) section(id int64) (*sectionAges, error) {
	if v, ok := as.sections[id]; ok {
		return v, nil
	}
	v := &sectionAges{}
	if err := internalJSON(as.s.router, as.r, idURL("/sections", id), nil, v); err != nil {
		return nil, err
	}
	as.sections[id] = v
	return v, nil
}

// comparison is the comparison page's JSON for the address q (a province, with the default choices and
// any extra ones, such as detected anomalies compared for an anomaly's answer), read once per answers.
func (as *answers) comparison(q url.Values) (*comparisonRowsJSON, error) {
	key := q.Encode()
	if v, ok := as.compares[key]; ok {
		return v, as.errs[key]
	}
	if as.keptOnly {
		return nil, errNotComputed
	}
	v := &comparisonRowsJSON{}
	err := internalJSON(as.s.router, as.r, "/compare", q, v)
	as.compares[key], as.errs[key] = v, err
	return v, err
}

func (as *answers) timeline(province int64) *timelinePulses {
	if v, ok := as.timelines[province]; ok {
		return v
	}
	v := &timelinePulses{}
	if as.keptOnly {
		return v // not computed: the pulses' ages come from the comparison's rows
	}
	_ = internalJSON(as.s.router, as.r, idURL("/provinces", province)+"/timeline", nil, v) // pulse ages are a help, not the answer
	as.timelines[province] = v
	return v
}

// answerFor builds the answer on event ev.
func (s *Server) answerFor(r *http.Request, ev store.Event) (eventAnswer, error) {
	return s.answers(r).answer(ev)
}

// answer builds the answer on event ev.
func (as *answers) answer(ev store.Event) (eventAnswer, error) {
	a, err := as.age(ev)
	if err != nil || a.Age == nil {
		return a, err
	}
	return as.answerAt(a, "E"+strconv.FormatInt(ev.ID, 10), nil)
}

// age is the start of the answer on event ev: its age, from its section page's model with its default
// choices, or the sentence saying why it has none.
func (as *answers) age(ev store.Event) (eventAnswer, error) {
	var a eventAnswer
	if ev.SectionID == nil || as.s.router == nil {
		return a, nil
	}
	sec, err := as.section(*ev.SectionID)
	if err != nil {
		return a, err
	}
	for _, e := range sec.AgeModel.EventAges {
		if e.Name == ev.Name && e.Median != nil && e.Lo != nil && e.Hi != nil {
			a.Age = &answerAge{Median: *e.Median, Lo95: *e.Lo, Hi95: *e.Hi,
				Model: fmt.Sprintf("%s age–height model of %s (%d draws, seed %d)", modelWords(sec.AgeModel.Model), ev.Section, sec.AgeModel.Draws, sec.AgeModel.Seed)}
		}
	}
	if a.Age == nil {
		a.Sentence = "No age: " + orText(sec.AgeModel.Note, "its section has no age–height model that reaches it") + "."
	}
	return a, nil
}

// answerAt completes the answer on what the comparison calls code (an event E…, a detected anomaly A…),
// whose age a.Age is: the pulses of every province with dates near that age, from the comparison page's
// rows for code with its default choices and the extra ones.
func (as *answers) answerAt(a eventAnswer, code string, extra url.Values) (eventAnswer, error) {
	provs, note, err := as.nearProvinces(*a.Age)
	if err != nil {
		return a, err
	}
	if note != "" {
		a.Notes = append(a.Notes, note)
	}
	for _, p := range provs {
		q := comparisonAddress(p.ID, extra)
		cmp, err := as.comparison(q)
		if errors.Is(err, errNotComputed) {
			a.NotComputed = append(a.NotComputed, p)
			continue
		}
		if err != nil {
			a.Notes = append(a.Notes, fmt.Sprintf("%s could not be compared: %v", p.Name, err))
			continue
		}
		tl := as.timeline(p.ID)
		a.Provinces++
		for _, row := range cmp.Rows {
			if row["event_code"] != code || row["pulse"] == "" {
				continue
			}
			pa := pulseAnswer{Province: p.Name, ProvinceID: p.ID, Pulse: row["pulse"], compareQuery: q,
				Within: numOr(row["p_within"]), WithinSE: numOr(row["p_within_se"]), After: numOr(row["p_after_onset"]), AfterSE: numOr(row["p_after_onset_se"]),
				LagMed: numOr(row["lag_median_ma"]), LagLo: numOr(row["lag_lo95_ma"]), LagHi: numOr(row["lag_hi95_ma"]),
				SensWithinMin: numOr(row["sens_within_min"]), SensWithinMax: numOr(row["sens_within_max"]), SensCaution: row["sens_caution"],
				ModeMa: math.NaN(), StartMa: math.NaN(), EndMa: math.NaN()}
			pa.N, _ = strconv.Atoi(row["n"])
			pa.sensitivityIsKnown = !math.IsNaN(pa.SensWithinMin)
			// The pulse's ages are the comparison's own (its density of analytical unit means), its
			// name made from them; the timeline's (at its own level) only where the row has none.
			if m, on, end := numOr(row["pulse_mode_ma"]), numOr(row["pulse_onset_median_ma"]), numOr(row["pulse_end_median_ma"]); !math.IsNaN(m + on + end) {
				pa.ModeMa, pa.StartMa, pa.EndMa, pa.hasPulseAge = m, on, end, true
			} else {
				for _, tp := range tl.Pulses {
					if tp.Pulse == pa.Pulse {
						pa.ModeMa, pa.StartMa, pa.EndMa, pa.hasPulseAge = tp.ModeMa, tp.StartMa, tp.EndMa, true
					}
				}
			}
			a.Pulses = append(a.Pulses, pa)
		}
	}
	sort.SliceStable(a.Pulses, func(i, j int) bool { return a.Pulses[i].Within > a.Pulses[j].Within })
	a.Sentence = answerSentence(a)
	return a, nil
}

// nearProvinces are the provinces compared with an event of age age: those with accepted dates near
// it, most such dates first, at most maxAnswerProvinces (note says so when some are left out).
func (as *answers) nearProvinces(age answerAge) (provs []store.Province, note string, err error) {
	ctx := as.r.Context()
	if as.provinces == nil {
		if as.provinces, err = as.s.store.Provinces(ctx); err != nil {
			return nil, "", err
		}
	}
	// The event's 95 % interval widened by the reach on both sides, whichever end is the older.
	window := [2]float64{min(age.Lo95, age.Hi95) - answerReachMa, max(age.Lo95, age.Hi95) + answerReachMa}
	if v, ok := as.near[window]; ok {
		return v.provs, v.note, nil
	}
	type near struct {
		p store.Province
		n int
	}
	var cands []near
	counts, err := as.s.store.DateCountsByProvince(ctx, window[0], window[1], store.ReviewAccepted)
	if err != nil {
		return nil, "", err
	}
	for _, p := range as.provinces {
		if n := counts[p.ID]; n > 0 {
			cands = append(cands, near{p, n})
		}
	}
	sort.SliceStable(cands, func(i, j int) bool { return cands[i].n > cands[j].n })
	if len(cands) > maxAnswerProvinces {
		note = fmt.Sprintf("%d provinces have dates within %g Ma of this event; the %d with most such dates are compared here (the comparison page takes any).", len(cands), answerReachMa, maxAnswerProvinces)
		cands = cands[:maxAnswerProvinces]
	}
	for _, c := range cands {
		provs = append(provs, c.p)
	}
	as.near[window] = nearProvinces{provs, note}
	return provs, note, nil
}

// comparisonAddress is the query of the comparison an answer reads: the province, with the default
// choices and the extra ones.
func comparisonAddress(province int64, extra url.Values) url.Values {
	q := url.Values{"province": {strconv.FormatInt(province, 10)}}
	for k, v := range extra {
		q[k] = v
	}
	return q
}

func numOr(s string) float64 {
	x, err := strconv.ParseFloat(s, 64)
	if err != nil {
		return math.NaN()
	}
	return x
}

func orText(s, alt string) string {
	if s == "" {
		return alt
	}
	return s
}

func modelWords(code string) string {
	if code == "linear" {
		return "straight-line"
	}
	return "Monte Carlo"
}

// pulseName names a pulse by its age, with its range where the timeline gives it ("pulse at ~155.4 Ma
// (155.62–155.10 Ma)").
func (p pulseAnswer) pulseName() string {
	name := p.Name
	if name == "" {
		name = "pulse at ~" + strings.TrimPrefix(p.Pulse, "P") + " Ma"
	}
	if !p.hasPulseAge {
		return name
	}
	return fmt.Sprintf("%s (%.2f–%.2f Ma)", name, p.StartMa, p.EndMa)
}

// pulseNameOnly is the pulse's name without its range: "pulse at ~155.4 Ma".
func (p pulseAnswer) pulseNameOnly() string {
	if p.Name != "" {
		return p.Name
	}
	return "pulse at ~" + strings.TrimPrefix(p.Pulse, "P") + " Ma"
}

// probWords writes a probability as the comparison page does (probText: its SE's decimals, 0 and 1 as
// the bounds 3/N allows), "—" when there is none.
func (p pulseAnswer) probWords(x, se float64) string {
	if math.IsNaN(x) || p.N <= 0 {
		return "—"
	}
	return probText(stats.Probability{P: x, SE: nanZero(se)}, p.N)
}

// pText is "P = 0.98 ± 0.01", or "P > 0.9997" where the estimate is a bound.
func (p pulseAnswer) pText(x, se float64) string {
	w := p.probWords(x, se)
	if strings.HasPrefix(w, ">") || strings.HasPrefix(w, "<") {
		return "P " + w
	}
	return "P = " + w
}

// lagText is the lag from the onset, median (95 %), in Ma, or "—".
func (p pulseAnswer) lagText() string {
	if math.IsNaN(p.LagMed) {
		return "—"
	}
	return fmt.Sprintf("%.2f (%.2f – %.2f)", p.LagMed, p.LagLo, p.LagHi)
}

// holdsCell is holds as a table cell, a caution where the conclusion does not hold.
func (p pulseAnswer) holdsCell() views.Cell {
	c := views.Cell{Text: p.holds()}
	if strings.HasPrefix(c.Text, "does not") {
		c.Class = "caution"
	}
	return c
}

// holds says whether P(within) stays on the same side of 0.5 under every alternative of the sensitivity.
func (p pulseAnswer) holds() string {
	switch {
	case !p.sensitivityIsKnown:
		return "not tested"
	case p.Within >= 0.5 && p.SensWithinMin >= 0.5, p.Within < 0.5 && p.SensWithinMax < 0.5:
		return "holds under every alternative"
	}
	return fmt.Sprintf("does not hold under every alternative (P from %.2f to %.2f)", p.SensWithinMin, p.SensWithinMax)
}

// answerSentence is the answer in one sentence: per province, the most likely pulse or that the event
// falls before or outside its pulses.
func answerSentence(a eventAnswer) string {
	var pending string
	if len(a.NotComputed) > 0 {
		var names []string
		for _, p := range a.NotComputed {
			names = append(names, p.Name)
		}
		pending = "not yet compared with " + strings.Join(names, ", ") + " (not computed in time for this page)"
		if len(a.Pulses) == 0 {
			return upperFirst(pending) + "."
		}
		pending = "; " + pending
	}
	if len(a.Pulses) == 0 {
		if a.Provinces == 0 {
			return fmt.Sprintf("No province has dates within %g Ma of this event's age, so none is compared with it.", answerReachMa)
		}
		return "The compared provinces have no pulse to set against this event."
	}
	byProv := map[int64][]pulseAnswer{}
	var order []int64
	for _, p := range a.Pulses {
		if _, ok := byProv[p.ProvinceID]; !ok {
			order = append(order, p.ProvinceID)
		}
		byProv[p.ProvinceID] = append(byProv[p.ProvinceID], p)
	}
	var parts []string
	for _, id := range order {
		ps := byProv[id]
		best := ps[0]
		allBefore := true
		for _, p := range ps {
			if !(p.After < 0.05) {
				allBefore = false
			}
		}
		switch {
		case best.Within >= 0.5:
			parts = append(parts, fmt.Sprintf("most likely during the %s of %s (%s, %s)", best.pulseName(), best.Province, best.pText(best.Within, best.WithinSE), best.holds()))
		case allBefore:
			parts = append(parts, fmt.Sprintf("before every pulse of %s", best.Province))
		default:
			parts = append(parts, fmt.Sprintf("not clearly within any pulse of %s (largest %s, the %s)", best.Province, best.pText(best.Within, best.WithinSE), best.pulseName()))
		}
	}
	s := strings.Join(parts, "; ") + pending
	return strings.ToUpper(s[:1]) + s[1:] + "."
}

// answerBlock lays the answer out on the event's page.
func answerBlock(a eventAnswer) (notes []string, groups []views.FieldGroup, tables []views.Table, links []views.Link) {
	if a.Age != nil {
		d := sigmaDecimals((a.Age.Hi95 - a.Age.Lo95) / 4)
		groups = append(groups, views.FieldGroup{Title: "Age", Fields: []views.KV{
			{Label: "Median (95 % interval)", Value: fmt.Sprintf("%s Ma (%s – %s)", fixed(a.Age.Median, d), fixed(a.Age.Lo95, d), fixed(a.Age.Hi95, d))},
			{Label: "From", Value: a.Age.Model}}})
	}
	if len(a.Pulses) > 0 {
		t := views.Table{ID: "answer", Caption: "Pulses this event could belong to, most likely first",
			Columns: []views.Column{{Label: "Province"}, {Label: "Pulse", Unit: "mode (start–end), Ma"}, {Label: "P(within)", Num: true, Title: "± its Monte Carlo standard error"},
				{Label: "P(after onset)", Num: true}, {Label: "Lag from onset", Unit: "Ma, median (95 %)", Num: true}, {Label: "Under the sensitivity set"}}}
		for _, p := range a.Pulses {
			lag, hold := p.lagText(), p.holdsCell()
			pulse := "—"
			if p.hasPulseAge {
				pulse = fmt.Sprintf("%s: %.2f (%.2f–%.2f)", upperFirst(p.pulseNameOnly()), p.ModeMa, p.StartMa, p.EndMa)
			} else {
				pulse = upperFirst(p.pulseNameOnly())
			}
			t.Rows = append(t.Rows, []views.Cell{{Text: p.Province, URL: idURL("/provinces", p.ProvinceID) + "/timeline"}, {Text: pulse},
				{Text: p.probWords(p.Within, p.WithinSE), Num: true}, {Text: p.probWords(p.After, p.AfterSE), Num: true}, {Text: lag, Num: true}, hold})
		}
		t.Notes = []string{"Each number is the comparison page's, with its default choices: the density of unit means (automatic smoothing width, 1,000 bootstrap replicates), the section's Monte Carlo age–height model, 10,000 joint draws, shared systematic terms drawn once per draw. They depend on those choices; the comparison page changes them and says how each number was computed."}
		tables = append(tables, t)
		seen := map[int64]bool{}
		for _, p := range a.Pulses {
			if !seen[p.ProvinceID] {
				seen[p.ProvinceID] = true
				links = append(links, views.Link{Label: "The full comparison with " + p.Province, URL: "/compare?" + p.compareQuery.Encode()})
			}
		}
	}
	notes = append(notes, a.Notes...)
	return notes, groups, tables, links
}

// jsonOf is the answer as the event's JSON carries it.
func (a eventAnswer) jsonOf() map[string]any {
	out := map[string]any{"sentence": a.Sentence, "provinces_compared": a.Provinces, "notes": a.Notes}
	if a.Age != nil {
		out["age"] = map[string]any{"median_ma": a.Age.Median, "lo95_ma": a.Age.Lo95, "hi95_ma": a.Age.Hi95, "model": a.Age.Model}
	}
	var ps []map[string]any
	for _, p := range a.Pulses {
		m := map[string]any{"province": p.Province, "province_id": p.ProvinceID, "pulse": p.Pulse,
			"p_within": jf(p.Within), "p_within_se": jf(p.WithinSE), "p_after_onset": jf(p.After), "p_after_onset_se": jf(p.AfterSE),
			"lag_median_ma": jf(p.LagMed), "lag_lo95_ma": jf(p.LagLo), "lag_hi95_ma": jf(p.LagHi),
			"sensitivity_within_min": jf(p.SensWithinMin), "sensitivity_within_max": jf(p.SensWithinMax), "holds": p.holds()}
		if p.hasPulseAge {
			m["pulse_mode_ma"], m["pulse_start_ma"], m["pulse_end_ma"] = p.ModeMa, p.StartMa, p.EndMa
		}
		ps = append(ps, m)
	}
	out["pulses"] = ps
	return out
}

// addAnswers adds to the list of events each accepted event's age and its most likely pulse, from the
// answers of their pages (each section, comparison and timeline read once).
func (s *Server) addAnswers(r *http.Request, t *views.Table, events []store.Event) error {
	t.Columns = append(t.Columns, views.Column{Label: "Age", Unit: "Ma, median (95 %)", Num: true}, views.Column{Label: "Most likely pulse", Title: "by P(within); the event's page ranks them all"})
	as := s.answers(r)
	for i, e := range events {
		age, best := "—", "—"
		if e.ReviewState == store.ReviewAccepted {
			a, err := as.answer(e)
			if err != nil {
				return err
			}
			if a.Age != nil {
				d := sigmaDecimals((a.Age.Hi95 - a.Age.Lo95) / 4)
				age = fmt.Sprintf("%s (%s – %s)", fixed(a.Age.Median, d), fixed(a.Age.Lo95, d), fixed(a.Age.Hi95, d))
			}
			if len(a.Pulses) > 0 {
				p := a.Pulses[0]
				best = fmt.Sprintf("%s of %s (%s)", p.pulseName(), p.Province, p.pText(p.Within, p.WithinSE))
				if p.Within < 0.5 {
					best = "none likely (largest " + p.pText(p.Within, p.WithinSE) + ")"
				}
			}
		}
		t.Rows[i] = append(t.Rows[i], views.Cell{Text: age, Num: true}, views.Cell{Text: best, URL: idURL("/events", e.ID)})
	}
	return nil
}
