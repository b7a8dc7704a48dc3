package report

import (
	"bytes"
	"fmt"
	"io"
	"strings"
	"time"
	"unicode/utf8"

	"github.com/jung-kurt/gofpdf"
)

// Type sizes and leading in pt. The layout is our own: A4, a single text
// column, sans-serif body, three-rule tables, captions above tables and
// below figures, a running head and a footer with the report fingerprint.
const (
	bodySize  = 9.5
	bodyLead  = 13.2
	smallSize = 8
	smallLead = 10.6
	tableSize = 8.5
	tableLead = 11.6
	minTable  = 7.5
	footSize  = 7
	scriptK   = 0.7 // sub/superscript size relative to the base size
)

// colour is an RGB triple.
type colour [3]int

var (
	ink    = colour{20, 20, 24}
	accent = colour{28, 62, 104}
	grey   = colour{110, 110, 118}
	rule   = colour{170, 170, 178}
)

// renderer lays a document out on pages.
type renderer struct {
	f  *gofpdf.Fpdf
	d  *document
	pw float64 // page width, pt
	ph float64 // page height
	l  float64 // left margin
	r  float64 // right margin
	t  float64 // top of text block
	b  float64 // bottom of text block
	y  float64 // current position (top of next line)

	total int        // page count from the first pass (0 in the first pass)
	toc   []tocEntry // headings and their pages
	prev  []tocEntry // pages from the first pass, for the contents list
}

type tocEntry struct {
	Level  int
	Number string
	Text   rich
	Page   int
}

// compressStreams is always true in use; tests turn it off to read the
// page streams.
var compressStreams = true

// renderPDF lays the document out twice: the first pass counts pages and
// finds the page of every heading, the second prints "page X of Y" and the
// contents list with those numbers. Nothing in the output depends on the
// clock, map order or randomness: created fixes the PDF dates.
func renderPDF(d *document, w io.Writer, created time.Time) error {
	first, err := layout(d, 0, nil, created)
	if err != nil {
		return err
	}
	second, err := layout(d, first.f.PageNo(), first.toc, created)
	if err != nil {
		return err
	}
	if second.f.PageNo() != first.f.PageNo() {
		return fmt.Errorf("report layout: page count changed between passes (%d, then %d)", first.f.PageNo(), second.f.PageNo())
	}
	var buf bytes.Buffer
	if err := second.f.Output(&buf); err != nil {
		return fmt.Errorf("report PDF: %v", err)
	}
	_, err = w.Write(buf.Bytes())
	return err
}

func layout(d *document, total int, prev []tocEntry, created time.Time) (*renderer, error) {
	f := gofpdf.New("P", "pt", "A4", "")
	f.SetCatalogSort(true)
	f.SetCompression(compressStreams)
	f.SetCreationDate(created)
	f.SetModificationDate(created)
	f.SetAutoPageBreak(false, 0)
	f.SetTitle(d.Title, true)
	f.SetAuthor(d.Author, true)
	f.SetSubject("Supplementary information; report fingerprint sha256:"+d.Fingerprint, true)
	f.SetCreator("moltrail", true)
	f.SetProducer("moltrail report", true)
	if err := addFonts(f); err != nil {
		return nil, fmt.Errorf("report fonts: %v", err)
	}
	pw, ph := f.GetPageSize()
	r := &renderer{f: f, d: d, pw: pw, ph: ph, l: 64, r: 64, t: 74, b: ph - 64, total: total, prev: prev}
	r.titlePage()
	for _, bl := range d.Blocks {
		switch b := bl.(type) {
		case heading:
			r.heading(b)
		case paragraph:
			r.paragraph(b)
		case kvList:
			r.kvList(b)
		case *table:
			r.table(b)
		case *figure:
			r.figure(b)
		case pageBreak:
			r.newPage()
		default:
			return nil, fmt.Errorf("report layout: unknown block %T", bl)
		}
		if err := f.Error(); err != nil {
			return nil, fmt.Errorf("report layout: %v", err)
		}
	}
	return r, f.Error()
}

