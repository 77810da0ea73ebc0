package analysis

import (
	"fmt"
	"maps"
	"math"
	"slices"
	"sort"
	"strings"

	"coeval/stats"
)

// The coincidence test across the compilation: do the events of the sedimentary record (their ages from
// the sections' age models, or direct ages, and optionally the detected anomalies) lie closer to the
// onsets of the provinces' density pulses than chance would place them? The events and onsets are those
// the comparison computes (the web layer builds them with the comparison's own functions, for every
// province); this pipeline chooses the window, keeps what lies in it, runs stats.CoincidenceTest and says
// in words what the answer depends on.

// Bounds and defaults of the coincidence test.
const (
	DefaultCoincidenceReplicates = 9999
	MinCoincidenceReplicates     = 99
	MaxCoincidenceReplicates     = 99999
	// FewCoincidenceEvents: below this many events the test has little power, and the page says so.
	FewCoincidenceEvents = 5
)

// CoincidenceNulls are the codes of the nulls, in the order a page offers them.
func CoincidenceNulls() []string {
	return []string{string(stats.NullEventsUniform), string(stats.NullPulsesShifted)}
}

// CoincidenceNullWords says what a null assumes, in words.
func CoincidenceNullWords(null string) string {
	switch stats.CoincidenceNull(null) {
	case stats.NullEventsUniform:
		return "events placed at random (uniformly and independently) within the window, the pulse onsets where they are"
	case stats.NullPulsesShifted:
		return "the pulse onsets shifted together by one random offset within the window (wrapping round from one end to the other), the events where they are"
	}
	return null
}

// CoincidenceOptions are the choices of the test itself; the events' and onsets' own choices (density,
// age model, review) are the comparison's and are described by CoincidenceInputs.Depends.
type CoincidenceOptions struct {
	Null       string   // "events" or "pulses" (stats.CoincidenceNull)
	FromMa     *float64 // the window, either order; both nil: automatic
	ToMa       *float64
	Replicates int
	Seed       uint64
	DrawAges   bool // draw each event's age from its distribution in every replicate
	// DrawOnsets: draw the onsets in every replicate, each province's from one bootstrap replicate of its
	// density (CoincidenceInputs.OnsetSets); otherwise the reference density's onsets are taken as known.
	DrawOnsets bool
}

// DefaultCoincidenceOptions: events placed at random, the automatic window, 9999 replicates of seed 1,
// event ages drawn.
func DefaultCoincidenceOptions() CoincidenceOptions {
	return CoincidenceOptions{Null: string(stats.NullEventsUniform), Replicates: DefaultCoincidenceReplicates, Seed: DefaultSeed, DrawAges: true}
}

// Validate names every option that cannot be used (a window with one end only, or two equal ends, is
// the option "Window").
func (o CoincidenceOptions) Validate() error {
	var errs OptionErrors
	add := func(option, problem string) { errs = append(errs, &OptionError{Option: option, Problem: problem}) }
	if !slices.Contains(CoincidenceNulls(), o.Null) {
		add("Null", "unknown value "+quote(o.Null)+"; want "+strings.Join(CoincidenceNulls(), " or "))
	}
	ok := func(option string, v *float64) {
		if v != nil && !(*v >= 0 && *v <= MaxAgeMa) {
			add(option, fmt.Sprintf("want an age in Ma from 0 to %d, got %s", MaxAgeMa, num(*v)))
		}
	}
	ok("FromMa", o.FromMa)
	ok("ToMa", o.ToMa)
	switch {
	case (o.FromMa == nil) != (o.ToMa == nil):
		add("Window", "give both ends of the window, or neither for the automatic one")
	case o.FromMa != nil && *o.FromMa == *o.ToMa:
		add("Window", "the window needs two different ages")
	}
	if o.Replicates < MinCoincidenceReplicates || o.Replicates > MaxCoincidenceReplicates {
		add("Replicates", fmt.Sprintf("want a whole number from %d to %d, got %d", MinCoincidenceReplicates, MaxCoincidenceReplicates, o.Replicates))
	}
	return errs.Err()
}

