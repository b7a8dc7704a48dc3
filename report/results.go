package report

import (
	"fmt"
	"math"
	"sort"
	"strings"

	"moltrail/compare"
)

// entryRow is one reference entry with its deviation at each level.
type entryRow struct {
	entry    string
	molecule string
	formula  string
	quantity string
	ref      float64
	unc      float64
	refKind  string
	source   string
	memory   bool
	byLevel  map[string]*compare.Deviation
}

func (b *builder) rowsOf(kind string) []*entryRow {
	var rows []*entryRow
	at := map[string]*entryRow{}
	for i := range b.tbl.Deviations {
		d := &b.tbl.Deviations[i]
		if d.Kind != kind {
			continue
		}
		key := d.EntryID
		if key == "" {
			key = d.Molecule + "\x00" + d.Quantity
		}
		er, ok := at[key]
		if !ok {
			er = &entryRow{entry: key, molecule: d.Molecule, formula: d.Formula, quantity: d.Quantity, ref: d.Reference,
				unc: d.Uncertainty, refKind: d.RefKind, source: d.RefSource, memory: d.FromMemory, byLevel: map[string]*compare.Deviation{}}
			at[key] = er
			rows = append(rows, er)
		}
		if _, dup := er.byLevel[d.Level]; !dup {
			er.byLevel[d.Level] = d
		}
	}
	// group by molecule, keeping the comparison's order within a molecule
	sort.SliceStable(rows, func(i, j int) bool {
		return rows[i].molecule != rows[j].molecule && naturalLess(rows[i].molecule, rows[j].molecule)
	})
	return rows
}

func (b *builder) results() {
	b.add(heading{Level: 1, Number: "2", Text: txt("Results"), Break: true})
	b.add(paragraph{Text: mk(fmt.Sprintf("Deviations are signed, Δ = computed − reference, in the unit named in each column head. "+
		"Reference values are those of the set %s; the source of each is listed below its table. "+
		"Superscript letters mark values that carry a caution (Section 3). Statistics over all entries follow in Section 2.%d.",
		esc(orNone(b.tbl.RefSet.Name)), len(b.kinds())+1))})
	for i, k := range b.kinds() {
		b.kindSection(k, fmt.Sprintf("2.%d", i+1))
	}
	b.statistics(fmt.Sprintf("2.%d", len(b.kinds())+1))
}

func (b *builder) marksOf(codes []string) string {
	var ms []string
	for _, c := range codes {
		if m, ok := b.marks[c]; ok {
			ms = append(ms, m)
		}
	}
	sort.Strings(ms)
	return strings.Join(ms, ",")
}

