package report

import (
	"math"
	"sort"
	"strconv"
	"strings"

	"github.com/jung-kurt/gofpdf"
)

type pt = gofpdf.PointType

// Plots are drawn as vector graphics with gofpdf's primitives: lines,
// circles, polygons and text. Every size is in pt; the smallest text in a
// plot is 8 pt so that a printed figure stays legible.

const (
	plotText  = 8   // tick labels, legends, category labels
	plotLabel = 8.5 // axis titles
)

// Level i is drawn in palette[i] with marker shape i, in every plot, so a
// level keeps one look throughout the document and stays tellable apart
// in greyscale print.
var palette = []colour{
	{28, 62, 104}, {196, 98, 45}, {46, 125, 90}, {128, 70, 140},
	{160, 128, 28}, {84, 84, 92}, {176, 56, 80}, {36, 136, 156},
}

type marker int

const (
	mCircle marker = iota
	mSquare
	mTriangle
	mDiamond
	mTriangleDown
	nMarkers
)

// stripPanel shows the signed deviations of each level as points over a
// box of the quartiles, with a zero line.
type stripPanel struct {
	YLabel rich
	Cats   []string
	// Style gives each category's palette/marker index.
	Style []int
	Vals  [][]float64
	// Flag marks points with a caution; they are drawn hollow.
	Flag [][]bool
}

// scatterPanel shows computed against reference values with the line y = x.
type scatterPanel struct {
	XLabel, YLabel rich
	Series         []series
}

type series struct {
	Name  string
	Style int
	X, Y  []float64
}

func (stripPanel) isPanel()   {}
func (scatterPanel) isPanel() {}

func drawPanel(r *renderer, p panel, x, y, w, h float64) {
	switch p := p.(type) {
	case stripPanel:
		drawStrip(r, p, x, y, w, h)
	case scatterPanel:
		drawScatter(r, p, x, y, w, h)
	}
	r.drawColor(ink)
	r.f.SetFillColor(255, 255, 255)
	r.f.SetDashPattern(nil, 0)
	r.color(ink)
}

// niceTicks covers [lo, hi] with about n round steps (1, 2, 2.5, 5 × 10^k)
// and returns the ticks, widened bounds and the decimals to print.
func niceTicks(lo, hi float64, n int) (ticks []float64, a, b float64, dec int) {
	if math.IsNaN(lo) || math.IsNaN(hi) || math.IsInf(lo, 0) || math.IsInf(hi, 0) {
		lo, hi = -1, 1
	}
	if hi < lo {
		lo, hi = hi, lo
	}
	if hi-lo < 1e-12*math.Max(1, math.Abs(lo)) {
		d := math.Max(math.Abs(lo)*0.05, 1e-3)
		lo, hi = lo-d, hi+d
	}
	raw := (hi - lo) / float64(n)
	mag := math.Pow(10, math.Floor(math.Log10(raw)))
	step := 10 * mag
	for _, m := range []float64{1, 2, 2.5, 5, 10} {
		if m*mag >= raw*0.999 {
			step = m * mag
			break
		}
	}
	a = math.Floor(lo/step+1e-9) * step
	b = math.Ceil(hi/step-1e-9) * step
	for i := 0; ; i++ {
		t := a + float64(i)*step
		if t > b+step*1e-6 || i > 100 {
			break
		}
		if math.Abs(t) < step*1e-9 {
			t = 0
		}
		ticks = append(ticks, t)
	}
	dec = int(math.Max(0, -math.Floor(math.Log10(step)+1e-9)))
	if s := step / math.Pow(10, math.Floor(math.Log10(step)+1e-9)); math.Abs(s-2.5) < 1e-9 {
		dec++
	}
	return ticks, a, b, dec
}

func tickLabel(v float64, dec int) string { return minus(strconv.FormatFloat(v, 'f', dec, 64)) }

// minus replaces a leading hyphen by the typographic minus sign.
func minus(s string) string {
	if strings.HasPrefix(s, "-") {
		if strings.Trim(s[1:], "0.") == "" {
			return s[1:] // no "−0.00"
		}
		return "−" + s[1:]
	}
	return s
}

