package store

// Term is one entry of a controlled vocabulary: the stable code stored and exchanged in CSV, and the label
// shown to people.
type Term struct {
	Code  string
	Label string
}

// Method is a dating method with the decay system whose constants its ages depend on ("" when none).
type Method struct {
	Term
	DecaySystem string
}

// Decay systems shared by methods: dates of one system share decay-constant uncertainty.
const (
	SystemUPb  = "U–Pb"
	SystemKAr  = "⁴⁰K–⁴⁰Ar" // ⁴⁰Ar/³⁹Ar and K–Ar share the ⁴⁰K decay constant
	SystemReOs = "Re–Os"
)

// Methods lists the dating methods a date may have, in display order.
func Methods() []Method {
	return []Method{
		{Term{"upb_idtims", "U–Pb ID-TIMS"}, SystemUPb},
		{Term{"upb_laicpms", "U–Pb LA-ICP-MS"}, SystemUPb},
		{Term{"upb_sims", "U–Pb SIMS"}, SystemUPb},
		{Term{"arar_plateau", "⁴⁰Ar/³⁹Ar plateau"}, SystemKAr},
		{Term{"arar_isochron", "⁴⁰Ar/³⁹Ar isochron"}, SystemKAr},
		{Term{"kar", "K–Ar"}, SystemKAr},
		{Term{"reos", "Re–Os"}, SystemReOs},
		{Term{"astro", "astrochronologic"}, ""},
		{Term{"biostrat", "biostratigraphic"}, ""},
		{Term{"other", "other"}, ""},
	}
}

// methods is Methods made once: MethodByCode is asked for every date a timeline draws.
var methods = Methods()

// MethodByCode returns the method with that code.
func MethodByCode(code string) (Method, bool) {
	for _, m := range methods {
		if m.Code == code {
			return m, true
		}
	}
	return Method{}, false
}

// IsArAr reports whether a method's ages depend on a neutron-fluence monitor (⁴⁰Ar/³⁹Ar).
func IsArAr(method string) bool { return method == "arar_plateau" || method == "arar_isochron" }

// Interpretations lists what a date is taken to date.
func Interpretations() []Term {
	return []Term{
		{"eruption", "eruption / emplacement"},
		{"crystallisation", "crystallisation"},
		{"deposition", "deposition"},
		{"maximum", "maximum age"},
		{"minimum", "minimum age"},
	}
}

// UnitKinds lists the kinds of eruptive or intrusive unit.
func UnitKinds() []Term {
	return []Term{{"flow", "lava flow"}, {"flow_group", "flow group"}, {"sill", "sill"}, {"dyke", "dyke"},
		{"formation", "formation"}, {"other", "other"}}
}

// SectionKinds lists the kinds of section.
func SectionKinds() []Term { return []Term{{"outcrop", "outcrop"}, {"core", "core"}} }

// ReviewStates lists the review states of a contributed record (the ReviewState constants, with labels).
func ReviewStates() []Term {
	return []Term{{string(ReviewPending), "pending review"}, {string(ReviewAccepted), "accepted"}, {string(ReviewRejected), "rejected"}}
}

// TieKinds lists the kinds of tie point.
func TieKinds() []Term {
	return []Term{{"radiometric", "radiometric"}, {"biostratigraphic", "biostratigraphic"},
		{"astrochronologic", "astrochronologic"}, {"boundary", "boundary"}, {"other", "other"}}
}

// EventKinds lists the kinds of sedimentary event.
func EventKinds() []Term {
	return []Term{{"hg_anomaly", "Hg anomaly"}, {"cie_onset", "CIE onset"}, {"cie", "carbon-isotope excursion"},
		{"extinction", "extinction horizon"}, {"boundary", "boundary"}, {"anoxia", "anoxic interval"},
		{"other", "other"}}
}

// Label returns the label of code in terms, or code itself when it is unknown. Codes may be typed
// (a ReviewState).
func Label[S ~string](terms []Term, code S) string {
	for _, t := range terms {
		if t.Code == string(code) {
			return t.Label
		}
	}
	return string(code)
}

func codes(terms []Term) []string {
	out := make([]string, len(terms))
	for i, t := range terms {
		out[i] = t.Code
	}
	return out
}

func methodCodes() []string {
	ms := Methods()
	out := make([]string, len(ms))
	for i, m := range ms {
		out[i] = m.Code
	}
	return out
}
