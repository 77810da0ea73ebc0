package views

// SectionView is the page of one section: its fields, the controls of the analysis (all in the URL),
// cautions, the figure, and blocks of results (host phase, anomalies, change points, age model, tables).
type SectionView struct {
	Page
	Intro         string
	Alert         *Link // a posted form shown again with problems: what to fix, and a link to the form
	Groups        []FieldGroup
	Controls      Form
	Cautions      []string
	FigureSVG     string // a standalone <svg> element built by SectionSVG
	FigureCaption string
	FigureLinks   []Link
	Blocks        []Block
}

// Block is a titled part of a page with paragraphs, links and tables.
type Block struct {
	ID     string
	Title  string
	Paras  []string
	Links  []Link
	Tables []Table
	Forms  []PostForm // forms that change records, shown under the tables
	// How says how the block's results were computed: shown on demand, after the results.
	How []string
}

// foldRows is the length above which a block's table is folded (opened on demand, its length said).
const foldRows = 30

// PostForm is a small form that POSTs to Action: hidden fields, inputs with their errors, one button.
// Errors lists the problems not tied to one input.
type PostForm struct {
	ID     string
	Title  string
	Action string
	Hidden []KV
	Inputs []Input
	Submit string
	Errors []string
	Danger bool
	Wide   bool // lay the inputs out in a grid (a longer form), not on one line
}

// AlignedView is the page that lines all sections up on one age axis.
type AlignedView struct {
	Page
	Intro       string
	Controls    Form
	Cautions    []string
	FigureSVG   string // built by AlignedSVG
	FigureLinks []Link
	Blocks      []Block
}
