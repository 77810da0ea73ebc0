// Package views renders coeval's pages with templ from plain view models. It never calls the store or
// the numerics: web builds the view models (already formatted, with their units and σ levels) and views
// only lays them out. It imports no other package of coeval.
package views

// Link is a labelled URL.
type Link struct {
	Label string
	URL   string
}

// Page is what every page has: its title, the active section of the navigation, breadcrumbs, the
// downloads of what it shows, and the banner shown while the compilation holds the invented demo.
type Page struct {
	User      string // signed-in account, "" when anonymous
	Role      string
	UserLinks []Link // what the account may open (import, account, administration)
	Title     string
	Subtitle  string
	Nav       string
	Crumbs    []Link
	Downloads []Link
	Demo      string
	ReadOnly  string // a banner: the database cannot be written
	// Release names the release a page shows the compilation as of ("" for the current compilation);
	// CurrentURL is the same page in the current compilation.
	Release    string
	CurrentURL string
	// Done confirms what the form that led here did ("Saved."), once.
	Done string
}

// Stat is one figure of the home page.
type Stat struct {
	Label string
	Value string
	URL   string
}

// Home is the home page: what is in the compilation.
type Home struct {
	// Citation is the latest release's citation, ready to copy, with its page ("" when none was cut).
	Citation    string
	CitationURL string
	Page
	Stats     []Stat
	Provinces Table
	Sections  Table
	Latest    Table
}

// Cell is one cell of a table. Num right-aligns it with tabular figures; Class adds a style such as
// "pending" or "caution"; Title is shown on hover.
type Cell struct {
	Swatch string // a colour (#rrggbb) shown as a small square before the text
	Text   string
	URL    string
	Num    bool
	Class  string
	Title  string
}

// Column is a table header; SortURL makes it a sort link, Sorted marks the active sort ("asc"/"desc").
type Column struct {
	Label   string
	Unit    string
	Num     bool
	SortURL string
	Sorted  string
	Title   string
}

// Table is a table with an optional caption and notes under it.
type Table struct {
	ID      string
	Caption string
	Columns []Column
	Rows    [][]Cell
	Notes   []string
	Empty   string
}

// Option is a choice of a select field.
type Option struct {
	Value    string
	Label    string
	Selected bool
}

// Field is a field of a filter form.
type Field struct {
	Name        string
	Label       string
	Kind        string // "select", "text", "number"
	Value       string
	Options     []Option
	Placeholder string
	Step        string
	More        bool // a rarely used choice: folded under "More choices" in the form
}

// Form is a GET filter form whose fields all live in the URL.
type Form struct {
	Action string
	Fields []Field
	Reset  string
}

// HasMore says whether some of the form's choices are folded under "More choices".
func (f Form) HasMore() bool {
	for _, fd := range f.Fields {
		if fd.More {
			return true
		}
	}
	return false
}

// fieldsWhere are the fields that are folded (more) or shown.
func fieldsWhere(fs []Field, more bool) []Field {
	var out []Field
	for _, fd := range fs {
		if fd.More == more {
			out = append(out, fd)
		}
	}
	return out
}

// Pager links the pages of a long list.
type Pager struct {
	Summary string
	Prev    string
	Next    string
}

// List is a page that lists records, filtered, sorted and paged on the server.
type List struct {
	Page
	Intro string
	Form  *Form
	Table Table
	Pager *Pager
	How   []string // the method behind the table, shown on demand after it
}

// FieldGroup is a titled group of label–value pairs of a record.
type FieldGroup struct {
	Title  string
	Fields []KV
}

// KV is one label–value pair; URL links the value.
type KV struct {
	Label string
	Value string
	URL   string
	Class string
}

// Detail is the page of one record: its fields, then related tables. Form, when set, holds the display
// choices of the page (shown under the intro); Notes are paragraphs shown under the form.
type Detail struct {
	Page
	Answer  string // the page's answer in one sentence, shown first
	Intro   string
	Form    *Form
	Notes   []string
	Groups  []FieldGroup
	Tables  []Table
	Links   []Link
	Actions []Action
}

// Action is a button that POSTs to URL with hidden fields (and, when Reason is set, a text box of that
// label for the reason).
type Action struct {
	Label  string
	URL    string
	Hidden []KV
	Reason string
	Danger bool
}

// ErrorView is the page shown for an error the user can act on (or a generic one for internal errors).
type ErrorView struct {
	Page
	Status  int
	Message string
	Details []string
	// Settings, when set, are the refused page's settings as a form to correct and send again (GET to
	// SettingsAction), each with its problem beside it.
	Settings       []Input
	SettingsAction string
}

// Login is the sign-in page.
type Login struct {
	Page
	Next    string
	Name    string
	Message string
	Hint    string
}

// Input is one field of an editing form, with the error of its last submission.
type Input struct {
	Name    string
	Label   string
	Kind    string // "text", "number", "select", "textarea", "password", "file", "choice" (text with Options offered as it is typed)
	Value   string
	Options []Option
	Help    string
	Error   string
}

// Edit is a page with a POST form that creates or changes a record; Errors lists the problems that are
// not tied to one field.
type Edit struct {
	Page
	Intro     string
	Links     []Link // related pages, shown under the intro (e.g. the file formats of an upload)
	Action    string
	Multipart bool
	Hidden    []KV
	Inputs    []Input
	Submit    string
	Errors    []string
	Tables    []Table
	Actions   []Action
}