// CoincidenceEvent is an event with its age as the comparison computes it.
type CoincidenceEvent struct {
	Code      string // as in the comparison: E12, A3.1
	Name      string
	Section   string // "" for a direct age
	SectionID int64
	AgeMa     float64 // the median of its age
	Lo95Ma    float64
	Hi95Ma    float64
	DrawsMa   []float64 // draws of its age (Monte Carlo age model), if any
	SigmaMa   float64   // 1σ of a normal age (linear age model, direct age), if no draws
	How       string    // how its age is made, in words
}

// CoincidenceOnset is the onset (older edge) of one pulse of one province's density.
type CoincidenceOnset struct {
	ProvinceID int64
	Province   string
	Pulse      string  // its code in the province's timeline (P155.4: by its age)
	Name       string  // its name in words ("pulse at ~155.4 Ma"); the code's words when empty
	OnsetMa    float64 // the older edge of the pulse in the reference density
	Lo95Ma     float64 // 2.5–97.5 % of the older edge over the bootstrap replicates in which the pulse exists
	Hi95Ma     float64
	ModeMa     float64
	Frequency  float64 // share of replicates in which the pulse exists
}

// Label names the onset for a table: "pulse at ~155.4 Ma of Province".
func (o CoincidenceOnset) Label() string { return o.PulseWords() + " of " + o.Province }

// PulseWords names the onset's pulse in words: "pulse at ~155.4 Ma".
func (o CoincidenceOnset) PulseWords() string {
	if o.Name != "" {
		return o.Name
	}
	return "pulse at ~" + strings.TrimPrefix(o.Pulse, "P") + " Ma"
}

// CoincidenceInputs are the events and onsets, and what they depend on.
type CoincidenceInputs struct {
	Events []CoincidenceEvent
	Onsets []CoincidenceOnset
	// SpansMa are the age ranges the provinces' densities were computed on (each [young, old]): with the
	// events' 95 % ranges they make the automatic window.
	SpansMa [][2]float64
	// OnsetSets are, per province, its onsets in each bootstrap replicate of its density (a pulse absent
	// from a replicate is absent from its set), for DrawOnsets.
	OnsetSets map[int64][][]float64
	Depends   []string // the model choices the ages rest on, in words (bandwidth, calibration, age model, review)
	Notes     []string // events or provinces that could not enter, and why
}

// CoincidenceNearest is one event of the test with the onset nearest to its age.
type CoincidenceNearest struct {
	Event      CoincidenceEvent
	Onset      CoincidenceOnset
	DistanceMa float64 // |event age − onset|
}

// Coincidence is the result of the pipeline, for a page and its downloads.
type Coincidence struct {
	Options        CoincidenceOptions
	YoungMa, OldMa float64 // the window used
	AutoWindow     bool
	Nearest        []CoincidenceNearest // the events in the window, oldest first
	EventsOutside  []CoincidenceEvent
	Onsets         []CoincidenceOnset // the onsets in the window, oldest first
	OnsetsOutside  []CoincidenceOnset
	Result         *stats.CoincidenceResult // nil when the test cannot be made (Message says why)
	Message        string
	Sentence       string // the answer in one plain sentence
	Cautions       []string
	Depends        []string
	Notes          []string
}

