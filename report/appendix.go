package report

import (
	"fmt"
	"sort"
	"strconv"
	"strings"

	"moltrail/archive"
	"moltrail/engine"
	"moltrail/engine/molecule"
)

// structure is one distinct final geometry and the records that share it.
type structure struct {
	name    string
	charge  int
	mult    int
	atoms   []engine.GeomAtom
	fromIn  bool // taken from the input (the record has no final geometry)
	records []*archive.Record
}

// finalGeometry is the record's final geometry in Å, or its input
// geometry converted from bohr when the result holds none.
func finalGeometry(r *archive.Record) ([]engine.GeomAtom, bool) {
	if len(r.Results.GeometryAngstrom) > 0 {
		return r.Results.GeometryAngstrom, false
	}
	out := make([]engine.GeomAtom, len(r.Input.Molecule.Atoms))
	for i, a := range r.Input.Molecule.Atoms {
		out[i] = engine.GeomAtom{Symbol: a.Symbol, XYZ: [3]float64{a.Bohr[0] * molecule.BohrAngstrom, a.Bohr[1] * molecule.BohrAngstrom, a.Bohr[2] * molecule.BohrAngstrom}}
	}
	return out, true
}

func geomKey(name string, g []engine.GeomAtom) string {
	var sb strings.Builder
	sb.WriteString(name)
	for _, a := range g {
		fmt.Fprintf(&sb, "|%s %.6f %.6f %.6f", a.Symbol, a.XYZ[0]+0, a.XYZ[1]+0, a.XYZ[2]+0)
	}
	return sb.String()
}

func (b *builder) structuresOf() []*structure {
	var out []*structure
	at := map[string]*structure{}
	for i := range b.recs {
		r := &b.recs[i]
		g, fromIn := finalGeometry(r)
		k := geomKey(r.Input.Molecule.Name, g)
		s, ok := at[k]
		if !ok {
			s = &structure{name: r.Input.Molecule.Name, charge: r.Input.Molecule.Charge, mult: r.Input.Molecule.Multiplicity, atoms: g, fromIn: fromIn}
			at[k] = s
			out = append(out, s)
		}
		s.records = append(s.records, r)
	}
	return out
}

// hillFormula writes the formula in Hill order with subscript counts.
func hillFormula(g []engine.GeomAtom) rich {
	n := map[string]int{}
	for _, a := range g {
		n[a.Symbol]++
	}
	var syms []string
	for s := range n {
		syms = append(syms, s)
	}
	sort.Slice(syms, func(i, j int) bool {
		rank := func(s string) int {
			if n["C"] > 0 {
				switch s {
				case "C":
					return 0
				case "H":
					return 1
				}
			}
			return 2
		}
		if ri, rj := rank(syms[i]), rank(syms[j]); ri != rj {
			return ri < rj
		}
		return syms[i] < syms[j]
	})
	var out rich
	for _, s := range syms {
		out = append(out, span{Text: s})
		if n[s] > 1 {
			out = append(out, span{Text: strconv.Itoa(n[s]), Shift: sub})
		}
	}
	return out
}

