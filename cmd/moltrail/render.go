package main

import (
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"

	"moltrail/archive"
	"moltrail/engine"
	"moltrail/engine/molecule"
)

// levelLine is a record's level label (archive.LevelLabel, with look to
// follow geometry-from links) and the angular type of its basis functions.
func levelLine(r *archive.Record, look archive.Lookup) string {
	return archive.LevelLabel(r, look) + " (" + string(r.Input.Basis.Angular) + " functions" + fitNote(r.FitSet(), ", ") + ")"
}

// fitNote names the auxiliary set of a density-fitted record after sep
// ("" for exact integrals).
func fitNote(set, sep string) string {
	if set == "" {
		return ""
	}
	return sep + "fitted with " + set
}

// codeLabel is a program version with the start of its VCS revision.
func codeLabel(version, revision string) string {
	if len(revision) > 10 {
		revision = revision[:10]
	}
	if revision == "" {
		return version
	}
	return version + " " + revision
}

// fixed formats v with prec decimals; a value that rounds to zero prints
// without a minus sign (no "-0.000000" for a component that is zero by
// symmetry).
func fixed(v float64, prec int) string {
	s := strconv.FormatFloat(v, 'f', prec, 64)
	if s[0] == '-' && strings.Trim(s[1:], "0.") == "" {
		return s[1:]
	}
	return s
}

// vec is a dipole-like vector with its magnitude.
func vec(v *[3]float64, unit string) string {
	if v == nil {
		return "—"
	}
	n := math.Sqrt(v[0]*v[0] + v[1]*v[1] + v[2]*v[2])
	return fmt.Sprintf("(%s, %s, %s) %s   |μ| %s %s", fixed(v[0], 6), fixed(v[1], 6), fixed(v[2], 6), unit, fixed(n, 6), unit)
}

// signed is an integer with its sign, and 0 without one.
func signed(n int) string {
	if n == 0 {
		return "0"
	}
	return fmt.Sprintf("%+d", n)
}

// writeRunSummary is the short human report after a run.
func writeRunSummary(w io.Writer, r *archive.Record, look archive.Lookup, u energyUnit) {
	fmt.Fprintf(w, "record   %s   %s\n", r.ID, r.Status)
	fmt.Fprintf(w, "molecule %s  %s  charge %s  multiplicity %d\n", r.Input.Molecule.Name, r.Formula(), signed(r.Input.Molecule.Charge), r.Input.Molecule.Multiplicity)
	fmt.Fprintf(w, "level    %s  task %s\n", levelLine(r, look), r.Input.Task)
	if r.Status != engine.StatusFailed {
		fmt.Fprintf(w, "energy   %s\n", u.value(r.Results.EnergyHartree))
		if r.Results.DipoleDebye != nil {
			fmt.Fprintf(w, "dipole   %s\n", vec(r.Results.DipoleDebye, "D"))
		}
		if f := frontierLine(r.Results.Orbitals, u); f != "" {
			fmt.Fprintf(w, "orbitals %s\n", f)
		}
		if r.Results.S2 != nil {
			fmt.Fprintf(w, "<S²>     %s\n", s2Text(*r.Results.S2, r.Input.Molecule.Multiplicity))
		}
		writeVibrationsLine(w, r.Results.Vibrations)
	} else {
		fmt.Fprintf(w, "error    %s\n", r.Results.Error)
	}
	fmt.Fprintf(w, "run      %s  %.3f s  %d threads\n", utc(r.Run.StartUTC), r.Run.WallSeconds, r.Run.Threads)
}