// Coincide chooses the window, keeps the events (by their median age) and onsets that lie in it and runs
// the test. Bad options come back as OptionErrors; too little to test is not an error but a Message.
func Coincide(in CoincidenceInputs, o CoincidenceOptions) (Coincidence, error) {
	res := Coincidence{Options: o, Depends: in.Depends, Notes: in.Notes}
	if err := o.Validate(); err != nil {
		return res, err
	}
	if o.FromMa != nil {
		res.YoungMa, res.OldMa = math.Min(*o.FromMa, *o.ToMa), math.Max(*o.FromMa, *o.ToMa)
	} else {
		res.AutoWindow = true
		res.YoungMa, res.OldMa = math.Inf(1), math.Inf(-1)
		widen := func(a, b float64) {
			res.YoungMa, res.OldMa = math.Min(res.YoungMa, math.Min(a, b)), math.Max(res.OldMa, math.Max(a, b))
		}
		for _, s := range in.SpansMa {
			widen(s[0], s[1])
		}
		for _, e := range in.Events {
			widen(e.Lo95Ma, e.Hi95Ma)
		}
		for _, p := range in.Onsets {
			widen(p.OnsetMa, p.OnsetMa)
		}
	}
	if !(res.OldMa > res.YoungMa) {
		res.YoungMa, res.OldMa = 0, 0
		res.Message = "There is no window to test in: no province has a density, and no event has an age (or all lie at one age)."
		res.Sentence = res.Message
		res.Cautions = []string{}
		return res, nil
	}
	inWindow := func(x float64) bool { return x >= res.YoungMa && x <= res.OldMa }
	var onsetsMa []float64
	for _, p := range in.Onsets {
		if inWindow(p.OnsetMa) {
			res.Onsets = append(res.Onsets, p)
		} else {
			res.OnsetsOutside = append(res.OnsetsOutside, p)
		}
	}
	sort.SliceStable(res.Onsets, func(i, j int) bool { return res.Onsets[i].OnsetMa > res.Onsets[j].OnsetMa })
	for _, p := range res.Onsets {
		onsetsMa = append(onsetsMa, p.OnsetMa)
	}
	var evs []stats.CoincidenceEvent
	for _, e := range in.Events {
		if !inWindow(e.AgeMa) {
			res.EventsOutside = append(res.EventsOutside, e)
			continue
		}
		d, j := stats.NearestOnset(e.AgeMa, onsetsMa)
		n := CoincidenceNearest{Event: e, DistanceMa: d}
		if j >= 0 {
			n.Onset = res.Onsets[j]
		}
		res.Nearest = append(res.Nearest, n)
	}
	sort.SliceStable(res.Nearest, func(i, j int) bool { return res.Nearest[i].Event.AgeMa > res.Nearest[j].Event.AgeMa })
	for _, n := range res.Nearest {
		evs = append(evs, stats.CoincidenceEvent{AgeMa: n.Event.AgeMa, DrawsMa: n.Event.DrawsMa, SigmaMa: n.Event.SigmaMa})
	}
	res.Cautions = coincidenceCautions(&res)
	switch {
	case len(evs) == 0:
		res.Message = "No event with an age lies in the window, so there is nothing to test."
	case len(onsetsMa) == 0:
		res.Message = "No pulse onset lies in the window, so there is nothing to test."
	}
	if res.Message != "" {
		res.Sentence = res.Message
		return res, nil
	}
	var groups [][][]float64
	if o.DrawOnsets {
		for _, id := range slices.Sorted(maps.Keys(in.OnsetSets)) {
			if len(in.OnsetSets[id]) > 0 {
				groups = append(groups, in.OnsetSets[id])
			}
		}
	}
	r, err := stats.CoincidenceTestDrawnOnsets(evs, onsetsMa, groups, stats.CoincidenceOptions{Null: stats.CoincidenceNull(o.Null),
		YoungMa: res.YoungMa, OldMa: res.OldMa, Replicates: o.Replicates, Seed: o.Seed, DrawAges: o.DrawAges})
	if err != nil {
		return res, err
	}
	res.Result = &r
	res.Sentence = coincidenceSentence(res)
	return res, nil
}

// coincidenceSentence says the answer plainly: closer than chance or not, by how much, and under which null.
func coincidenceSentence(c Coincidence) string {
	r := c.Result
	verdict := "are not detectably closer to pulse onsets than chance would place them"
	if r.P <= 0.05 {
		verdict = "lie closer to pulse onsets than chance would place them"
	}
	return fmt.Sprintf("The %s in %s–%s Ma %s: on average %s Ma from the nearest of %s, against a median of %s Ma by chance (p = %s, %s).",
		count(r.Events, "event"), num3(c.OldMa), num3(c.YoungMa), verdict, num3(r.StatisticMa), count(r.Onsets, "onset"),
		num3(r.NullMedianMa), FormatMonteCarloP(r.P), nullShort(c.Options.Null))
}