func (b *builder) kindSection(kind, number string) {
	rows := b.rowsOf(kind)
	if len(rows) == 0 {
		return
	}
	unit := ""
	for _, d := range b.tbl.Deviations {
		if d.Kind == kind {
			unit = d.Unit
			break
		}
	}
	ki := kindOf(kind, unit)
	// levels with at least one deviation of this kind, in display order
	var levels []string
	has := map[string]bool{}
	for _, r := range rows {
		for l := range r.byLevel {
			has[l] = true
		}
	}
	for _, l := range b.levelNames() {
		if has[l] {
			levels = append(levels, l)
		}
	}
	style := b.levelIndex()
	b.add(heading{Level: 2, Number: number, Text: txt(ki.title)})

	valHead := mk(ki.sym + " / " + ki.valUnit)
	devHead := mk("Δ / " + ki.devUnit)
	t := b.newTable(slug(ki.title), mk(fmt.Sprintf("%s: reference values and results at each level of theory (%s), with deviations Δ (%s).",
		ki.title, ki.valUnit, ki.devUnit)))
	t.Head = []rich{txt("Molecule"), txt("Quantity"), mk("Reference / " + ki.valUnit), txt("Src.")}
	t.Align = []align{alignLeft, alignLeft, alignDecimal, alignCentre}
	t.Key = 2
	sources := map[string]int{}
	var srcList []string
	for _, l := range levels {
		from := len(t.Head)
		t.Groups = append(t.Groups, colGroup{Label: txt(l), From: from, To: from + 1})
		t.Head = append(t.Head, valHead, devHead)
		t.Align = append(t.Align, alignDecimal, alignDecimal)
	}
	prev := ""
	for _, r := range rows {
		src := r.source
		if r.refKind != "" {
			src += " (" + r.refKind
			if r.memory {
				src += "; quoted from memory, to be checked against the source"
			}
			src += ")"
		}
		si, ok := sources[src]
		if !ok {
			si = len(srcList) + 1
			sources[src] = si
			srcList = append(srcList, src)
		}
		mol := ""
		if r.molecule != prev {
			mol = r.molecule
		}
		refc := num(r.ref*ki.valScale, ki.valDec)
		if r.unc > 0 {
			u := num(r.unc*ki.valScale, ki.valDec)
			refc.Lines[0] = cat(refc.Lines[0], txt(" ± "), u.Lines[0])
			refc.Raw += " ± " + u.Raw
		}
		rw := row{Cells: []cell{textCell(mol), textCell(r.quantity), refc, textCell(fmt.Sprint(si))}, Rule: r.molecule != prev}
		prev = r.molecule
		for _, l := range levels {
			d, ok := r.byLevel[l]
			if !ok {
				rw.Cells = append(rw.Cells, dash(), dash())
				continue
			}
			dc := num(d.Signed, ki.devDec)
			if m := b.marksOf(d.Cautions); m != "" {
				dc.Lines[0] = cat(dc.Lines[0], rich{{Text: m, Shift: sup}})
				dc.Raw += " [" + m + "]"
			}
			rw.Cells = append(rw.Cells, num(d.Computed*ki.valScale, ki.valDec), dc)
		}
		t.Rows = append(t.Rows, rw)
	}
	var notes []string
	for i, s := range srcList {
		notes = append(notes, fmt.Sprintf("%d: %s", i+1, orNone(s)))
	}
	t.Notes = append(t.Notes, cat(italicTxt("Sources of the reference values. "), txt(strings.Join(notes, "; ")+".")))
	if ml := b.markLegend(rows); len(ml) > 0 {
		t.Notes = append(t.Notes, cat(italicTxt("Cautions. "), ml))
	}
	b.add(t)

	// Figure: deviations per level, and computed against reference.
	strip := stripPanel{YLabel: mk("Δ" + ki.sym + " / " + ki.devUnit)}
	var sc scatterPanel
	sc.XLabel = mk("reference " + ki.sym + " / " + ki.valUnit)
	sc.YLabel = mk("computed " + ki.sym + " / " + ki.valUnit)
	for _, l := range levels {
		var vals []float64
		var flags []bool
		s := series{Name: l, Style: style[l]}
		for _, r := range rows {
			if d, ok := r.byLevel[l]; ok && finite(d.Signed, d.Reference, d.Computed) {
				vals = append(vals, d.Signed)
				flags = append(flags, len(d.Cautions) > 0)
				s.X = append(s.X, d.Reference*ki.valScale)
				s.Y = append(s.Y, d.Computed*ki.valScale)
			}
		}
		strip.Cats = append(strip.Cats, l)
		strip.Style = append(strip.Style, style[l])
		strip.Vals = append(strip.Vals, vals)
		strip.Flag = append(strip.Flag, flags)
		sc.Series = append(sc.Series, s)
	}
	panels := []panel{strip}
	capt := fmt.Sprintf("%s. (a) Signed deviations Δ%s = computed − reference at each level (%s): points are the entries (hollow where a caution applies), where a level has four or more entries, the box spans the quartiles with the median as a bar and the whiskers reach the extremes.",
		ki.title, ki.sym, ki.devUnit)
	if ki.scatter {
		panels = append(panels, sc)
		capt += fmt.Sprintf(" (b) Computed against reference values (%s); the dashed line is *y* = *x*.", ki.valUnit)
	} else {
		capt = strings.Replace(capt, "(a) ", "", 1)
	}
	fg := b.newFigure(mk(capt))
	fg.Panels = panels
	fg.Height = 200
	b.add(fg)
}