func (r *renderer) textW() float64 { return r.pw - r.l - r.r }

func (r *renderer) color(c colour) { r.f.SetTextColor(c[0], c[1], c[2]) }

func (r *renderer) drawColor(c colour) { r.f.SetDrawColor(c[0], c[1], c[2]) }

// newPage starts a page with the running head and the footer.
func (r *renderer) newPage() {
	r.f.AddPage()
	n := r.f.PageNo()
	if n > 1 {
		r.color(grey)
		r.f.SetFont(famText, "I", footSize+0.5)
		title := printable(r.d.Title, false)
		for r.f.GetStringWidth(title) > r.textW()*0.7 && utf8.RuneCountInString(title) > 4 {
			rs := []rune(title)
			title = string(rs[:len(rs)-5]) + "…"
		}
		r.f.Text(r.l, 46, title)
		r.f.SetFont(famText, "", footSize+0.5)
		si := "Supplementary information"
		r.f.Text(r.pw-r.r-r.f.GetStringWidth(si), 46, si)
		r.drawColor(rule)
		r.f.SetLineWidth(0.4)
		r.f.Line(r.l, 51, r.pw-r.r, 51)
	}
	// Footer: fingerprint left, page numbers right.
	r.drawColor(rule)
	r.f.SetLineWidth(0.4)
	fy := r.ph - 44
	r.f.Line(r.l, fy, r.pw-r.r, fy)
	r.color(grey)
	r.f.SetFont(famText, "", footSize)
	lab := "report fingerprint (SHA-256) "
	r.f.Text(r.l, fy+11, lab)
	lw := r.f.GetStringWidth(lab)
	r.f.SetFont(famMono, "", footSize-0.8)
	r.f.Text(r.l+lw, fy+11, r.d.Fingerprint)
	r.f.SetFont(famText, "", footSize+0.5)
	total := "?"
	if r.total > 0 {
		total = fmt.Sprint(r.total)
	}
	pg := fmt.Sprintf("page %d of %s", n, total)
	r.f.Text(r.pw-r.r-r.f.GetStringWidth(pg), fy+11, pg)
	r.color(ink)
	r.y = r.t
}

func widthOf(_ *gofpdf.Fpdf, fam, st string, size float64, s string) float64 {
	return symbolWidth(fam, st, printable(s, fam == famMono)) * size / 1000
}

// ensure starts a new page unless h pt still fit.
func (r *renderer) ensure(h float64) {
	if r.y+h > r.b {
		r.newPage()
	}
}

// atTop reports whether nothing has been set on the current page yet.
func (r *renderer) atTop() bool { return r.y <= r.t+0.01 }

// ---- rich text ----

func (r *renderer) setSpanFont(s span, size float64, boldBase bool) float64 {
	fam, st := fontOf(s.Style, boldBase)
	sz := spanSize(s, size)
	r.f.SetFont(fam, st, sz)
	return sz
}

func spanSize(s span, size float64) float64 {
	if s.Shift != base {
		return size * scriptK
	}
	return size
}

func (r *renderer) spanWidth(s span, size float64, boldBase bool) float64 {
	fam, st := fontOf(s.Style, boldBase)
	return symbolWidth(fam, st, printable(s.Text, s.Style == mono)) * spanSize(s, size) / 1000
}

func (r *renderer) width(t rich, size float64, boldBase bool) float64 {
	w := 0.0
	for _, s := range t {
		w += r.spanWidth(s, size, boldBase)
	}
	return w
}

