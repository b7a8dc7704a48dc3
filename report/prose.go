package report

import (
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"

	"moltrail/archive"
	"moltrail/engine"
	"moltrail/engine/basis"
	"moltrail/engine/molecule"
)

// The computational details are written from the records themselves:
// every setting that can change a number is stated, and where records
// differ the values are listed with the number of records using each.

// sci writes v as "a × 10^{b}" markup (plain decimals between 0.01 and 1000).
func sci(v float64) string {
	if v == 0 {
		return "0"
	}
	a := math.Abs(v)
	if a >= 0.01 && a < 1000 {
		return minus(strconv.FormatFloat(v, 'g', 6, 64))
	}
	e := int(math.Floor(math.Log10(a)))
	m := v / math.Pow(10, float64(e))
	ms := strconv.FormatFloat(m, 'g', 4, 64)
	if ms == "1" {
		return "10^{" + minus(strconv.Itoa(e)) + "}"
	}
	if ms == "-1" {
		return "−10^{" + minus(strconv.Itoa(e)) + "}"
	}
	return minus(ms) + " × 10^{" + minus(strconv.Itoa(e)) + "}"
}

// phrase states one setting: "X" when all records agree, else
// "X in n records, Y in m records".
func phrase(cs []counted) string {
	if len(cs) == 1 {
		return cs[0].v
	}
	var parts []string
	for _, c := range cs {
		parts = append(parts, fmt.Sprintf("%s in %d record%s", c.v, c.n, plural(c.n)))
	}
	return strings.Join(parts, "; ")
}

// countPhrase writes "1 record is …" or "n records are …".
func countPhrase(n int, one, many string) string {
	if n == 1 {
		return "1 " + one
	}
	return fmt.Sprintf("%d %s", n, many)
}

func plural(n int) string {
	if n == 1 {
		return ""
	}
	return "s"
}

func methodWords(r archive.Record) string {
	m := strings.ToLower(r.Input.Method)
	info, ok := engine.Methods[m]
	name := strings.ToUpper(m)
	s := name
	if ok && info.Description != "" {
		s += " (" + info.Description + ")"
	}
	if r.Input.Functional != "" {
		s += ", exchange–correlation definition " + r.Input.Functional
	}
	if r.Input.Reference != "" && !strings.EqualFold(r.Input.Reference, m) {
		s += ", " + strings.ToUpper(r.Input.Reference) + " reference"
	}
	return s
}

func angularWords(a basis.Angular) string {
	switch a {
	case basis.Spherical:
		return "spherical-harmonic (pure) functions"
	case basis.Cartesian:
		return "Cartesian functions"
	}
	if a == "" {
		return "functions of unrecorded type"
	}
	return string(a) + " functions"
}

// cite numbers a literature reference, once, and returns its marker.
func (b *builder) cite(ref string) string {
	ref = strings.TrimSpace(ref)
	if ref == "" {
		return ""
	}
	n, ok := b.refNo[ref]
	if !ok {
		b.refs = append(b.refs, ref)
		n = len(b.refs)
		b.refNo[ref] = n
	}
	return strconv.Itoa(n)
}

