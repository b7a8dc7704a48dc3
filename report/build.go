package report

import (
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"
	"time"

	"moltrail/archive"
	"moltrail/compare"
	"moltrail/engine/molecule"
)

// builder assembles the document model.
type builder struct {
	tbl     *compare.Table
	recs    []archive.Record // sorted
	byID    map[string]*archive.Record
	levels  map[string]string // record id → level label
	opts    Options
	d       *document
	tableNo int
	figNo   int
	marks   map[string]string // caution code → mark letter
	refs    []string          // literature references in citation order
	refNo   map[string]int
}

func build(tbl *compare.Table, records []archive.Record, opts Options) (*document, time.Time, error) {
	if err := checkInputs(tbl, records); err != nil {
		return nil, time.Time{}, err
	}
	levels := recordLevels(tbl, records)
	b := &builder{tbl: tbl, levels: levels, opts: opts, refNo: map[string]int{}}
	b.recs = sortedRecords(records, b.levelOf)
	b.byID = make(map[string]*archive.Record, len(b.recs))
	for i := range b.recs {
		b.byID[b.recs[i].ID] = &b.recs[i]
	}
	date, created := reportDate(opts, records)
	title := opts.Title
	if title == "" {
		title = "Computed molecular properties against the reference set " + tbl.RefSet.Name
		if tbl.RefSet.Name == "" {
			title = "Computed molecular properties against reference values"
		}
	}
	b.d = &document{Title: title, Author: opts.Author, Affiliation: opts.Affiliation, Date: date,
		Fingerprint: Fingerprint(tbl, records, opts)}
	b.assignMarks()
	b.summary()
	b.details()
	b.results()
	b.cautions()
	b.structures()
	b.provenance()
	b.references()
	return b.d, created, nil
}

// levelOf is a record's level label (archive.LevelLabel).
func (b *builder) levelOf(r *archive.Record) string { return b.levels[r.ID] }

func (b *builder) add(bl ...block) { b.d.Blocks = append(b.d.Blocks, bl...) }

func (b *builder) newTable(name string, caption rich) *table {
	b.tableNo++
	return &table{Name: name, Number: b.tableNo, Caption: caption}
}

func (b *builder) newFigure(caption rich) *figure {
	b.figNo++
	return &figure{Number: b.figNo, Caption: caption}
}

// assignMarks gives every caution code a letter in legend order (codes
// used but missing from the legend follow in order of appearance).
func (b *builder) assignMarks() {
	b.marks = map[string]string{}
	next := 0
	give := func(code string) {
		if _, ok := b.marks[code]; ok || code == "" {
			return
		}
		b.marks[code] = markLetter(next)
		next++
	}
	for _, l := range b.tbl.Legend {
		give(l.Code)
	}
	for _, c := range b.tbl.Cautions {
		give(c.Code)
	}
	for _, d := range b.tbl.Deviations {
		for _, c := range d.Cautions {
			give(c)
		}
	}
}

func markLetter(i int) string {
	s := ""
	for {
		s = string(rune('a'+i%26)) + s
		i = i/26 - 1
		if i < 0 {
			return s
		}
	}
}

// distinct counts values, returned in order of decreasing count then value.
type counted struct {
	v string
	n int
}

func distinct(vals []string) []counted {
	m := map[string]int{}
	for _, v := range vals {
		m[v]++
	}
	out := make([]counted, 0, len(m))
	for v, n := range m {
		out = append(out, counted{v, n})
	}
	sort.Slice(out, func(i, j int) bool {
		if out[i].n != out[j].n {
			return out[i].n > out[j].n
		}
		return out[i].v < out[j].v
	})
	return out
}

func listOf(cs []counted, withCounts bool) string {
	var parts []string
	for _, c := range cs {
		if withCounts && len(cs) > 1 {
			parts = append(parts, fmt.Sprintf("%s (%d)", c.v, c.n))
		} else {
			parts = append(parts, c.v)
		}
	}
	return strings.Join(parts, ", ")
}

func codeLabel(c archive.Code) string {
	s := c.Program
	if s == "" {
		s = "moltrail"
	}
	if c.Version != "" {
		s += " " + c.Version
	}
	if c.Revision != "" {
		s += ", revision " + shortID(c.Revision)
	}
	if c.Modified {
		s += " (modified working tree)"
	}
	return s
}

func (b *builder) summary() {
	t := b.tbl
	var items []kv
	rs := t.RefSet.Name
	if t.RefSet.Description != "" {
		rs += " — " + t.RefSet.Description
	}
	if t.RefSet.Entries > 0 {
		rs += fmt.Sprintf(" (%d entries)", t.RefSet.Entries)
	}
	items = append(items, kv{txt("Reference set"), txt(rs)})
	var st []string
	for _, r := range b.recs {
		st = append(st, r.Status)
	}
	recs := fmt.Sprintf("%d", len(b.recs))
	if len(b.recs) > 0 {
		recs += " (" + listOf(distinct(st), true) + ")"
	}
	items = append(items, kv{txt("Records"), txt(recs)})
	var lv []string
	for _, l := range t.Levels {
		lv = append(lv, l.Label)
	}
	items = append(items, kv{txt("Levels of theory"), txt(orNone(strings.Join(lv, ", ")))})
	var bs, codes []string
	for _, r := range b.recs {
		bs = append(bs, r.Input.Basis.Name)
		codes = append(codes, codeLabel(r.Code))
	}
	items = append(items, kv{txt("Basis sets"), txt(orNone(listOf(distinct(bs), false)))})
	items = append(items, kv{txt("Program"), txt(orNone(listOf(distinct(codes), true)))})
	items = append(items, kv{txt("Deviations"), txt(fmt.Sprintf("%d, of which %d carry a caution", len(t.Deviations), t.Flagged()))})
	if len(b.opts.Selection) > 0 {
		items = append(items, kv{txt("Selection"), txt(strings.Join(b.opts.Selection, " "))})
	}
	items = append(items, kv{txt("Fingerprint"), monoTxt(b.d.Fingerprint)})
	b.d.Summary = items
}

