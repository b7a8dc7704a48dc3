package report

import (
	"fmt"
	"math"
	"strings"
)

// Tables are set in the three-rule style: a heavy rule above the header, a
// light one below it and a heavy one closing the table; no vertical lines.
// Numeric columns align on the decimal point. A table that runs past the
// page continues on the next with its caption marked "continued" and the
// header repeated; a table too wide for the text block is split into parts
// that each repeat the key columns.

const colGap = 9.0

type colMetrics struct {
	w, decL, decR float64
}

// measured is a table's cells after wrapping, at one type size.
type measured struct {
	size  float64
	cells [][][]rich // row → column → lines
	m     []colMetrics
}

func (r *renderer) measureTable(t *table, size float64) measured {
	n := len(t.Head)
	ms := measured{size: size, m: make([]colMetrics, n)}
	for j := 0; j < n; j++ {
		ms.m[j].w = r.width(t.Head[j], size, true)
	}
	// A wrapping column is at least as wide as its longest word (up to
	// 1.5 times its set width), so that words break only when they must.
	wrapW := make([]float64, n)
	for j := 0; j < n && j < len(t.Wrap); j++ {
		if t.Wrap[j] <= 0 {
			continue
		}
		wrapW[j] = t.Wrap[j]
		for _, rw := range t.Rows {
			if j >= len(rw.Cells) {
				continue
			}
			for _, ln := range rw.Cells[j].Lines {
				if j < len(t.Mono) && t.Mono[j] {
					ln = toMono(ln)
				}
				for _, w := range r.words(ln, size, false, math.Inf(1)) {
					wrapW[j] = max(wrapW[j], min(w.w, 1.5*t.Wrap[j]))
				}
			}
		}
	}
	ms.cells = make([][][]rich, len(t.Rows))
	for i, rw := range t.Rows {
		ms.cells[i] = make([][]rich, n)
		for j := 0; j < n && j < len(rw.Cells); j++ {
			var lines []rich
			for _, ln := range rw.Cells[j].Lines {
				if j < len(t.Mono) && t.Mono[j] {
					ln = toMono(ln)
				}
				if wrapW[j] > 0 {
					for _, wl := range r.lines(ln, size, false, wrapW[j]) {
						lines = append(lines, joinWords(wl))
					}
					continue
				}
				lines = append(lines, ln)
			}
			ms.cells[i][j] = lines
			for _, ln := range lines {
				w := r.width(ln, size, false)
				if alignOf(t, j) == alignDecimal {
					l := decimalLeft(r, ln, size)
					ms.m[j].decL = max(ms.m[j].decL, l)
					ms.m[j].decR = max(ms.m[j].decR, w-l)
				} else if w > ms.m[j].w {
					ms.m[j].w = w
				}
			}
		}
	}
	for j := range ms.m {
		ms.m[j].w = max(ms.m[j].w, ms.m[j].decL+ms.m[j].decR)
	}
	// a group label wider than its columns widens the last of them
	for _, g := range t.Groups {
		if g.From < 0 || g.To >= n || g.To < g.From {
			continue
		}
		span := 0.0
		for j := g.From; j <= g.To; j++ {
			span += ms.m[j].w
		}
		span += colGap * float64(g.To-g.From)
		if lw := r.width(g.Label, size, true); lw > span {
			extra := (lw - span) / float64(g.To-g.From+1)
			for j := g.From; j <= g.To; j++ {
				ms.m[j].w += extra
			}
		}
	}
	return ms
}

func toMono(t rich) rich {
	out := make(rich, len(t))
	for i, s := range t {
		if s.Style == plain {
			s.Style = mono
		}
		out[i] = s
	}
	return out
}

// joinWords turns a wrapped line back into rich text.
func joinWords(ws []word) rich {
	var out rich
	for i, w := range ws {
		if i > 0 {
			out = append(out, span{Text: " "})
		}
		out = append(out, w.spans...)
	}
	return out
}

func alignOf(t *table, j int) align {
	if j < len(t.Align) {
		return t.Align[j]
	}
	return alignLeft
}

// decimalLeft is the width of a number's text before its decimal point
// (the whole text when it has none).
func decimalLeft(r *renderer, t rich, size float64) float64 {
	w := 0.0
	for _, s := range t {
		if s.Shift == base {
			if i := strings.IndexByte(s.Text, '.'); i >= 0 {
				return w + r.spanWidth(span{Text: s.Text[:i], Style: s.Style}, size, false)
			}
		}
		w += r.spanWidth(s, size, false)
	}
	return w
}

func widthOfCols(m []colMetrics, cols []int) float64 {
	w := 0.0
	for _, j := range cols {
		w += m[j].w
	}
	return w + colGap*float64(max(len(cols)-1, 0))
}