// plotBox is the inner data rectangle and the mapping to it.
type plotBox struct {
	x, y, w, h     float64
	x0, x1, y0, y1 float64
}

func (b plotBox) px(v float64) float64 { return b.x + (v-b.x0)/(b.x1-b.x0)*b.w }
func (b plotBox) py(v float64) float64 { return b.y + b.h - (v-b.y0)/(b.y1-b.y0)*b.h }

// yAxis draws the left axis with ticks, labels and the rotated title.
func yAxis(r *renderer, b plotBox, ticks []float64, dec int, title rich, left float64) {
	r.drawColor(ink)
	r.f.SetLineWidth(0.6)
	r.f.Line(b.x, b.y, b.x, b.y+b.h)
	r.f.SetLineWidth(0.5)
	r.color(ink)
	for _, t := range ticks {
		yy := b.py(t)
		r.f.Line(b.x-3, yy, b.x, yy)
		lab := txt(tickLabel(t, dec))
		lw := r.width(lab, plotText, false)
		r.draw(b.x-5-lw, yy+plotText*0.35, lab, plotText, false)
	}
	// rotated axis title, centred on the axis
	tw := r.width(title, plotLabel, false)
	cx := left + plotLabel
	cy := b.y + b.h/2 + tw/2
	r.f.TransformBegin()
	r.f.TransformRotate(90, cx, cy)
	r.draw(cx, cy, title, plotLabel, false)
	r.f.TransformEnd()
}

func xAxisNumeric(r *renderer, b plotBox, ticks []float64, dec int, title rich) {
	r.drawColor(ink)
	r.f.SetLineWidth(0.6)
	r.f.Line(b.x, b.y+b.h, b.x+b.w, b.y+b.h)
	r.f.SetLineWidth(0.5)
	// label every k-th tick so that labels keep a gap between them
	widest := 0.0
	for _, t := range ticks {
		widest = math.Max(widest, r.width(txt(tickLabel(t, dec)), plotText, false))
	}
	k := 1
	if len(ticks) > 1 {
		step := b.w / float64(len(ticks)-1)
		for float64(k)*step < widest+6 && k < len(ticks) {
			k++
		}
	}
	for i, t := range ticks {
		xx := b.px(t)
		r.f.Line(xx, b.y+b.h, xx, b.y+b.h+3)
		if i%k != 0 {
			continue
		}
		lab := txt(tickLabel(t, dec))
		lw := r.width(lab, plotText, false)
		r.draw(xx-lw/2, b.y+b.h+5+plotText, lab, plotText, false)
	}
	tw := r.width(title, plotLabel, false)
	r.draw(b.x+b.w/2-tw/2, b.y+b.h+9+plotText+plotLabel+2, title, plotLabel, false)
}

// gridLines draws faint horizontal lines at the ticks.
func gridLines(r *renderer, b plotBox, ticks []float64) {
	r.f.SetDrawColor(228, 228, 232)
	r.f.SetLineWidth(0.35)
	for _, t := range ticks {
		r.f.Line(b.x, b.py(t), b.x+b.w, b.py(t))
	}
}

func drawMarker(r *renderer, m marker, x, y, s float64, c colour, hollow bool) {
	r.f.SetDrawColor(c[0], c[1], c[2])
	r.f.SetFillColor(c[0], c[1], c[2])
	r.f.SetLineWidth(0.6)
	mode := "F"
	if hollow {
		r.f.SetFillColor(255, 255, 255)
		mode = "FD"
	}
	switch m % nMarkers {
	case mCircle:
		r.f.Circle(x, y, s, mode)
	case mSquare:
		q := s * 0.9
		r.f.Rect(x-q, y-q, 2*q, 2*q, mode)
	case mTriangle:
		q := s * 1.25
		r.f.Polygon([]pt{{X: x, Y: y - q}, {X: x + q*0.9, Y: y + q*0.6}, {X: x - q*0.9, Y: y + q*0.6}}, mode)
	case mDiamond:
		q := s * 1.25
		r.f.Polygon([]pt{{X: x, Y: y - q}, {X: x + q*0.8, Y: y}, {X: x, Y: y + q}, {X: x - q*0.8, Y: y}}, mode)
	case mTriangleDown:
		q := s * 1.25
		r.f.Polygon([]pt{{X: x, Y: y + q}, {X: x + q*0.9, Y: y - q*0.6}, {X: x - q*0.9, Y: y - q*0.6}}, mode)
	}
}

