package views

import "fmt"

// CompareView is the comparison page: pulses of a province against events of the sedimentary record.
type CompareView struct {
	Page
	Intro     string
	Form      *Form
	LevelHelp []KV     // what each uncertainty level draws
	Status    []KV     // seed, draws, level, δ, data stamp, computing time
	Changed   string   // a saved comparison whose data have changed since it was saved
	Cautions  []string // shown above the table
	SVG       string
	Caption   string
	Table     Table      // pulse × event
	Events    Table      // the events with their ages and volume fractions
	Order     Precedence // which came first: the decisive pairs in sentences and the shaded grid
	Notes     []string
	How       []How // how each row was computed; the table's numbers link here
	Save      *SaveForm
	// Method is how the comparison is made, shown on demand after the results; Contents lists the page's
	// parts (only their ID and Title are used).
	Method   []string
	Contents []Block
}

// How is the account of how one row of the comparison table was computed.
type How struct {
	ID    string
	Title string
	Lines []KV
}

// SaveForm saves the comparison's settings under a name (POST).
type SaveForm struct {
	Action string
	Query  string
	Name   string
	Error  string
	// Releases, when any, are offered to pin the saved comparison to (computed on that release's data).
	Releases []Option
}

// SavedView lists the saved comparisons.
type SavedView struct {
	Page
	Intro string
	Table Table
}

// Precedence is which came first between a comparison's items: the decisive pairs in sentences (More:
// those folded), and a compact grid of every pair shaded by its probability, with its legend.
type Precedence struct {
	ID, Title  string
	Intro      string
	Sentences  []string
	More       []string
	Grid       Table
	Legend     []LegendStep
	LegendNote string
	Notes      []string
}

// LegendStep is one shade of a legend: its class and what it stands for.
type LegendStep struct {
	Class, Label string
}

func moreSaid(n int) string {
	if n == 1 {
		return "1 more decisive pair"
	}
	return fmt.Sprint(n) + " more decisive pairs"
}

func startAfter(n int) string { return fmt.Sprint(n + 1) }