func (r *renderer) table(t *table) {
	all := make([]int, len(t.Head))
	for j := range all {
		all[j] = j
	}
	var ms measured
	for _, size := range []float64{tableSize, 8, minTable} {
		ms = r.measureTable(t, size)
		if w := widthOfCols(ms.m, all); w <= r.textW() {
			// Give spare width to wrapped columns whose text did wrap.
			if grown, ok := r.growWraps(t, ms, r.textW()-w); ok {
				if m2 := r.measureTable(grown, size); widthOfCols(m2.m, all) <= r.textW() {
					r.tablePart(grown, all, m2, "")
					return
				}
			}
			r.tablePart(t, all, ms, "")
			return
		}
	}
	// Narrow the wrapping columns (to no less than 60 pt) before splitting.
	if over := widthOfCols(ms.m, all) - r.textW(); over > 0 {
		room := 0.0
		for j := range t.Head {
			if j < len(t.Wrap) && t.Wrap[j] > 0 {
				room += max(ms.m[j].w-60, 0)
			}
		}
		if room >= over {
			nt := *t
			nt.Wrap = append([]float64(nil), t.Wrap...)
			for j := range nt.Wrap {
				if nt.Wrap[j] > 0 {
					nt.Wrap[j] = ms.m[j].w - max(ms.m[j].w-60, 0)*over/room - 0.5
				}
			}
			if m2 := r.measureTable(&nt, minTable); widthOfCols(m2.m, all) <= r.textW() {
				r.tablePart(&nt, all, m2, "")
				return
			}
		}
	}
	parts := splitColumns(t, ms.m, r.textW())
	for i, cols := range parts {
		suffix := ""
		if len(parts) > 1 {
			suffix = fmt.Sprintf("(part %d of %d)", i+1, len(parts))
		}
		r.tablePart(t, cols, ms, suffix)
	}
}

// splitColumns packs the non-key columns into parts no wider than maxW
// with the key columns in front; a column group is never cut.
func splitColumns(t *table, m []colMetrics, maxW float64) [][]int {
	n := len(t.Head)
	key := min(t.Key, n)
	var units [][]int
	for j := key; j < n; {
		u := []int{j}
		for _, g := range t.Groups {
			if g.From == j && g.To >= j && g.To < n {
				u = nil
				for k := g.From; k <= g.To; k++ {
					u = append(u, k)
				}
			}
		}
		units = append(units, u)
		j += len(u)
	}
	var keys []int
	for j := 0; j < key; j++ {
		keys = append(keys, j)
	}
	var parts [][]int
	cur := append([]int(nil), keys...)
	for _, u := range units {
		try := append(append([]int(nil), cur...), u...)
		if len(cur) > len(keys) && widthOfCols(m, try) > maxW {
			parts = append(parts, cur)
			cur = append(append([]int(nil), keys...), u...)
			continue
		}
		cur = try
	}
	if len(cur) > len(keys) || len(parts) == 0 {
		parts = append(parts, cur)
	}
	return parts
}