// draw sets t with its baseline at y and returns the width used.
func (r *renderer) draw(x, y float64, t rich, size float64, boldBase bool) float64 {
	x0 := x
	for _, s := range t {
		r.setSpanFont(s, size, boldBase)
		dy := 0.0
		switch s.Shift {
		case sub:
			dy = 0.24 * size
		case sup:
			dy = -0.36 * size
		}
		t := printable(s.Text, s.Style == mono)
		if t != "" {
			r.f.Text(x, y+dy, t)
		}
		x += r.spanWidth(s, size, boldBase)
	}
	return x - x0
}

// word is a run of spans between spaces.
type word struct {
	spans rich
	w     float64
}

func (r *renderer) words(t rich, size float64, boldBase bool, maxW float64) []word {
	var out []word
	var cur word
	closeWord := func() {
		if len(cur.spans) > 0 {
			out = append(out, cur)
		}
		cur = word{}
	}
	for _, s := range t {
		parts := strings.Split(s.Text, " ")
		for i, p := range parts {
			if i > 0 {
				closeWord()
			}
			if p == "" {
				continue
			}
			sp := span{Text: p, Shift: s.Shift, Style: s.Style}
			cur.spans = append(cur.spans, sp)
			cur.w += r.spanWidth(sp, size, boldBase)
		}
	}
	closeWord()
	// Break words wider than the measure (long hashes) by characters.
	var fit []word
	for _, wd := range out {
		if wd.w <= maxW || len(wd.spans) != 1 {
			fit = append(fit, wd)
			continue
		}
		s := wd.spans[0]
		var piece []rune
		for _, c := range s.Text {
			try := span{Text: string(append(piece, c)), Shift: s.Shift, Style: s.Style}
			if r.spanWidth(try, size, boldBase) > maxW && len(piece) > 0 {
				ps := span{Text: string(piece), Shift: s.Shift, Style: s.Style}
				fit = append(fit, word{spans: rich{ps}, w: r.spanWidth(ps, size, boldBase)})
				piece = piece[:0]
			}
			piece = append(piece, c)
		}
		if len(piece) > 0 {
			ps := span{Text: string(piece), Shift: s.Shift, Style: s.Style}
			fit = append(fit, word{spans: rich{ps}, w: r.spanWidth(ps, size, boldBase)})
		}
	}
	return fit
}

// lines breaks t into lines no wider than maxW.
func (r *renderer) lines(t rich, size float64, boldBase bool, maxW float64) [][]word {
	ws := r.words(t, size, boldBase, maxW)
	sp := widthOf(r.f, famText, "", size, " ")
	var out [][]word
	var line []word
	lw := 0.0
	for _, w := range ws {
		add := w.w
		if len(line) > 0 {
			add += sp
		}
		if len(line) > 0 && lw+add > maxW {
			out = append(out, line)
			line, lw = nil, 0
			add = w.w
		}
		line = append(line, w)
		lw += add
	}
	if len(line) > 0 {
		out = append(out, line)
	}
	return out
}

// drawLine sets one line of words; justified lines spread the spaces.
func (r *renderer) drawLine(x, y float64, line []word, size float64, boldBase bool, maxW float64, justify bool) {
	sp := widthOf(r.f, famText, "", size, " ")
	if justify && len(line) > 1 {
		used := 0.0
		for _, w := range line {
			used += w.w
		}
		gap := (maxW - used) / float64(len(line)-1)
		if gap < sp*2.2 {
			sp = gap
		}
	}
	for i, w := range line {
		if i > 0 {
			x += sp
		}
		x += r.draw(x, y, w.spans, size, boldBase)
	}
}

// block sets wrapped text from the current position, breaking pages as needed.
func (r *renderer) textBlock(t rich, x, maxW, size, lead float64, boldBase, justify bool) {
	ls := r.lines(t, size, boldBase, maxW)
	for i, ln := range ls {
		r.ensure(lead)
		r.drawLine(x, r.y+size*0.95, ln, size, boldBase, maxW, justify && i < len(ls)-1)
		r.y += lead
	}
}

// ---- title page ----