func (b *builder) structures() {
	b.add(heading{Level: 1, Number: "A", Prefix: "Appendix ", Text: txt("Structures"), Break: true})
	ss := b.structuresOf()
	b.add(paragraph{Text: mk(fmt.Sprintf("Cartesian coordinates in ångström (Å) of the %d distinct final geometr%s, each with its total energy at every level "+
		"computed on it and the id of the record that holds it. Energies are in hartree (E_{h}).", len(ss), map[bool]string{true: "y", false: "ies"}[len(ss) == 1]))})
	for i, s := range ss {
		src := "final geometry of the calculation"
		if s.fromIn {
			src = "geometry as given in the input"
		}
		for _, r := range s.records {
			if r.Input.Task == "optimize" && !s.fromIn {
				src = "optimised at " + b.levelOf(r)
				break
			}
		}
		capt := cat(boldTxt(fmt.Sprintf("Structure A%d.", i+1)), txt(" "+s.name+" ("), hillFormula(s.atoms),
			txt(fmt.Sprintf("), charge %d, multiplicity %d, %d atom%s; %s.", s.charge, s.mult, len(s.atoms), plural(len(s.atoms)), src)), b.minimumNote(s.records))
		t := &table{Name: fmt.Sprintf("structure_A%d", i+1), Caption: capt}
		t.Head = []rich{txt("Atom"), mk("*x* / Å"), mk("*y* / Å"), mk("*z* / Å")}
		t.Align = []align{alignLeft, alignDecimal, alignDecimal, alignDecimal}
		for _, a := range s.atoms {
			t.Rows = append(t.Rows, row{Cells: []cell{textCell(a.Symbol), num(a.XYZ[0], 6), num(a.XYZ[1], 6), num(a.XYZ[2], 6)}})
		}
		for _, r := range s.records {
			e := num(r.Results.EnergyHartree, 8)
			note := cat(mk("*E*("), txt(b.levelOf(r)), txt(") = "), e.Lines[0], mk(" E_{h}"))
			if r.Results.Correlation != nil || (r.Results.SCFEnergyHartree != 0 && r.Results.SCFEnergyHartree != r.Results.EnergyHartree) {
				note = cat(note, mk(" (SCF "), num(r.Results.SCFEnergyHartree, 8).Lines[0], mk(" E_{h})"))
			}
			note = cat(note, txt(", "+r.Status+", record "), monoTxt(r.ID))
			t.Notes = append(t.Notes, note)
		}
		b.add(t)
	}
}

// ---- provenance ----

// labeller numbers distinct values in order of first appearance.
type labeller struct {
	prefix string
	idx    map[string]int
	keys   []string
}

func newLabeller(p string) *labeller { return &labeller{prefix: p, idx: map[string]int{}} }

func (l *labeller) label(k string) string {
	n, ok := l.idx[k]
	if !ok {
		l.keys = append(l.keys, k)
		n = len(l.keys)
		l.idx[k] = n
	}
	return fmt.Sprintf("%s%d", l.prefix, n)
}

func settingsText(j engine.Job) rich {
	s := j.SCF
	var parts []string
	parts = append(parts, fmt.Sprintf("SCF: |Δ*E*| < %s E_{h}, RMS Δ*D* < %s, max |*g*| < %s, ≤ %d iterations, guess %s, DIIS %d, Schwarz %s",
		sci(s.EnergyTolHartree), sci(s.DensityTol), sci(s.GradientTol), s.MaxIter, esc(s.Guess), s.DIISSize, sci(s.SchwarzThreshold)))
	if s.LevelShiftHartree != 0 {
		parts[0] += fmt.Sprintf(", level shift %s E_{h}", sci(s.LevelShiftHartree))
	}
	if g := j.Grid; g != nil {
		parts = append(parts, fmt.Sprintf("grid %s: %d radial (%s), angular %d, %s, pruning %s, cut-offs %s / %s",
			esc(g.Level), g.RadialPoints, esc(g.RadialScheme), g.AngularOrder, esc(g.Partition), esc(orNone(g.Pruning)), sci(g.DensityCut), sci(g.BasisCut)))
	}
	if c := j.Correlation; c != nil {
		fc := "all electrons"
		if c.FrozenCore {
			fc = "frozen core"
		}
		t := "correlation: " + fc + ", relaxed properties " + esc(orNone(c.RelaxedProperties))
		if c.FieldStepAU > 0 {
			t += ", field step " + sci(c.FieldStepAU) + " a.u."
		}
		parts = append(parts, t)
	}
	o := j.Origin
	ok := esc(orNone(o.Kind))
	if o.Kind == "point" {
		ok += fmt.Sprintf(" (%s, %s, %s) a_{0}", sci(o.Point[0]), sci(o.Point[1]), sci(o.Point[2]))
	}
	if o.Kind == "atom" {
		ok += fmt.Sprintf(" %d", o.Atom+1)
	}
	parts = append(parts, "multipole origin "+ok)
	if p := j.Opt; p != nil && j.Task == "optimize" {
		parts = append(parts, fmt.Sprintf("optimisation: %s, %s gradients, max force %s, RMS force %s E_{h}/a_{0}, max step %s a_{0}, |Δ*E*| < %s E_{h}, ≤ %d steps",
			esc(orNone(p.Coordinates)), esc(orNone(p.GradientMethod)), sci(p.MaxForce), sci(p.RMSForce), sci(p.MaxStep), sci(p.EnergyChange), p.MaxSteps))
	}
	return mk(strings.Join(parts, "; "))
}