func (r *renderer) tablePart(t *table, cols []int, ms measured, suffix string) {
	size := ms.size
	lead := size * 1.36
	tw := widthOfCols(ms.m, cols)
	x0 := r.l
	if tw < r.textW() {
		x0 = r.l + (r.textW()-tw)/2
	}
	xs := make(map[int]float64, len(cols))
	x := x0
	for _, j := range cols {
		xs[j] = x
		x += ms.m[j].w + colGap
	}
	label := ""
	if t.Number > 0 {
		label = fmt.Sprintf("Table %d.", t.Number)
	}
	capH := float64(len(r.lines(cat(boldTxt(label), txt(" "), t.Caption, txt(" "+suffix)), smallSize+0.5, false, r.textW()))) * (smallLead + 0.6)
	groups := groupsIn(t, cols)
	headH := lead + 6
	if len(groups) > 0 {
		headH += lead + 2
	}
	rowsH := 0.0
	for i := 0; i < len(t.Rows) && i < 3; i++ {
		rowsH += rowHeight(ms.cells[i], cols, lead)
	}
	if !r.atTop() {
		r.y += 8
	}
	// A short table is kept whole on one page; a long one starts where it
	// can show its header and a few rows.
	full := capH + headH + 8
	for i := range t.Rows {
		full += rowHeight(ms.cells[i], cols, lead)
	}
	for _, n := range t.Notes {
		full += float64(len(r.lines(n, smallSize-0.5, false, r.textW()))) * (smallLead - 0.6)
	}
	if full < (r.b-r.t)*0.45 {
		r.ensure(full)
	} else {
		r.ensure(capH + headH + rowsH + 8)
	}
	r.caption(label, t.Caption, suffix)
	r.y += 2

	head := func() {
		r.drawColor(ink)
		r.f.SetLineWidth(0.9)
		r.f.Line(x0, r.y, x0+tw, r.y)
		r.y += 2
		if len(groups) > 0 {
			for _, g := range groups {
				gx0 := xs[g.From]
				gx1 := xs[g.To] + ms.m[g.To].w
				lw := r.width(g.Label, size, true)
				r.draw((gx0+gx1)/2-lw/2, r.y+size*0.95, g.Label, size, true)
				r.f.SetLineWidth(0.4)
				r.f.Line(gx0+1, r.y+lead, gx1-1, r.y+lead)
			}
			r.y += lead + 2
		}
		for _, j := range cols {
			h := t.Head[j]
			w := r.width(h, size, true)
			hx := xs[j]
			switch alignOf(t, j) {
			case alignRight, alignDecimal:
				hx += ms.m[j].w - w
			case alignCentre:
				hx += (ms.m[j].w - w) / 2
			}
			r.draw(hx, r.y+size*0.95, h, size, true)
		}
		r.y += lead + 1
		r.f.SetLineWidth(0.5)
		r.f.Line(x0, r.y, x0+tw, r.y)
		r.y += 2.5
	}
	head()
	for i, rw := range t.Rows {
		rh := rowHeight(ms.cells[i], cols, lead)
		if r.y+rh > r.b-3 {
			r.drawColor(ink)
			r.f.SetLineWidth(0.5)
			r.f.Line(x0, r.y+1, x0+tw, r.y+1)
			r.newPage()
			r.caption(label, t.Caption, strings.TrimSpace("(continued) "+suffix))
			r.y += 2
			head()
		} else if rw.Rule && i > 0 {
			r.drawColor(rule)
			r.f.SetLineWidth(0.3)
			r.f.Line(x0, r.y, x0+tw, r.y)
			r.drawColor(ink)
		}
		for _, j := range cols {
			m := ms.m[j]
			for li, ln := range ms.cells[i][j] {
				w := r.width(ln, size, false)
				cx := xs[j]
				switch alignOf(t, j) {
				case alignRight:
					cx += m.w - w
				case alignCentre:
					cx += (m.w - w) / 2
				case alignDecimal:
					cx += m.w - (m.decL + m.decR) + m.decL - decimalLeft(r, ln, size)
				}
				r.draw(cx, r.y+size*0.95+float64(li)*lead, ln, size, false)
			}
		}
		r.y += rh
	}
	r.drawColor(ink)
	r.f.SetLineWidth(0.9)
	r.f.Line(x0, r.y+1, x0+tw, r.y+1)
	r.y += 5
	for _, n := range t.Notes {
		r.textBlock(n, r.l, r.textW(), smallSize-0.5, smallLead-0.6, false, true)
	}
	r.y += 6
}

func rowHeight(cells [][]rich, cols []int, lead float64) float64 {
	n := 1
	for _, j := range cols {
		if j < len(cells) {
			n = max(n, len(cells[j]))
		}
	}
	return float64(n)*lead + 1.5
}

// groupsIn returns the column groups wholly inside cols.
func groupsIn(t *table, cols []int) []colGroup {
	in := make(map[int]bool, len(cols))
	for _, j := range cols {
		in[j] = true
	}
	var out []colGroup
	for _, g := range t.Groups {
		ok := g.From <= g.To
		for j := g.From; j <= g.To && ok; j++ {
			ok = in[j]
		}
		if ok {
			out = append(out, g)
		}
	}
	return out
}

// growWraps widens the wrapping columns that wrapped by a share of spare pt.
func (r *renderer) growWraps(t *table, ms measured, spare float64) (*table, bool) {
	if spare < 2 {
		return nil, false
	}
	wrapped := make([]bool, len(t.Head))
	total := 0.0
	for j := range t.Head {
		if j >= len(t.Wrap) || t.Wrap[j] <= 0 {
			continue
		}
		for i, rw := range t.Rows {
			if j < len(rw.Cells) && len(ms.cells[i][j]) > len(rw.Cells[j].Lines) {
				wrapped[j] = true
				total += t.Wrap[j]
				break
			}
		}
	}
	if total == 0 {
		return nil, false
	}
	nt := *t
	nt.Wrap = append([]float64(nil), t.Wrap...)
	for j, w := range wrapped {
		if w {
			nt.Wrap[j] = ms.m[j].w + (spare-1)*t.Wrap[j]/total
		}
	}
	return &nt, true
}