func (r *renderer) titlePage() {
	r.newPage()
	d := r.d
	r.y = r.t + 40
	r.color(accent)
	r.f.SetFont(famText, "", 9)
	r.f.Text(r.l, r.y, "SUPPLEMENTARY INFORMATION")
	r.y += 14
	r.drawColor(accent)
	r.f.SetLineWidth(1.2)
	r.f.Line(r.l, r.y, r.l+60, r.y)
	r.y += 22
	for _, ln := range r.lines(txt(d.Title), 19, true, r.textW()) {
		r.drawLine(r.l, r.y+18, ln, 19, true, r.textW(), false)
		r.y += 25
	}
	r.color(ink)
	r.y += 10
	if d.Author != "" {
		r.textBlock(txt(d.Author), r.l, r.textW(), 11.5, 15, false, false)
	}
	if d.Affiliation != "" {
		r.textBlock(italicTxt(d.Affiliation), r.l, r.textW(), 10, 13.5, false, false)
	}
	if d.Date != "" {
		r.y += 4
		r.color(grey)
		r.textBlock(txt(d.Date), r.l, r.textW(), 10, 13.5, false, false)
		r.color(ink)
	}
	r.y += 26
	r.kvList(kvList{Items: d.Summary})
	if len(r.prev) > 0 || r.total == 0 {
		r.y += 18
		r.color(accent)
		r.f.SetFont(famText, "B", 10.5)
		r.f.Text(r.l, r.y+10, "Contents")
		r.color(ink)
		r.y += 20
		entries := r.prev
		if r.total == 0 {
			// First pass: reserve the same room the contents will take.
			entries = contentsOf(d)
		}
		numW := map[int]float64{}
		for _, e := range entries {
			size := bodySize
			if e.Level == 2 {
				size = bodySize - 0.5
			}
			numW[e.Level] = max(numW[e.Level], r.width(txt(e.Number), size, e.Level == 1))
		}
		for _, e := range entries {
			if e.Level > 2 {
				continue
			}
			size := bodySize
			indent := 0.0
			boldBase := e.Level == 1
			if e.Level == 2 {
				size = bodySize - 0.5
				indent = 18
			}
			r.ensure(bodyLead)
			base := r.y + size*0.95
			x := r.l + indent
			r.draw(x, base, txt(e.Number), size, boldBase)
			x += numW[e.Level] + 8
			x += r.draw(x, base, e.Text, size, boldBase)
			pg := fmt.Sprint(e.Page)
			if r.total == 0 {
				pg = "000"
			}
			pw := widthOf(r.f, famText, "", size, pg)
			px := r.pw - r.r - pw
			// dot leader
			r.f.SetFont(famText, "", size)
			dot := r.f.GetStringWidth(" . ")
			r.color(grey)
			for dx := px - dot - 4; dx > x+4; dx -= dot {
				r.f.Text(dx, base, " . ")
			}
			r.color(ink)
			r.draw(px, base, txt(pg), size, false)
			r.y += bodyLead
		}
	}
	r.newPage()
}

// contentsOf lists the headings of the document (pages unknown).
func contentsOf(d *document) []tocEntry {
	var out []tocEntry
	for _, b := range d.Blocks {
		if h, ok := b.(heading); ok {
			out = append(out, tocEntry{Level: h.Level, Number: h.Number, Text: h.Text})
		}
	}
	return out
}

// ---- flow blocks ----