// markLegend explains the marks used among the rows.
func (b *builder) markLegend(rows []*entryRow) rich {
	used := map[string]bool{}
	for _, r := range rows {
		for _, d := range r.byLevel {
			for _, c := range d.Cautions {
				used[c] = true
			}
		}
	}
	var out rich
	n := 0
	for _, code := range b.codesInOrder() {
		if !used[code] {
			continue
		}
		if n > 0 {
			out = append(out, span{Text: "; "})
		}
		out = append(out, span{Text: b.marks[code], Shift: sup}, span{Text: " " + b.cautionTitle(code)})
		n++
	}
	if n > 0 {
		out = append(out, span{Text: " (explained in Section 3)."})
	}
	return out
}

// codesInOrder lists the caution codes by their mark letters.
func (b *builder) codesInOrder() []string {
	codes := make([]string, 0, len(b.marks))
	for c := range b.marks {
		codes = append(codes, c)
	}
	sort.Slice(codes, func(i, j int) bool {
		mi, mj := b.marks[codes[i]], b.marks[codes[j]]
		if len(mi) != len(mj) {
			return len(mi) < len(mj)
		}
		return mi < mj
	})
	return codes
}

func (b *builder) cautionTitle(code string) string {
	for _, l := range b.tbl.Legend {
		if l.Code == code && l.Title != "" {
			return l.Title
		}
	}
	for _, c := range b.tbl.Cautions {
		if c.Code == code && c.Title != "" {
			return c.Title
		}
	}
	return code
}

func slug(s string) string {
	s = strings.ToLower(s)
	var out []rune
	for _, c := range s {
		switch {
		case c >= 'a' && c <= 'z', c >= '0' && c <= '9':
			out = append(out, c)
		default:
			if len(out) > 0 && out[len(out)-1] != '_' {
				out = append(out, '_')
			}
		}
	}
	return strings.Trim(string(out), "_")
}

func (b *builder) kindUnit(kind string) string {
	for _, d := range b.tbl.Deviations {
		if d.Kind == kind {
			return d.Unit
		}
	}
	for _, s := range b.tbl.Stats {
		if s.Kind == kind {
			return s.Unit
		}
	}
	return ""
}

