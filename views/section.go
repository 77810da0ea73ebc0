package views

// SectionView is the page of one section: its fields, the controls of the analysis (all in the URL),
// cautions, the figure, and blocks of results (host phase, anomalies, change points, age model, tables).
type SectionView struct {
	Page
	Intro         string
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