func (r *renderer) heading(h heading) {
	size, before, after := 12.5, 16.0, 7.0
	if h.Level >= 2 {
		size, before, after = 10.5, 11.0, 4.0
	}
	if h.Break && !r.atTop() {
		r.newPage()
	}
	if !r.atTop() {
		r.y += before
	}
	// keep with at least three lines of what follows
	r.ensure(size*1.4 + 3*bodyLead)
	r.toc = append(r.toc, tocEntry{Level: h.Level, Number: h.Number, Text: h.Text, Page: r.f.PageNo()})
	r.color(accent)
	base := r.y + size
	x := r.l
	if h.Number != "" {
		x += r.draw(x, base, txt(h.Prefix+h.Number), size, true)
		x += size * 0.9
	}
	r.textBlockAt(h.Text, x, base, size, true)
	r.color(ink)
	r.y += size*1.4 + after
	if h.Level == 1 {
		r.drawColor(rule)
		r.f.SetLineWidth(0.4)
		r.f.Line(r.l, r.y-after+1, r.pw-r.r, r.y-after+1)
		r.y += 2
	}
}

// textBlockAt draws a single heading line (headings are short; a long one
// is wrapped into further lines below the first).
func (r *renderer) textBlockAt(t rich, x, base, size float64, boldBase bool) {
	maxW := r.pw - r.r - x
	ls := r.lines(t, size, boldBase, maxW)
	for i, ln := range ls {
		if i > 0 {
			base += size * 1.3
			r.y += size * 1.3
		}
		r.drawLine(x, base, ln, size, boldBase, maxW, false)
	}
}

func (r *renderer) paragraph(p paragraph) {
	size, lead := bodySize, bodyLead
	if p.Small {
		size, lead = smallSize, smallLead
	}
	r.textBlock(p.Text, r.l, r.textW(), size, lead, false, true)
	r.y += lead * 0.45
}

func (r *renderer) kvList(k kvList) {
	size, lead := bodySize-0.5, bodyLead-0.8
	kw := k.KeyWidth
	if kw == 0 {
		for _, it := range k.Items {
			if w := r.width(it.Key, size, true); w > kw {
				kw = w
			}
		}
		kw += 14
	}
	if kw > r.textW()*0.4 {
		kw = r.textW() * 0.4
	}
	for _, it := range k.Items {
		ls := r.lines(it.Value, size, false, r.textW()-kw)
		if len(ls) == 0 {
			ls = [][]word{nil}
		}
		r.ensure(lead * float64(min(len(ls), 3)))
		r.color(grey)
		r.draw(r.l, r.y+size*0.95, it.Key, size, true)
		r.color(ink)
		for _, ln := range ls {
			r.ensure(lead)
			r.drawLine(r.l+kw, r.y+size*0.95, ln, size, false, r.textW()-kw, false)
			r.y += lead
		}
		r.y += 1.5
	}
	r.y += bodyLead * 0.4
}

// caption sets "Table N." / "Figure N." in bold followed by the caption.
func (r *renderer) caption(label string, t rich, suffix string) {
	c := t
	if label != "" {
		c = cat(boldTxt(label), txt(" "), t)
	}
	if suffix != "" {
		c = cat(c, txt(" "), italicTxt(suffix))
	}
	r.textBlock(c, r.l, r.textW(), smallSize+0.5, smallLead+0.6, false, true)
}

func (r *renderer) figure(fg *figure) {
	capLines := len(r.lines(cat(boldTxt(fmt.Sprintf("Figure %d.", fg.Number)), txt(" "), fg.Caption), smallSize+0.5, false, r.textW()))
	need := fg.Height + 14 + float64(capLines)*(smallLead+0.6)
	if !r.atTop() {
		r.y += 8
	}
	r.ensure(need)
	n := len(fg.Panels)
	gap := 22.0
	w := (r.textW() - gap*float64(n-1)) / float64(n)
	for i, p := range fg.Panels {
		x := r.l + float64(i)*(w+gap)
		if n > 1 {
			r.color(ink)
			r.draw(x, r.y+8, boldTxt(fmt.Sprintf("(%c)", 'a'+i)), 9, true)
		}
		drawPanel(r, p, x, r.y, w, fg.Height)
	}
	r.y += fg.Height + 10
	r.caption(fmt.Sprintf("Figure %d.", fg.Number), fg.Caption, "")
	r.y += 8
}
