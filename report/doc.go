package report

// The report is first built as a small document model (headings,
// paragraphs, tables, figures) and then rendered: to PDF by the layout
// engine in pdf.go, to CSV and Markdown by text.go. The same model feeds
// every format, so the three carry the same tables.

// document is a whole report.
type document struct {
	Title       string
	Author      string
	Affiliation string
	Date        string
	// Summary is the key–value list on the title page.
	Summary []kv
	// Fingerprint is the hex SHA-256 printed in every page footer.
	Fingerprint string
	Blocks      []block
}

// kv is one entry of a key–value list.
type kv struct {
	Key   rich
	Value rich
}

// block is one element of the document's flow.
type block interface{ isBlock() }

// heading opens a section. Level 1 headings start a new page when Break is set.
type heading struct {
	Level  int
	Number string
	// Prefix stands before the number in the body ("Appendix "), not in the contents.
	Prefix string
	Text   rich
	Break  bool
}

// paragraph is running text.
type paragraph struct {
	Text rich
	// Small sets the paragraph in the note size.
	Small bool
}

// kvList is a key–value list set as two columns.
type kvList struct {
	Items []kv
	// KeyWidth is the key column width in pt (0: measured).
	KeyWidth float64
}

// align is a table column's alignment.
type align byte

const (
	alignLeft    align = 'l'
	alignRight   align = 'r'
	alignCentre  align = 'c'
	alignDecimal align = 'd'
)

// colGroup is a header label spanning columns From..To (inclusive).
type colGroup struct {
	Label    rich
	From, To int
}

// cell is one table entry. Lines holds one or more lines of typeset text;
// Raw, when set, is the machine-readable value used by CSV.
type cell struct {
	Lines []rich
	Raw   string
}

// table is a numbered table with caption, header, rows and notes.
type table struct {
	// Name is the short machine name used as the CSV section title.
	Name    string
	Number  int
	Caption rich
	Groups  []colGroup
	Head    []rich
	Align   []align
	Rows    []row
	// Key is the number of leading columns repeated when a table too wide
	// for the page is split into parts.
	Key   int
	Notes []rich
	// Mono marks columns set in the monospaced face (hashes).
	Mono []bool
	// Wrap gives a column's greatest width in pt; longer text wraps (0: never).
	Wrap []float64
}

// row is one table row; Rule draws a light rule above it (a new group).
type row struct {
	Cells []cell
	Rule  bool
}

// figure is a numbered figure of one or more plot panels side by side.
type figure struct {
	Number  int
	Caption rich
	Panels  []panel
	// Height of the plot area in pt.
	Height float64
}

// panel is one plot.
type panel interface{ isPanel() }

// pageBreak forces a new page.
type pageBreak struct{}

func (heading) isBlock()   {}
func (paragraph) isBlock() {}
func (kvList) isBlock()    {}
func (*table) isBlock()    {}
func (*figure) isBlock()   {}
func (pageBreak) isBlock() {}