// writeRecord is the whole record, human readable.
func writeRecord(w io.Writer, r *archive.Record, notes []archive.Note, look archive.Lookup, u energyUnit) {
	sec := func(title string) { fmt.Fprintf(w, "\n» %s\n", title) }
	kv := func(k, format string, a ...any) { fmt.Fprintf(w, "  %-22s %s\n", k, fmt.Sprintf(format, a...)) }
	fmt.Fprintf(w, "record %s\n", r.ID)
	kv("status", "%s", r.Status)
	kv("input key", "%s", r.InputKey)
	kv("record format", "%s", r.Format)

	in := r.Input
	sec("input")
	kv("molecule", "%s  (%s, charge %s, multiplicity %d, %d atoms)", in.Molecule.Name, r.Formula(), signed(in.Molecule.Charge), in.Molecule.Multiplicity, len(in.Molecule.Atoms))
	kv("level", "%s", levelLine(r, look))
	kv("geometry", "%s", archive.GeometryWords(r, look))
	kv("method", "%s  reference %s", in.Method, in.Reference)
	if in.Functional != "" {
		kv("functional", "%s", in.Functional)
	}
	kv("basis", "%s  %s  %s", in.Basis.Name, in.Basis.Angular, in.Basis.File)
	kv("basis sha256", "%s", in.Basis.SHA256)
	kv("task", "%s", in.Task)
	s := in.SCF
	kv("scf convergence", "|ΔE| < %g hartree, rms ΔD < %g, max |FDS−SDF| < %g", s.EnergyTolHartree, s.DensityTol, s.GradientTol)
	kv("scf controls", "≤ %d iterations, guess %s, DIIS %d, Schwarz %g, level shift %g hartree", s.MaxIter, s.Guess, s.DIISSize, s.SchwarzThreshold, s.LevelShiftHartree)
	if g := in.Grid; g != nil {
		kv("grid", "%s: %s %d radial × order %d angular, %s partition, pruning %s", g.Level, g.RadialScheme, g.RadialPoints, g.AngularOrder, g.Partition, g.Pruning)
	}
	if c := in.Correlation; c != nil {
		kv("correlation", "frozen core %v, relaxed properties %s (field step %g au%s)", c.FrozenCore, c.RelaxedProperties, c.FieldStepAU, strings.TrimSuffix(", "+c.FieldFormula, ", "))
		if k := c.CC; k != nil {
			kv("coupled cluster", "|ΔE| < %g hartree, rms Δt < %g, ≤ %d iterations, DIIS %d, %s integrals", k.EnergyTolHartree, k.AmplitudeTol, k.MaxIter, k.DIISSize, k.Integrals)
		}
	}
	if f := in.Fitting; f != nil {
		kv("fitted integrals", "Coulomb and exchange of the SCF, density-fitted with %s  %s  %s", f.SCFSet.Name, f.SCFSet.Angular, f.SCFSet.File)
		kv("auxiliary sha256", "%s", f.SCFSet.SHA256)
		kv("fitting thresholds", "metric eigenvalue cut-off %g (relative), three-centre Schwarz %g", f.MetricCutoff, f.SchwarzThreshold)
	}
	kv("multipole origin", "%s", in.OriginLabel())
	if o := in.Opt; o != nil {
		kv("optimisation", "max force %g, rms force %g hartree/bohr, ≤ %d steps, %s coordinates, %s gradient", o.MaxForce, o.RMSForce, o.MaxSteps, o.Coordinates, o.GradientMethod)
	}
	fmt.Fprintln(w, "  atoms (bohr)")
	for _, a := range in.Molecule.Atoms {
		fmt.Fprintf(w, "    %-2s %15s %15s %15s\n", a.Symbol, fixed(a.Bohr[0], 10), fixed(a.Bohr[1], 10), fixed(a.Bohr[2], 10))
	}

	res := r.Results
	sec("results")
	if res.Error != "" {
		kv("error", "%s", res.Error)
	}
	if r.Status != engine.StatusFailed {
		kv("energy", "%s", u.value(res.EnergyHartree))
		kv("scf energy", "%s", u.value(res.SCFEnergyHartree))
		if res.CorrelationEnergyHartree != nil {
			kv("correlation energy", "%s", u.value(*res.CorrelationEnergyHartree))
		}
		if c := res.CoupledCluster; c != nil {
			t := ""
			if c.TriplesHartree != nil {
				t = ", (T) " + u.value(*c.TriplesHartree)
			}
			kv("coupled cluster", "CCSD correlation %s%s; %d iterations; %d active occupied, %d virtual, %d frozen; T1 diagnostic %.4f",
				u.value(c.CCSDCorrelationHartree), t, len(c.Iterations), c.ActiveOccupied, c.Virtual, c.FrozenOrbitals, c.T1Diagnostic)
		}
		kv("nuclear repulsion", "%s", u.value(res.NuclearRepulsionHartree))
		kv("dipole", "%s", vec(res.DipoleDebye, "D"))
		if res.SCFDipoleDebye != nil && res.DipoleDebye != nil && *res.SCFDipoleDebye != *res.DipoleDebye {
			kv("scf dipole", "%s", vec(res.SCFDipoleDebye, "D"))
		}
		if q := res.QuadrupoleBuckingham; q != nil {
			kv("quadrupole (traceless)", "xx %s yy %s zz %s xy %s xz %s yz %s D·Å", fixed(q.XX, 6), fixed(q.YY, 6), fixed(q.ZZ, 6), fixed(q.XY, 6), fixed(q.XZ, 6), fixed(q.YZ, 6))
		}
		o := res.MultipoleOriginBohr
		kv("multipole origin", "(%s, %s, %s) bohr — dipoles of charged molecules and quadrupoles depend on it", fixed(o[0], 6), fixed(o[1], 6), fixed(o[2], 6))
		if res.S2 != nil {
			kv("<S²>", "%s", s2Text(*res.S2, r.Input.Molecule.Multiplicity))
		}
		writeOrbitals(w, res.Orbitals, u)
		writeCharges(w, r)
		kv("basis functions", "%d   electrons α %d β %d", res.NBasis, res.Electrons[0], res.Electrons[1])
		if f := res.Fitting; f != nil {
			kv("fitting", "%s: %d auxiliary functions, %d fitted; metric inverted by %s (condition estimate %.2g, %d combinations removed)", f.SCFSet, f.AuxFunctions, f.FittedFunctions, f.Metric, f.MetricCondition, f.MetricRemoved)
		}
		if n := len(res.SCFIterations); n > 0 {
			last := res.SCFIterations[n-1]
			kv("scf iterations", "%d (last ΔE %.2e hartree, rms ΔD %.2e, gradient %.2e)", n, last.DeltaEHartree, last.DensityRMS, last.OrbitalGradient)
		}
	}
	fmt.Fprintln(w, "  geometry (Å)")
	for _, a := range res.GeometryAngstrom {
		fmt.Fprintf(w, "    %-2s %15s %15s %15s\n", a.Symbol, fixed(a.XYZ[0], 10), fixed(a.XYZ[1], 10), fixed(a.XYZ[2], 10))
	}
	if st := res.Structure; st != nil && len(st.Bonds)+len(st.Angles)+len(st.Dihedrals) > 0 {
		fmt.Fprintln(w, "  structure (bonds from covalent radii)")
		for _, b := range st.Bonds {
			fmt.Fprintf(w, "    %-28s %12.6f Å\n", b.Label, b.Angstrom)
		}
		for _, a := range st.Angles {
			fmt.Fprintf(w, "    %-28s %12.4f°\n", a.Label, a.Degrees)
		}
		for _, d := range st.Dihedrals {
			fmt.Fprintf(w, "    %-28s %12.4f°\n", d.Label, d.Degrees)
		}
	}
	if tr := res.Trajectory; len(tr) > 0 {
		last := tr[len(tr)-1]
		kv("optimisation", "%d geometries, last max force %.2e hartree/bohr, energy change over the run %.6f hartree",
			len(tr), last.MaxForce, last.EnergyHartree-tr[0].EnergyHartree)
		writeOptSteps(w, res)
	}
	writeVibrations(w, res.Vibrations)
	for _, n := range res.Notes {
		fmt.Fprintf(w, "  note: %s\n", n)
	}

	c := r.Code
	sec("code")
	rev := c.Revision
	if rev == "" {
		rev = "(no VCS information)"
	}
	if c.Modified {
		rev += "  modified tree"
	}
	kv("program", "%s %s", c.Program, c.Version)
	kv("revision", "%s", rev)
	kv("build", "%s %s/%s", c.GoVersion, c.OS, c.Arch)
	if c.SourceSHA256 != "" {
		kv("source sha256", "%s  (the code identity reuse matches on)", c.SourceSHA256)
	} else {
		kv("source sha256", "(not recorded by this build)")
	}
	kv("executable sha256", "%s", c.ExecutableSHA256)
	kv("job encoding", "%s", c.CanonicalVersion)

	sec("run")
	kv("started UTC", "%s", utc(r.Run.StartUTC))
	kv("ended UTC", "%s", utc(r.Run.EndUTC))
	kv("wall time", "%.3f s on %s, %d threads, peak memory %.1f MiB", r.Run.WallSeconds, r.Run.Host, r.Run.Threads, r.Run.PeakMemoryMB)
	if b := r.Run.Batch; b != nil {
		kv("batch job", "%s", batchJobText(b))
	}
	if len(r.Lineage) > 0 || len(r.Tags) > 0 {
		sec("lineage and tags")
		for _, l := range r.Lineage {
			kv(l.Relation, "%s", l.ID)
		}
		if len(r.Tags) > 0 {
			kv("tags", "%s", strings.Join(r.TagList(), "  "))
		}
	}
	if d := r.Derivation; d != nil {
		sec("derivation: " + d.Recipe)
		for _, f := range d.Formulas {
			kv(f.Quantity, "%s: %s  [%s]", f.Name, f.Expression, f.Source)
		}
		for _, in := range d.Inputs {
			kv(in.Role, "%s  %s/%s", in.ID, in.Method, in.Basis)
		}
		for _, v := range d.Values {
			kv(v.Name, "%s %s", fixed(v.Value, 10), archive.KindUnit[v.Kind])
		}
	}
	if len(notes) > 0 {
		sec("notes")
		for _, n := range notes {
			fmt.Fprintf(w, "  %s  %s\n", utc(n.TimeUTC), n.Text)
		}
	}
}