func orNone(s string) string {
	if s == "" {
		return "none"
	}
	return s
}

// ---- quantity kinds ----

// kindInfo says how one quantity kind is titled, symbolised and printed.
type kindInfo struct {
	order    int
	title    string
	sym      string // markup
	valUnit  string // markup, unit of the value columns
	valScale float64
	valDec   int
	devUnit  string // markup
	devDec   int
	scatter  bool
}

func unitMarkup(u string) string {
	switch strings.ToLower(u) {
	case "degree", "degrees", "deg", "°":
		return "°"
	case "kj/mol", "kj mol-1":
		return "kJ mol^{−1}"
	case "kcal/mol":
		return "kcal mol^{−1}"
	case "hartree", "e_h", "eh":
		return "E_{h}"
	}
	return esc(u)
}

func kindOf(kind, unit string) kindInfo {
	u := unitMarkup(unit)
	k := kindInfo{order: 100, title: kind, sym: "x", valUnit: u, valScale: 1, valDec: 4, devUnit: u, devDec: 4, scatter: true}
	switch kind {
	case compare.KindBondLength:
		k = kindInfo{order: 1, title: "Bond lengths", sym: "*r*", valUnit: u, valScale: 1, valDec: 2, devUnit: u, devDec: 2, scatter: true}
		if unit == "pm" {
			k.valUnit, k.valScale, k.valDec = "Å", 0.01, 4
		}
	case compare.KindAngle:
		k = kindInfo{order: 2, title: "Bond angles", sym: "*θ*", valUnit: u, valScale: 1, valDec: 2, devUnit: u, devDec: 2, scatter: true}
	case compare.KindDipoleNorm:
		k = kindInfo{order: 3, title: "Dipole moments", sym: "|*μ*|", valUnit: u, valScale: 1, valDec: 3, devUnit: u, devDec: 3, scatter: true}
	case compare.KindDipoleAxis:
		k = kindInfo{order: 4, title: "Dipole components", sym: "*μ*_{i}", valUnit: u, valScale: 1, valDec: 3, devUnit: u, devDec: 3, scatter: true}
	case compare.KindQuadrupole:
		k = kindInfo{order: 5, title: "Quadrupole moments", sym: "*Θ*_{ij}", valUnit: u, valScale: 1, valDec: 3, devUnit: u, devDec: 3, scatter: true}
	case compare.KindEnergy:
		k = kindInfo{order: 6, title: "Total energies", sym: "*E*", valUnit: u, valScale: 1, valDec: 2, devUnit: u, devDec: 2, scatter: false}
		if strings.EqualFold(unit, "kJ/mol") {
			k.valUnit, k.valScale, k.valDec = "E_{h}", 1/molecule.KJPerMolPerHartree, 6
		}
	case compare.KindEnergyDelta:
		k = kindInfo{order: 7, title: "Energy differences", sym: "Δ*E*", valUnit: u, valScale: 1, valDec: 2, devUnit: u, devDec: 2, scatter: true}
	}
	return k
}

// num formats v with dec decimals: typographic minus for print, ASCII for CSV.
func num(v float64, dec int) cell {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return dash()
	}
	s := strconv.FormatFloat(v, 'f', dec, 64)
	if strings.Trim(strings.TrimPrefix(s, "-"), "0.") == "" {
		s = strings.TrimPrefix(s, "-") // no "−0.00"
	}
	return cell{Lines: []rich{txt(minus(s))}, Raw: s}
}

func textCell(s string) cell { return cell{Lines: []rich{txt(s)}, Raw: s} }

func richCell(r rich) cell { return cell{Lines: []rich{r}, Raw: r.Plain()} }

func dash() cell { return cell{Lines: []rich{txt("—")}, Raw: ""} }

// kinds lists the quantity kinds present, in display order.
func (b *builder) kinds() []string {
	seen := map[string]string{}
	var ks []string
	for _, d := range b.tbl.Deviations {
		if _, ok := seen[d.Kind]; !ok {
			seen[d.Kind] = d.Unit
			ks = append(ks, d.Kind)
		}
	}
	sort.SliceStable(ks, func(i, j int) bool {
		oi, oj := kindOf(ks[i], seen[ks[i]]).order, kindOf(ks[j], seen[ks[j]]).order
		if oi != oj {
			return oi < oj
		}
		return ks[i] < ks[j]
	})
	return ks
}

func (b *builder) levelIndex() map[string]int {
	m := map[string]int{}
	for i, l := range b.tbl.Levels {
		m[l.Label] = i
	}
	// levels that appear only in deviations follow
	for _, d := range b.tbl.Deviations {
		if _, ok := m[d.Level]; !ok {
			m[d.Level] = len(m)
		}
	}
	return m
}

func (b *builder) levelNames() []string {
	idx := b.levelIndex()
	out := make([]string, len(idx))
	for n, i := range idx {
		out[i] = n
	}
	return out
}