func (b *builder) statistics(number string) {
	b.add(heading{Level: 2, Number: number, Text: txt("Statistics")})
	conf := 0.0
	for _, s := range b.tbl.Stats {
		if s.Confidence > 0 {
			conf = s.Confidence
			break
		}
	}
	if conf == 0 {
		conf = b.tbl.Settings.Confidence
	}
	ci := fmt.Sprintf("%g %% CI of MSE", math.Round(conf*1000)/10)
	b.add(paragraph{Text: mk(fmt.Sprintf("For each level and quantity: the number of entries *N*, the mean signed error MSE (accuracy), "+
		"the sample standard deviation SD of the signed errors (precision, *N* − 1 in the denominator), the mean absolute error MAE, "+
		"the root-mean-square error RMS and the largest deviation with the entry where it occurs. The confidence interval of the MSE "+
		"is a bootstrap interval (%d resamples, seed %d), given for *N* ≥ 3. All values are in the natural unit of the quantity.",
		b.tbl.Settings.BootstrapSamples, b.tbl.Settings.BootstrapSeed))})
	t := b.newTable("statistics", txt("Deviation statistics per level of theory and quantity."))
	t.Head = []rich{txt("Quantity"), txt("Level"), mk("*N*"), txt("MSE"), txt("SD"), txt("MAE"), txt("RMS"), txt("max"), txt("at"), txt(ci)}
	t.Align = []align{alignLeft, alignLeft, alignRight, alignDecimal, alignDecimal, alignDecimal, alignDecimal, alignDecimal, alignLeft, alignLeft}
	t.Wrap = []float64{0, 0, 0, 0, 0, 0, 0, 0, 90, 0}
	t.Key = 2
	stats := append([]compare.Stats(nil), b.tbl.Stats...)
	lvl := b.levelIndex()
	sort.SliceStable(stats, func(i, j int) bool {
		ki, kj := kindOf(stats[i].Kind, stats[i].Unit).order, kindOf(stats[j].Kind, stats[j].Unit).order
		if ki != kj {
			return ki < kj
		}
		if stats[i].Kind != stats[j].Kind {
			return stats[i].Kind < stats[j].Kind
		}
		return lvl[stats[i].Level] < lvl[stats[j].Level]
	})
	prev := ""
	for _, s := range stats {
		ki := kindOf(s.Kind, s.Unit)
		dec := ki.devDec
		q := cell{}
		if s.Kind != prev {
			q = richCell(mk(ki.sym + " / " + ki.devUnit))
		}
		cic := dash()
		if s.CILow != nil && s.CIHigh != nil {
			lo, hi := num(*s.CILow, dec), num(*s.CIHigh, dec)
			cic = cell{Lines: []rich{cat(txt("["), lo.Lines[0], txt(", "), hi.Lines[0], txt("]"))}, Raw: "[" + lo.Raw + ", " + hi.Raw + "]"}
		}
		mx := num(s.MaxSigned, dec)
		rw := row{Cells: []cell{q, textCell(s.Level), textCell(fmt.Sprint(s.N)), num(s.MSE, dec), num(s.SD, dec), num(s.MAE, dec),
			num(s.RMS, dec), mx, textCell(s.MaxAt), cic}, Rule: s.Kind != prev}
		prev = s.Kind
		t.Rows = append(t.Rows, rw)
	}
	if len(t.Rows) == 0 {
		b.add(paragraph{Text: txt("No deviations could be computed, so there are no statistics.")})
		return
	}
	t.Notes = []rich{txt("SD is 0 for a single entry. Statistics describe these entries only; they are not a general error estimate for the level of theory.")}
	b.add(t)

	if len(b.tbl.LevelDiffs) == 0 {
		return
	}
	b.add(paragraph{Text: mk("Table " + fmt.Sprint(b.tableNo+1) + " compares the levels pairwise over the entries both have: " +
		"the mean of (computed A − computed B) and the difference of the mean absolute errors MAE(A) − MAE(B), " +
		"negative when A is closer to the reference, with bootstrap confidence intervals.")})
	ld := b.newTable("level_differences", txt("Pairwise comparison of levels on common entries."))
	ld.Head = []rich{txt("Quantity"), txt("Level A"), txt("Level B"), mk("*N*"), txt("mean(A − B)"), txt("CI"), txt("MAE(A) − MAE(B)"), txt("CI"), txt("Verdict")}
	ld.Align = []align{alignLeft, alignLeft, alignLeft, alignRight, alignDecimal, alignLeft, alignDecimal, alignLeft, alignLeft}
	ld.Wrap = []float64{0, 0, 0, 0, 0, 0, 0, 0, 130}
	ld.Key = 3
	prev = ""
	for _, x := range b.tbl.LevelDiffs {
		ki := kindOf(x.Kind, x.Unit)
		dec := ki.devDec
		q := cell{}
		if x.Kind != prev {
			q = richCell(mk(ki.sym + " / " + ki.devUnit))
		}
		interval := func(lo, hi *float64) cell {
			if lo == nil || hi == nil {
				return dash()
			}
			a, c := num(*lo, dec), num(*hi, dec)
			return cell{Lines: []rich{cat(txt("["), a.Lines[0], txt(", "), c.Lines[0], txt("]"))}, Raw: "[" + a.Raw + ", " + c.Raw + "]"}
		}
		verdict := x.Verdict
		ld.Rows = append(ld.Rows, row{Cells: []cell{q, textCell(x.LevelA), textCell(x.LevelB), textCell(fmt.Sprint(x.N)),
			num(x.MeanDiff, dec), interval(x.CILow, x.CIHigh), num(x.MAEDiff, dec), interval(x.MAECILow, x.MAECIHigh), textCell(verdict)}, Rule: x.Kind != prev})
		prev = x.Kind
	}
	b.add(ld)
}

// finite reports whether every value is a finite number (plots skip others).
func finite(vs ...float64) bool {
	for _, v := range vs {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return false
		}
	}
	return true
}