func quantile(sorted []float64, q float64) float64 {
	if len(sorted) == 0 {
		return math.NaN()
	}
	pos := q * float64(len(sorted)-1)
	i := int(math.Floor(pos))
	if i >= len(sorted)-1 {
		return sorted[len(sorted)-1]
	}
	f := pos - float64(i)
	return sorted[i]*(1-f) + sorted[i+1]*f
}

func tint(c colour, k float64) (int, int, int) {
	t := func(v int) int { return int(math.Round(float64(v) + (255-float64(v))*k)) }
	return t(c[0]), t(c[1]), t(c[2])
}

// catLines splits a category label at "/" when it is too wide for its band.
func catLines(r *renderer, s string, maxW float64) []rich {
	if r.width(txt(s), plotText, false) <= maxW {
		return []rich{txt(s)}
	}
	if i := strings.Index(s, "/"); i > 0 {
		return []rich{txt(s[:i+1]), txt(s[i+1:])}
	}
	return []rich{txt(s)}
}

func drawStrip(r *renderer, p stripPanel, x, y, w, h float64) {
	lo, hi := 0.0, 0.0 // the zero line is always in view
	for _, vs := range p.Vals {
		for _, v := range vs {
			lo, hi = math.Min(lo, v), math.Max(hi, v)
		}
	}
	ticks, a, bnd, dec := niceTicks(lo, hi, 5)
	// room for tick labels on the left
	tw := 0.0
	for _, t := range ticks {
		tw = math.Max(tw, r.width(txt(tickLabel(t, dec)), plotText, false))
	}
	nc := len(p.Cats)
	band := (w - tw - 22) / math.Max(1, float64(nc))
	nl := 1
	for _, c := range p.Cats {
		nl = max(nl, len(catLines(r, c, band-4)))
	}
	b := plotBox{x: x + tw + 20, y: y + 14, w: w - tw - 22, h: h - 14 - 10 - float64(nl)*(plotText+2), x0: 0, x1: float64(max(nc, 1)), y0: a, y1: bnd}
	gridLines(r, b, ticks)
	// zero line
	r.f.SetDrawColor(120, 120, 128)
	r.f.SetLineWidth(0.6)
	r.f.SetDashPattern([]float64{3, 2}, 0)
	r.f.Line(b.x, b.py(0), b.x+b.w, b.py(0))
	r.f.SetDashPattern(nil, 0)
	for i, vs := range p.Vals {
		st := i
		if i < len(p.Style) {
			st = p.Style[i]
		}
		c := palette[st%len(palette)]
		cx := b.px(float64(i) + 0.5)
		if len(vs) >= 4 { // quartiles of fewer points say nothing the points do not
			s := append([]float64(nil), vs...)
			sort.Float64s(s)
			q1, q2, q3 := quantile(s, 0.25), quantile(s, 0.5), quantile(s, 0.75)
			bw := band * 0.46
			tr, tg, tb := tint(c, 0.82)
			r.f.SetFillColor(tr, tg, tb)
			r.f.SetDrawColor(c[0], c[1], c[2])
			r.f.SetLineWidth(0.5)
			r.f.Rect(cx-bw/2, b.py(q3), bw, math.Max(b.py(q1)-b.py(q3), 0.3), "FD")
			r.f.SetLineWidth(1.3)
			r.f.Line(cx-bw/2, b.py(q2), cx+bw/2, b.py(q2))
			// whiskers to the extremes
			r.f.SetLineWidth(0.5)
			r.f.Line(cx, b.py(q3), cx, b.py(s[len(s)-1]))
			r.f.Line(cx, b.py(q1), cx, b.py(s[0]))
			r.f.Line(cx-bw/6, b.py(s[len(s)-1]), cx+bw/6, b.py(s[len(s)-1]))
			r.f.Line(cx-bw/6, b.py(s[0]), cx+bw/6, b.py(s[0]))
		}
		for k, v := range vs {
			// deterministic spread (golden-ratio sequence), no randomness
			j := math.Mod(float64(k)*0.6180339887498949+0.5, 1) - 0.5
			hollow := i < len(p.Flag) && k < len(p.Flag[i]) && p.Flag[i][k]
			drawMarker(r, marker(st), cx+j*band*0.62, b.py(v), 1.9, c, hollow)
		}
		// category label
		r.color(ink)
		ls := catLines(r, p.Cats[i], band-4)
		for li, l := range ls {
			lw := r.width(l, plotText, false)
			r.draw(cx-lw/2, b.y+b.h+6+plotText+float64(li)*(plotText+2), l, plotText, false)
		}
	}
	r.drawColor(ink)
	r.f.SetLineWidth(0.6)
	r.f.Line(b.x, b.y+b.h, b.x+b.w, b.y+b.h)
	yAxis(r, b, ticks, dec, p.YLabel, x)
}