func (b *builder) details() {
	b.add(heading{Level: 1, Number: "1", Text: txt("Computational details"), Break: false})
	recs := b.recs
	if len(recs) == 0 {
		b.add(paragraph{Text: txt("No records were given, so no computational details can be stated.")})
		return
	}
	collect := func(f func(r archive.Record) (string, bool)) []counted {
		var vs []string
		for _, r := range recs {
			if v, ok := f(r); ok {
				vs = append(vs, v)
			}
		}
		return distinct(vs)
	}
	count := func(f func(r archive.Record) bool) int {
		n := 0
		for _, r := range recs {
			if f(r) {
				n++
			}
		}
		return n
	}

	// Program.
	codes := collect(func(r archive.Record) (string, bool) {
		s := esc(codeLabel(r.Code))
		var build []string
		if r.Code.GoVersion != "" {
			build = append(build, "built with "+esc(r.Code.GoVersion))
		}
		if r.Code.OS != "" {
			build = append(build, "for "+esc(r.Code.OS+"/"+r.Code.Arch))
		}
		if len(build) > 0 {
			s += " (" + strings.Join(build, " ") + ")"
		}
		return s, true
	})
	var p1 strings.Builder
	fmt.Fprintf(&p1, "All %d calculations were carried out with %s. ", len(recs), phrase(codes))
	if n := count(func(r archive.Record) bool { return r.Code.Modified }); n > 0 {
		fmt.Fprintf(&p1, "%d record%s came from a build with uncommitted source changes; such numbers cannot be tied to a published revision exactly. ", n, plural(n))
	}
	p1.WriteString("Each record is stored with the full canonical input, whose SHA-256 hash (the input key) is listed in Appendix B together with the record id. ")
	p1.WriteString("Physical constants are those of CODATA 2018; the engine computes in atomic units and converts at output.")
	b.add(paragraph{Text: mk(p1.String())})

	// Methods.
	methods := collect(func(r archive.Record) (string, bool) { return esc(methodWords(r)), true })
	var p2 strings.Builder
	fmt.Fprintf(&p2, "Methods: %s. ", phrase(methods))
	corr := collect(func(r archive.Record) (string, bool) {
		if r.Input.Correlation == nil {
			return "", false
		}
		c := r.Input.Correlation
		s := "all electrons were correlated"
		if c.FrozenCore {
			s = "the chemical core orbitals were frozen"
			if r.Results.Correlation != nil && r.Results.Correlation.FrozenOrbitals > 0 {
				s += fmt.Sprintf(" (%d orbital%s)", r.Results.Correlation.FrozenOrbitals, plural(r.Results.Correlation.FrozenOrbitals))
			}
		}
		switch c.RelaxedProperties {
		case "finite-field":
			s += ", with relaxed one-electron properties by finite differences of the energy in an electric field (step " + sci(c.FieldStepAU) + " a.u.)"
		case "z-vector":
			s += ", with relaxed one-electron properties from the analytic relaxed density"
		case "none", "":
			s += ", without relaxed properties"
		default:
			s += ", with relaxed properties by " + esc(c.RelaxedProperties)
		}
		return s, true
	})
	if len(corr) > 0 {
		fmt.Fprintf(&p2, "In the correlated (MP2-family) calculations %s. ", phrase(corr))
	}
	b.add(paragraph{Text: mk(p2.String())})

	// Basis sets with references.
	type bkey struct {
		name, sha string
		ang       basis.Angular
		inline    bool
		file      string
	}
	bset := map[bkey]int{}
	elems := map[bkey]map[int]bool{}
	var bkeys []bkey
	for _, r := range recs {
		k := bkey{r.Input.Basis.Name, r.Input.Basis.SHA256, r.Input.Basis.Angular, len(r.Input.Basis.Inline) > 0, r.Input.Basis.File}
		if _, ok := bset[k]; !ok {
			bkeys = append(bkeys, k)
			elems[k] = map[int]bool{}
		}
		bset[k]++
		for _, a := range r.Input.Molecule.Atoms {
			if e, err := molecule.Lookup(a.Symbol); err == nil {
				elems[k][e.Z] = true
			}
		}
	}
	sort.Slice(bkeys, func(i, j int) bool {
		if bkeys[i].name != bkeys[j].name {
			return bkeys[i].name < bkeys[j].name
		}
		return bkeys[i].sha < bkeys[j].sha
	})
	var bparts []string
	for _, k := range bkeys {
		s := esc(k.name)
		var cites []string
		if k.inline {
			s += " (user-supplied file " + esc(k.file) + ", stored inline in the record)"
		} else if set, err := basis.Builtin(k.name); err == nil {
			for _, ref := range citations(set.References, elems[k]) {
				if c := b.cite(ref); c != "" {
					cites = append(cites, c)
				}
			}
			if set.SHA256 != k.sha && k.sha != "" {
				s += " (note: the library's copy of this set has changed since these records were made)"
			}
		}
		if len(cites) > 0 {
			s += " [" + strings.Join(cites, ", ") + "]"
		}
		s += " with " + angularWords(k.ang)
		if len(bkeys) > 1 {
			s += fmt.Sprintf(" (%d record%s)", bset[k], plural(bset[k]))
		}
		bparts = append(bparts, s)
	}
	b.add(paragraph{Text: mk("Basis sets: " + strings.Join(bparts, "; ") + ". The content hash of each basis file is listed in Appendix B; " +
		"a record names the exact basis data it used.")})

	// SCF.
	scf := collect(func(r archive.Record) (string, bool) {
		s := r.Input.SCF
		t := fmt.Sprintf("the energy change between iterations was below %s E_{h}, the root-mean-square change of the density matrix below %s "+
			"and the largest element of the orbital gradient below %s (at most %d iterations)",
			sci(s.EnergyTolHartree), sci(s.DensityTol), sci(s.GradientTol), s.MaxIter)
		return t, true
	})
	extras := collect(func(r archive.Record) (string, bool) {
		s := r.Input.SCF
		g := s.Guess
		switch g {
		case "sad":
			g = "a superposition of atomic densities"
		case "core":
			g = "the core Hamiltonian"
		}
		t := fmt.Sprintf("the initial guess was %s, DIIS extrapolation used up to %d vectors and two-electron integrals whose Schwarz bound fell below %s were skipped", g, s.DIISSize, sci(s.SchwarzThreshold))
		if s.LevelShiftHartree != 0 {
			t += fmt.Sprintf(", with a level shift of %s E_{h}", sci(s.LevelShiftHartree))
		}
		return t, true
	})
	b.add(paragraph{Text: mk("The SCF equations were taken as converged when " + phrase(scf) + "; " + phrase(extras) + ".")})

	// Grids.
	grids := collect(func(r archive.Record) (string, bool) {
		g := r.Input.Grid
		if g == nil {
			return "", false
		}
		s := fmt.Sprintf("grid level “%s”: %d radial points (%s scheme) and angular order %d per atom, %s partition, pruning %s, density cut-off %s, basis-function cut-off %s",
			esc(g.Level), g.RadialPoints, esc(g.RadialScheme), g.AngularOrder, esc(g.Partition), esc(orNone(g.Pruning)), sci(g.DensityCut), sci(g.BasisCut))
		return s, true
	})
	if len(grids) > 0 {
		b.add(paragraph{Text: mk("Exchange–correlation contributions were integrated numerically on the " + phrase(grids) + ".")})
	}

	// Geometries.
	var pg []string
	nOpt := count(func(r archive.Record) bool { return r.Input.Task == "optimize" })
	nSP := len(recs) - nOpt
	if nSP > 0 {
		pg = append(pg, fmt.Sprintf("%s at the geometry given as input, used as given (no re-centring or re-orientation)", countPhrase(nSP, "record is a single-point calculation", "records are single-point calculations")))
	}
	if nOpt > 0 {
		opts := collect(func(r archive.Record) (string, bool) {
			o := r.Input.Opt
			if r.Input.Task != "optimize" || o == nil {
				return "", false
			}
			s := fmt.Sprintf("in %s coordinates with %s gradients until the largest force component was below %s E_{h}/a_{0}, the RMS force below %s E_{h}/a_{0}, the largest step below %s a_{0} and the energy change below %s E_{h} (at most %d steps, trust radius %s a_{0})",
				esc(orNone(o.Coordinates)), esc(orNone(o.GradientMethod)), sci(o.MaxForce), sci(o.RMSForce), sci(o.MaxStep), sci(o.EnergyChange), o.MaxSteps, sci(o.TrustRadiusBohr))
			if o.FiniteDiffStepAU > 0 {
				s += fmt.Sprintf(", finite-difference step %s a_{0}", sci(o.FiniteDiffStepAU))
			}
			return s, true
		})
		s := countPhrase(nOpt, "record is a geometry optimisation", "records are geometry optimisations")
		if len(opts) > 0 {
			s += ", " + phrase(opts)
		}
		pg = append(pg, s)
	}
	orig := collect(func(r archive.Record) (string, bool) {
		o := r.Input.Origin
		k := o.Kind
		switch k {
		case "centre-of-mass", "":
			k = "the centre of mass (most abundant isotopes)"
		case "centre-of-charge":
			k = "the centre of nuclear charge"
		case "coordinate-origin":
			k = "the origin of the input coordinates"
		case "point":
			k = fmt.Sprintf("the point (%s, %s, %s) a_{0}", sci(o.Point[0]), sci(o.Point[1]), sci(o.Point[2]))
		case "atom":
			k = fmt.Sprintf("the nucleus of atom %d", o.Atom+1)
		}
		return k, true
	})
	b.add(paragraph{Text: mk(strings.Join(pg, "; ") + ". Final Cartesian coordinates of every structure are given in Appendix A.")})
	b.add(paragraph{Text: mk("Multipole moments are taken about " + phrase(orig) + ". The dipole moment points from negative to positive charge (Σ *q* *r*); " +
		"the quadrupole moment is the traceless tensor *Θ*_{ij} = ½ Σ *q* (3 *r*_{i} *r*_{j} − *r*^{2} *δ*_{ij}) in D·Å (1 D·Å = 1 buckingham). " +
		"Bond lengths are given in Å with deviations in pm, angles in degrees (°), dipoles in debye (D) and energies in E_{h} or kJ mol^{−1}.")})
	if b.tbl.RefSet.Name != "" {
		src := b.tbl.RefSet.Source
		rs := "Reference values were taken from the set " + esc(b.tbl.RefSet.Name)
		if src != "" {
			rs += " (" + esc(src) + ")"
		}
		if b.tbl.RefSet.SHA256 != "" {
			rs += ", content SHA-256 " + shortID(b.tbl.RefSet.SHA256) + "…"
		}
		b.add(paragraph{Text: mk(rs + ". Which record stands for each molecule and level, and why, is listed in Appendix B.")})
	}
}

func (b *builder) references() {
	if len(b.refs) == 0 {
		return
	}
	b.add(heading{Level: 1, Number: "", Text: txt("References"), Break: false})
	for i, r := range b.refs {
		b.add(paragraph{Text: cat(txt(fmt.Sprintf("[%d] ", i+1)), txt(r)), Small: true})
	}
}