// batchJobText is a one-line account of a record's batch job.
func batchJobText(b *archive.BatchJob) string {
	s := b.Scheduler + " job " + b.JobID
	if b.ArrayJobID != "" {
		s += " (array " + b.ArrayJobID + ", task " + b.ArrayTaskID + ")"
	}
	if b.Node != "" {
		s += " on node " + b.Node
	}
	return s
}

// frontierLine is HOMO, LUMO and gap in one line ("" without orbitals);
// the gap is also given in eV when the unit is another.
func frontierLine(o *engine.Orbitals, u energyUnit) string {
	if o == nil || len(o.EnergiesAlphaHartree) == 0 {
		return ""
	}
	s := "HOMO " + u.orbital(o.HOMOHartree)
	if o.LUMOHartree != nil {
		s += ", LUMO " + u.orbital(*o.LUMOHartree)
	}
	if o.GapHartree != nil {
		s += ", gap " + u.orbital(*o.GapHartree)
	}
	s += " " + u.name
	if o.GapHartree != nil && u.name != "eV" {
		s += " (gap " + fixed(*o.GapHartree*molecule.HartreeEV, 3) + " eV)"
	}
	return s
}

// s2Text is ⟨S²⟩ beside the value S(S+1) of a pure spin state.
func s2Text(s2 float64, mult int) string {
	sp := float64(mult-1) / 2
	return fmt.Sprintf("%.6f  (a pure state of multiplicity %d has %.4f)", s2, mult, sp*(sp+1))
}