func drawScatter(r *renderer, p scatterPanel, x, y, w, h float64) {
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, s := range p.Series {
		for k := range s.X {
			lo = math.Min(lo, math.Min(s.X[k], s.Y[k]))
			hi = math.Max(hi, math.Max(s.X[k], s.Y[k]))
		}
	}
	if math.IsInf(lo, 0) {
		lo, hi = 0, 1
	}
	pad := (hi - lo) * 0.04
	from := lo - pad
	if lo >= 0 && from < 0 {
		from = 0 // magnitudes: keep the axis non-negative
	}
	ticks, a, bnd, dec := niceTicks(from, hi+pad, 5)
	tw := 0.0
	for _, t := range ticks {
		tw = math.Max(tw, r.width(txt(tickLabel(t, dec)), plotText, false))
	}
	// legend rows below the axis title
	type item struct {
		s      series
		x, row float64
	}
	var items []item
	lx, row := 0.0, 0.0
	for _, s := range p.Series {
		iw := 14 + r.width(txt(s.Name), plotText, false) + 10
		if lx > 0 && lx+iw > w-tw-20 {
			lx, row = 0, row+1
		}
		items = append(items, item{s, lx, row})
		lx += iw
	}
	legendH := 0.0
	if len(items) > 0 {
		legendH = (row+1)*(plotText+4) + 4
	}
	// square data area
	side := math.Min(w-tw-24, h-14-38-legendH)
	b := plotBox{x: x + tw + 20, y: y + 14, w: side, h: side, x0: a, x1: bnd, y0: a, y1: bnd}
	gridLines(r, b, ticks)
	r.f.SetDrawColor(120, 120, 128)
	r.f.SetLineWidth(0.6)
	r.f.SetDashPattern([]float64{3, 2}, 0)
	r.f.Line(b.px(a), b.py(a), b.px(bnd), b.py(bnd))
	r.f.SetDashPattern(nil, 0)
	for _, s := range p.Series {
		c := palette[s.Style%len(palette)]
		for k := range s.X {
			drawMarker(r, marker(s.Style), b.px(s.X[k]), b.py(s.Y[k]), 1.9, c, false)
		}
	}
	yAxis(r, b, ticks, dec, p.YLabel, x)
	xAxisNumeric(r, b, ticks, dec, p.XLabel)
	ly := b.y + b.h + 9 + plotText + plotLabel + 17
	for _, it := range items {
		yy := ly + it.row*(plotText+4)
		x0 := b.x + it.x
		drawMarker(r, marker(it.s.Style), x0+4, yy-plotText*0.32, 1.9, palette[it.s.Style%len(palette)], false)
		r.color(ink)
		r.draw(x0+11, yy, txt(it.s.Name), plotText, false)
	}
	r.f.SetDrawColor(ink[0], ink[1], ink[2])
	r.f.SetLineWidth(0.6)
	r.f.Line(b.x, b.y, b.x+b.w, b.y)
	r.f.Line(b.x+b.w, b.y, b.x+b.w, b.y+b.h)
}