func (b *builder) provenance() {
	b.add(heading{Level: 1, Number: "B", Prefix: "Appendix ", Text: txt("Provenance"), Break: true})
	b.add(paragraph{Text: txt("Every record used is listed with its id (the SHA-256 of the stored record) and its input key (the SHA-256 of the canonical input, " +
		"which covers every setting that can change a number). Builds, basis data and settings shared by several records are listed once and referred to by label. " +
		"With the id, a record can be looked up in the archive, re-hashed to check it was not altered, and recomputed.")})
	builds, bases, sets := newLabeller("C"), newLabeller("B"), newLabeller("S")
	type recRefs struct{ c, bs, s string }
	refs := make([]recRefs, len(b.recs))
	var buildOf = map[string]archive.Code{}
	var basisOf = map[string]engine.BasisSpec{}
	var setOf = map[string]engine.Job{}
	for i := range b.recs {
		r := &b.recs[i]
		ck := fmt.Sprintf("%s\x00%s\x00%s\x00%v\x00%s\x00%s\x00%s\x00%s", r.Code.Program, r.Code.Version, r.Code.Revision, r.Code.Modified, r.Code.GoVersion, r.Code.OS, r.Code.Arch, r.Code.ExecutableSHA256)
		bk := fmt.Sprintf("%s\x00%s\x00%s\x00%s", r.Input.Basis.Name, r.Input.Basis.SHA256, r.Input.Basis.Angular, r.Input.Basis.File)
		sk := settingsText(r.Input).Plain() + "\x00" + r.Input.Task
		refs[i] = recRefs{builds.label(ck), bases.label(bk), sets.label(sk)}
		buildOf[refs[i].c] = r.Code
		basisOf[refs[i].bs] = r.Input.Basis
		setOf[refs[i].s] = r.Input
	}
	if len(b.recs) == 0 {
		b.add(paragraph{Text: txt("No records were given.")})
		return
	}
	ct := b.newTable("builds", txt("Program builds."))
	ct.Head = []rich{txt("Label"), txt("Program"), txt("Revision / executable SHA-256"), txt("Modified"), txt("Go"), txt("Platform")}
	ct.Align = []align{alignLeft, alignLeft, alignLeft, alignCentre, alignLeft, alignLeft}
	ct.Mono = []bool{false, false, true}
	ct.Wrap = []float64{0, 80, 175, 0, 0, 0}
	for i := range builds.keys {
		l := fmt.Sprintf("C%d", i+1)
		c := buildOf[l]
		mod := "no"
		if c.Modified {
			mod = "yes"
		}
		prog := strings.TrimSpace(c.Program + " " + c.Version)
		ct.Rows = append(ct.Rows, row{Cells: []cell{textCell(l), textCell(orDash(prog)),
			{Lines: []rich{txt(orDash(c.Revision)), txt(orDash(c.ExecutableSHA256))}, Raw: c.Revision + " " + c.ExecutableSHA256},
			textCell(mod), textCell(orDash(c.GoVersion)), textCell(orDash(strings.Trim(c.OS+"/"+c.Arch, "/")))}})
	}
	b.add(ct)

	bt := b.newTable("basis_data", txt("Basis data: name, function type and the SHA-256 of the basis file's bytes."))
	bt.Head = []rich{txt("Label"), txt("Basis"), txt("Functions"), txt("File"), txt("Content SHA-256")}
	bt.Align = []align{alignLeft, alignLeft, alignLeft, alignLeft, alignLeft}
	bt.Mono = []bool{false, false, false, false, true}
	bt.Wrap = []float64{0, 80, 0, 120, 175}
	for i := range bases.keys {
		l := fmt.Sprintf("B%d", i+1)
		s := basisOf[l]
		file := s.File
		if len(s.Inline) > 0 {
			file += " (inline)"
		}
		bt.Rows = append(bt.Rows, row{Cells: []cell{textCell(l), textCell(s.Name), textCell(orDash(string(s.Angular))), textCell(orDash(file)), textCell(orDash(s.SHA256))}})
	}
	b.add(bt)

	st := b.newTable("settings", txt("Settings: convergence thresholds, grids, correlation options, multipole origin and optimisation criteria."))
	st.Head = []rich{txt("Label"), txt("Task"), txt("Settings")}
	st.Align = []align{alignLeft, alignLeft, alignLeft}
	st.Wrap = []float64{0, 0, 360}
	for i := range sets.keys {
		l := fmt.Sprintf("S%d", i+1)
		j := setOf[l]
		txtS := settingsText(j)
		st.Rows = append(st.Rows, row{Cells: []cell{textCell(l), textCell(orDash(j.Task)), {Lines: []rich{txtS}, Raw: txtS.Plain()}}, Rule: i > 0})
	}
	b.add(st)

	rt := b.newTable("records", txt("Records: id and input key, molecule and level, the build (C), basis data (B) and settings (S) used, and the status."))
	rt.Head = []rich{txt("Record id / input key"), txt("Molecule / level"), txt("C · B · S / status")}
	rt.Align = []align{alignLeft, alignLeft, alignLeft}
	rt.Mono = []bool{true}
	rt.Wrap = []float64{0, 95, 0}
	for i := range b.recs {
		r := &b.recs[i]
		rf := refs[i]
		rt.Rows = append(rt.Rows, row{Cells: []cell{
			{Lines: []rich{txt(r.ID), txt(orDash(r.InputKey))}, Raw: r.ID + " " + r.InputKey},
			{Lines: []rich{txt(r.Input.Molecule.Name), txt(b.levelOf(r))}, Raw: r.Input.Molecule.Name + " " + b.levelOf(r)},
			{Lines: []rich{txt(rf.c + " · " + rf.bs + " · " + rf.s), txt(orDash(r.Status))}, Raw: rf.c + " " + rf.bs + " " + rf.s + " " + r.Status},
		}, Rule: i > 0})
	}
	b.add(rt)

	if len(b.tbl.Picked) > 0 {
		pt := b.newTable("record_choice", txt("Which record stands for each molecule and level, and why."))
		pt.Head = []rich{txt("Molecule"), txt("Level"), txt("Purpose"), txt("Record"), txt("Cand."), txt("Reason")}
		pt.Align = []align{alignLeft, alignLeft, alignLeft, alignLeft, alignRight, alignLeft}
		pt.Mono = []bool{false, false, false, true}
		pt.Wrap = []float64{70, 80, 0, 0, 0, 150}
		pt.Key = 2
		for _, p := range b.tbl.Picked {
			pt.Rows = append(pt.Rows, row{Cells: []cell{textCell(p.Molecule), textCell(p.Level), textCell(p.Purpose), textCell(shortID(p.RecordID)),
				textCell(fmt.Sprint(p.Candidates)), textCell(orDash(p.Reason))}})
		}
		b.add(pt)
	}
}