// orbitalsShown is how many occupied and empty orbitals show lists
// around the frontier.
const orbitalsShown = 8

// writeOrbitals prints the frontier orbitals and, per spin, the orbital
// energies nearest to them (occupied | empty).
func writeOrbitals(w io.Writer, o *engine.Orbitals, u energyUnit) {
	line := frontierLine(o, u)
	if line == "" {
		return
	}
	fmt.Fprintf(w, "  %-22s %s\n", "frontier orbitals", line)
	spin := func(name string, e, occ []float64) {
		if len(e) == 0 {
			return
		}
		nocc := 0
		for i := range e {
			if i < len(occ) && occ[i] > 0.5 {
				nocc = i + 1
			}
		}
		lo, hi := max(0, nocc-orbitalsShown), min(len(e), nocc+orbitalsShown)
		var b strings.Builder
		if lo > 0 {
			fmt.Fprintf(&b, "(%d lower) ", lo)
		}
		for i := lo; i < hi; i++ {
			if i == nocc {
				b.WriteString("| ")
			}
			b.WriteString(u.orbital(e[i]) + " ")
		}
		if hi == nocc {
			b.WriteString("| ")
		}
		if hi < len(e) {
			fmt.Fprintf(&b, "(%d higher) ", len(e)-hi)
		}
		b.WriteString(u.name)
		fmt.Fprintf(w, "  %-22s %s\n", name, b.String())
	}
	if len(o.EnergiesBetaHartree) > 0 {
		spin("orbital energies α", o.EnergiesAlphaHartree, o.OccupationsAlpha)
		spin("orbital energies β", o.EnergiesBetaHartree, o.OccupationsBeta)
	} else {
		spin("orbital energies", o.EnergiesAlphaHartree, o.OccupationsAlpha)
	}
	fmt.Fprintf(w, "  %-22s %s\n", "", "occupied | empty; orbital energies are of the SCF (HF or Kohn–Sham) orbitals")
}

// writeCharges prints the Mulliken and Löwdin charges of each density
// that has them (they depend strongly on the basis set).
func writeCharges(w io.Writer, r *archive.Record) {
	for _, p := range []*engine.Properties{r.Results.SCFProperties, r.Results.LevelProperties} {
		if p == nil || (len(p.MullikenCharges) == 0 && len(p.LowdinCharges) == 0) {
			continue
		}
		fmt.Fprintf(w, "  atomic charges (e), %s density; basis-set dependent, not observables\n", p.Density)
		fmt.Fprintf(w, "    %-8s %10s %10s\n", "atom", "Mulliken", "Löwdin")
		for i, a := range r.Input.Molecule.Atoms {
			fmt.Fprintf(w, "    %-8s %10s %10s\n", fmt.Sprintf("%s%d", a.Symbol, i+1), chargeAt(p.MullikenCharges, i), chargeAt(p.LowdinCharges, i))
		}
	}
}

func chargeAt(q []float64, i int) string {
	if i >= len(q) {
		return "—"
	}
	return fixed(q[i], 4)
}