func nullShort(null string) string {
	if stats.CoincidenceNull(null) == stats.NullPulsesShifted {
		return "onsets shifted at random"
	}
	return "events placed at random"
}

// FormatMonteCarloP writes a Monte Carlo p-value with the digits its replicates support.
func FormatMonteCarloP(p float64) string {
	switch {
	case p < 0.001:
		return fmt.Sprintf("%.1g", p)
	case p < 0.01:
		return fmt.Sprintf("%.4f", p)
	}
	return fmt.Sprintf("%.3f", p)
}

func num3(v float64) string { return fmt.Sprintf("%.3f", v) }

// coincidenceCautions are the cautions that belong next to the number.
func coincidenceCautions(c *Coincidence) []string {
	var out []string
	how := fmt.Sprintf("chosen by hand (%s–%s Ma)", num3(c.OldMa), num3(c.YoungMa))
	if c.AutoWindow {
		how = fmt.Sprintf("chosen automatically (%s–%s Ma): from the oldest to the youngest of the provinces' density windows, the events' 95 %% ranges and the onsets", num3(c.OldMa), num3(c.YoungMa))
	}
	out = append(out, "The window decides the answer and is "+how+". A window drawn after looking at the events and pulses, tight around them, favours coincidence; a wide one that takes in long quiet stretches does too, since by chance events then land far from any onset. Choose it from the question before looking, and try others.")
	perSection := map[string]int{}
	for _, n := range c.Nearest {
		if n.Event.Section != "" {
			perSection[n.Event.Section]++
		}
	}
	var shared []string
	for _, s := range slices.Sorted(maps.Keys(perSection)) {
		if perSection[s] > 1 {
			shared = append(shared, fmt.Sprintf("%s (%d)", s, perSection[s]))
		}
	}
	if len(shared) > 0 {
		out = append(out, "Events of one section are not independent: they share its age model, and several may record one happening. The test counts every event as independent, so p is too small if they do. Several events come from "+strings.Join(shared, ", ")+"; choose one event per happening (events or sections) to test that.")
	}
	if n := len(c.Nearest); n > 0 && n < FewCoincidenceEvents {
		out = append(out, fmt.Sprintf("Only %s: the test has little power, and a large p says little about whether they coincide.", count(n, "event")))
	}
	if c.Options.Null == string(stats.NullEventsUniform) && len(c.Nearest) > 1 {
		out = append(out, "Placing the events at random one by one ignores that events cluster in time (one happening recorded in several sections, or by several proxies): a cluster near an onset then looks like many coincidences. Shifting the onsets instead keeps the events' clustering and asks a more modest question; compare the two.")
	}
	if c.Options.Null == string(stats.NullPulsesShifted) && len(c.Onsets) > 0 {
		out = append(out, "With the onsets shifted, the smallest p the test can give is about the share of the window over which a shift brings the onsets as close as they are, however many replicates are drawn.")
	}
	out = append(out, "The answer depends on the models behind the ages: the onsets are the older edges of the pulses of each province's reference density (they move with the bandwidth, the calibration and which dates enter, and the edges of small pulses are optimistic), and the event ages come from the sections' age models. "+carried(c.Options))
	if len(c.EventsOutside) > 0 || len(c.OnsetsOutside) > 0 {
		out = append(out, fmt.Sprintf("Left out as outside the window: %s and %s.", count(len(c.EventsOutside), "event"), count(len(c.OnsetsOutside), "onset")))
	}
	return out
}

// carried says which uncertainties the replicates carry.
func carried(o CoincidenceOptions) string {
	switch {
	case o.DrawAges && o.DrawOnsets:
		return "Both the events' ages and the onsets are drawn in every replicate (the onsets from one bootstrap replicate of each province's density), so p averages over both; averaging makes the test conservative."
	case o.DrawOnsets:
		return "The onsets are drawn in every replicate (from one bootstrap replicate of each province's density); the events are taken at their median ages."
	case o.DrawAges:
		return "The onsets are taken as known (those of the reference density; they can be drawn from the bootstrap instead); only the events' age uncertainty is carried."
	}
	return "The onsets and the event ages are taken as known: no age uncertainty is carried."
}
