package report

import (
	"bufio"
	"encoding/csv"
	"fmt"
	"io"
	"strings"
)

// renderCSV writes every table: a title row, the header, the rows and an
// empty line. Numbers use ASCII signs so that spreadsheets read them.
func renderCSV(d *document, w io.Writer) error {
	cw := csv.NewWriter(w)
	write := func(rec []string) error { return cw.Write(rec) }
	if err := write([]string{"report", d.Title, "fingerprint", d.Fingerprint}); err != nil {
		return err
	}
	cw.Write(nil)
	for _, bl := range d.Blocks {
		t, ok := bl.(*table)
		if !ok {
			continue
		}
		if err := write([]string{"table", t.Name, captionText(t)}); err != nil {
			return err
		}
		head := make([]string, len(t.Head))
		for j, h := range t.Head {
			head[j] = headText(t, j, h)
		}
		write(head)
		for _, r := range t.Rows {
			rec := make([]string, len(t.Head))
			for j := range rec {
				if j < len(r.Cells) {
					rec[j] = cellRaw(r.Cells[j])
				}
			}
			write(rec)
		}
		for _, n := range t.Notes {
			write([]string{"note", n.Plain()})
		}
		write([]string{})
	}
	cw.Flush()
	return cw.Error()
}

// headText prefixes a column head with its group label ("MP2/cc-pVDZ r / Å").
func headText(t *table, j int, h rich) string {
	s := h.Plain()
	for _, g := range t.Groups {
		if j >= g.From && j <= g.To {
			return g.Label.Plain() + " " + s
		}
	}
	return s
}

func captionText(t *table) string {
	s := t.Caption.Plain()
	if t.Number > 0 {
		s = fmt.Sprintf("Table %d. %s", t.Number, s)
	}
	return s
}

func cellRaw(c cell) string {
	if c.Raw != "" || len(c.Lines) == 0 {
		return c.Raw
	}
	var parts []string
	for _, l := range c.Lines {
		parts = append(parts, l.Plain())
	}
	return strings.Join(parts, " ")
}

func cellHTML(c cell) string {
	var parts []string
	for _, l := range c.Lines {
		parts = append(parts, l.HTML())
	}
	return strings.Join(parts, "<br>")
}

// renderMarkdown writes headings, text and tables in GitHub-flavoured Markdown.
func renderMarkdown(d *document, w io.Writer) error {
	bw := bufio.NewWriter(w)
	p := func(format string, a ...any) { fmt.Fprintf(bw, format, a...) }
	p("# %s\n\n", htmlEscape(d.Title))
	for _, s := range []string{d.Author, d.Affiliation, d.Date} {
		if s != "" {
			p("%s  \n", htmlEscape(s))
		}
	}
	p("\n")
	for _, it := range d.Summary {
		p("- **%s:** %s\n", it.Key.HTML(), it.Value.HTML())
	}
	p("\n")
	for _, bl := range d.Blocks {
		switch b := bl.(type) {
		case heading:
			n := b.Number
			if n != "" {
				n = b.Prefix + n + " "
			}
			p("%s %s%s\n\n", strings.Repeat("#", b.Level+1), n, b.Text.HTML())
		case paragraph:
			p("%s\n\n", b.Text.HTML())
		case kvList:
			for _, it := range b.Items {
				p("- **%s:** %s\n", it.Key.HTML(), it.Value.HTML())
			}
			p("\n")
		case *table:
			cap := b.Caption.HTML()
			if b.Number > 0 {
				cap = fmt.Sprintf("**Table %d.** %s", b.Number, cap)
			}
			p("%s\n\n", cap)
			p("|")
			for j, h := range b.Head {
				s := h.HTML()
				for _, g := range b.Groups {
					if j >= g.From && j <= g.To {
						s = g.Label.HTML() + " " + s
					}
				}
				p(" %s |", s)
			}
			p("\n|")
			for j := range b.Head {
				switch alignOf(b, j) {
				case alignRight, alignDecimal:
					p(" ---: |")
				case alignCentre:
					p(" :---: |")
				default:
					p(" --- |")
				}
			}
			p("\n")
			for _, r := range b.Rows {
				p("|")
				for j := range b.Head {
					s := ""
					if j < len(r.Cells) {
						s = cellHTML(r.Cells[j])
					}
					p(" %s |", s)
				}
				p("\n")
			}
			p("\n")
			for _, n := range b.Notes {
				p("%s\n\n", n.HTML())
			}
		case *figure:
			p("*Figure %d (in the PDF edition).* %s\n\n", b.Number, b.Caption.HTML())
		case pageBreak:
		}
	}
	p("---\nReport fingerprint (SHA-256): `%s`\n", d.Fingerprint)
	return bw.Flush()
}
