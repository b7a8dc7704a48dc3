package engine

import (
	"errors"
	"fmt"
	"io"
	"math"
	"runtime"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/basis"
	"moltrail/engine/integral"
	"moltrail/engine/molecule"
	"moltrail/engine/opt"
	"moltrail/engine/props"
	"moltrail/engine/scf"
	"moltrail/engine/symmetry"
	"moltrail/engine/vib"
)

// RunOptions control how (not what) a job is computed; they never change a
// number and are not part of the canonical input.
type RunOptions struct {
	// Threads is the number of goroutines for integral and grid work (0 = all cores).
	Threads int
	// Progress receives human-readable progress lines (nil = silent).
	Progress io.Writer
	// MemoryLimitBytes is the memory the job may use (0 =
	// DefaultMemoryLimitBytes); see memory.go: it never changes a number.
	MemoryLimitBytes int64
}

func (o RunOptions) threads() int {
	if o.Threads > 0 {
		return o.Threads
	}
	return runtime.NumCPU()
}

func (o RunOptions) logf(format string, a ...any) {
	if o.Progress != nil {
		fmt.Fprintf(o.Progress, format, a...)
	}
}

// Run computes a normalised job. A calculation that ran but did not
// converge returns a Result with Status not_converged and a nil error; an
// error means the job could not be computed at all (bad input).
func Run(job *Job, o RunOptions) (*Result, error) {
	if err := job.Validate(); err != nil {
		return nil, err
	}
	mol, err := job.MoleculeOf()
	if err != nil {
		return nil, err
	}
	if err := mol.Check(); err != nil {
		return nil, err
	}
	set, err := job.ResolveBasis()
	if err != nil {
		return nil, err
	}
	if _, err := basis.Build(set, mol, job.Basis.Angular); err != nil {
		return nil, err
	}
	var res *Result
	if job.Task == "optimize" {
		res, err = runOptimize(job, mol, set, o)
	} else {
		res, err = single(job, mol, set, o, true)
		if err == nil {
			finishGeometry(res, mol)
		}
	}
	if err != nil {
		return nil, err
	}
	if job.Task == "frequencies" && res.Status == StatusConverged {
		if err := addVibrations(res, job, mol, set, o); err != nil {
			return nil, err
		}
	}
	if n := mol.CloseContactNote(); n != "" {
		res.Notes = append(res.Notes, n)
	}
	return res, nil
}

// point is the outcome of one calculation at one geometry, with what a
// gradient needs.
type point struct {
	res *Result
	scf *scf.Result
	mb  *basis.Molecular
}

// single computes the job's level at mol's geometry. withProps adds the
// one-electron properties.
func single(job *Job, mol *molecule.Molecule, set *basis.Set, o RunOptions, withProps bool) (*Result, error) {
	p, err := compute(job, mol, set, o, withProps)
	if err != nil {
		return nil, err
	}
	return p.res, nil
}

// scfOptions are the SCF settings of a job on n basis functions.
func scfOptions(job *Job, o RunOptions, n int) scf.Options {
	s := job.SCF
	return scf.Options{
		Reference:         job.Reference,
		EnergyTolHartree:  s.EnergyTolHartree,
		DensityTol:        s.DensityTol,
		GradientTol:       s.GradientTol,
		MaxIter:           s.MaxIter,
		Guess:             s.Guess,
		DIISSize:          s.DIISSize,
		SchwarzThreshold:  s.SchwarzThreshold,
		LevelShiftHartree: s.LevelShiftHartree,
		Threads:           o.threads(),
		MemoryBudgetBytes: o.memory().integrals(n, 0),
	}
}

func compute(job *Job, mol *molecule.Molecule, set *basis.Set, o RunOptions, withProps bool) (*point, error) {
	mb, err := basis.Build(set, mol, job.Basis.Angular)
	if err != nil {
		return nil, err
	}
	info := Methods[job.Method]
	so := scfOptions(job, o, mb.NBasis)
	if info.Family == "dft" {
		xc, err := newXC(job, mol, mb, o)
		if err != nil {
			return nil, err
		}
		so.XC = xc
	}
	var fit *FittingInfo
	if job.Fitting != nil {
		if fit, err = fittedJK(job, mol, mb, &so, o); err != nil {
			return nil, err
		}
	}
	if o.Progress != nil {
		so.Progress = prefixWriter{o.Progress, "  scf "}
	}
	sr, err := scf.Run(mol, mb, so)
	if err != nil {
		return nil, err
	}
	if sr.ERI != nil && fit == nil {
		o.logf("  two-electron integrals: %s\n", integralMode(sr.ERI.Stats()))
	}
	res := &Result{
		Status:                  StatusConverged,
		EnergyHartree:           sr.Energy,
		SCFEnergyHartree:        sr.Energy,
		NuclearRepulsionHartree: sr.NuclearRepulsion,
		OneElectronHartree:      sr.OneElectron,
		TwoElectronHartree:      sr.TwoElectron,
		NBasis:                  mb.NBasis,
		Electrons:               [2]int{sr.NAlpha, sr.NBeta},
		Fitting:                 fit,
	}
	if info.Family == "dft" {
		x := sr.XC
		res.XCHartree = &x
		if c, ok := so.XC.(interface{ IntegratedElectrons() float64 }); ok {
			n := c.IntegratedElectrons()
			res.IntegratedElectrons = &n
		}
	}
	if job.Reference != "rhf" && job.Reference != "rks" {
		s2 := sr.S2
		res.S2 = &s2
	}
	for _, it := range sr.Iterations {
		res.SCFIterations = append(res.SCFIterations, SCFIteration{Iteration: it.Iter, EnergyHartree: it.Energy, DeltaEHartree: it.DeltaE, DensityRMS: it.DensityRMS, OrbitalGradient: it.OrbitalGradient, DIISVectors: it.DIISVectors})
	}
	res.Orbitals = orbitalsOf(sr, job.Reference)
	if sr.DroppedFunctions > 0 {
		res.Notes = append(res.Notes, fmt.Sprintf("%d near-linearly-dependent basis combinations were removed (overlap eigenvalues below %.0e)", sr.DroppedFunctions, scf.LinearDependenceTol))
	}
	if !sr.Converged {
		res.Status = StatusNotConverged
		res.Error = fmt.Sprintf("SCF did not converge in %d iterations (last ΔE %.2e Eh, density RMS change %.2e, orbital gradient %.2e)",
			len(sr.Iterations), lastIt(sr).DeltaE, lastIt(sr).DensityRMS, lastIt(sr).OrbitalGradient)
		return &point{res: res, scf: sr, mb: mb}, nil
	}
	origin := job.OriginBohr(mol)
	res.MultipoleOriginBohr = origin
	if withProps {
		dt := mat.NewSymDense(mb.NBasis, nil)
		dt.AddSym(sr.Da, sr.Db)
		pr, err := oneElectronProperties(mol, mb, sr, dt, origin, job.Origin.Kind)
		if err != nil {
			return nil, err
		}
		switch info.Family {
		case "dft":
			pr.Density = "kohn-sham"
		default:
			pr.Density = "scf"
		}
		res.SCFProperties = pr
		d := pr.DipoleDebye
		res.SCFDipoleDebye = &d
		if info.Family == "hf" || info.Family == "dft" {
			// For an SCF level the SCF density is the level's. A
			// correlated level's moments come only from its own
			// (relaxed) density: without one they are absent, never
			// the SCF moments under the level's name.
			dl, q := pr.DipoleDebye, pr.QuadrupoleBuckingham
			res.DipoleDebye, res.QuadrupoleBuckingham = &dl, &q
		}
	}
	switch info.Family {
	case "mp2":
		if err := correlate(job, mol, mb, sr, res, o, withProps); err != nil {
			return nil, err
		}
	case "cc":
		if err := coupledCluster(job, mol, mb, sr, res, o, withProps); err != nil {
			return nil, err
		}
	}
	return &point{res: res, scf: sr, mb: mb}, nil
}

func lastIt(sr *scf.Result) scf.Iteration {
	if len(sr.Iterations) == 0 {
		return scf.Iteration{}
	}
	return sr.Iterations[len(sr.Iterations)-1]
}

func orbitalsOf(sr *scf.Result, ref string) *Orbitals {
	o := &Orbitals{EnergiesAlphaHartree: sr.Ea, OccupationsAlpha: sr.OccA}
	if ref == "uhf" || ref == "uks" {
		o.EnergiesBetaHartree = sr.Eb
		o.OccupationsBeta = sr.OccB
	}
	homo := math.Inf(-1)
	lumo := math.Inf(1)
	scan := func(e, occ []float64) {
		for i := range e {
			if i < len(occ) && occ[i] > 0.5 {
				homo = math.Max(homo, e[i])
			} else {
				lumo = math.Min(lumo, e[i])
			}
		}
	}
	scan(sr.Ea, sr.OccA)
	if ref == "uhf" || ref == "uks" {
		scan(sr.Eb, sr.OccB)
	}
	o.HOMOHartree = homo
	if !math.IsInf(lumo, 1) {
		l := lumo
		g := lumo - homo
		o.LUMOHartree = &l
		o.GapHartree = &g
	}
	return o
}

// oneElectronProperties computes multipoles about origin and atomic charges of density dt.
func oneElectronProperties(mol *molecule.Molecule, mb *basis.Molecular, sr *scf.Result, dt *mat.SymDense, origin [3]float64, kind string) (*Properties, error) {
	dip, second := integral.Multipole(mb, origin)
	mo, err := props.Multipoles(mol, dip, second, dt, origin)
	if err != nil {
		return nil, err
	}
	p := propertiesFromMoments(mo, kind)
	if sr != nil {
		mull, low, err := props.Charges(mol, mb.FuncAtom, sr.S, dt)
		if err != nil {
			return nil, err
		}
		p.MullikenCharges, p.LowdinCharges = mull, low
	}
	return p, nil
}

func propertiesFromMoments(mo props.Moments, kind string) *Properties {
	p := &Properties{OriginBohr: mo.OriginBohr, OriginKind: kind}
	p.Dipole = MultipoleParts{TotalAU: mo.Dipole.Total[:], NuclearAU: mo.Dipole.Nuclear[:], ElectronicAU: mo.Dipole.Electronic[:]}
	p.Quadrupole = MultipoleParts{TotalAU: mo.Quadrupole.Total[:], NuclearAU: mo.Quadrupole.Nuclear[:], ElectronicAU: mo.Quadrupole.Electronic[:]}
	p.SecondMoment = MultipoleParts{TotalAU: mo.SecondMoment.Total[:], NuclearAU: mo.SecondMoment.Nuclear[:], ElectronicAU: mo.SecondMoment.Electronic[:]}
	p.DipoleDebye = mo.DipoleDebye()
	p.DipoleNormD = mo.DipoleMagnitudeDebye()
	q := mo.QuadrupoleBuckingham()
	p.QuadrupoleBuckingham = Quadrupole{XX: q[0], YY: q[1], ZZ: q[2], XY: q[3], XZ: q[4], YZ: q[5]}
	p.DipoleOriginDependent = mo.DipoleOriginDependent
	p.QuadOriginDependent = mo.QuadrupoleOriginDependent
	return p
}

// finishGeometry stores the geometry (Å) and its structural parameters.
func finishGeometry(res *Result, mol *molecule.Molecule) {
	res.GeometryAngstrom = geomAngstrom(mol)
	st := &Structure{Bonds: []Bond{}, Angles: []Angle{}, Dihedrals: []Dihedral{}}
	for _, b := range mol.Bonds() {
		st.Bonds = append(st.Bonds, Bond{I: b.Atoms[0], J: b.Atoms[1], Label: b.Label, Angstrom: b.Value})
	}
	for _, a := range mol.Angles() {
		st.Angles = append(st.Angles, Angle{I: a.Atoms[0], J: a.Atoms[1], K: a.Atoms[2], Label: a.Label, Degrees: a.Value})
	}
	for _, d := range mol.Dihedrals() {
		st.Dihedrals = append(st.Dihedrals, Dihedral{I: d.Atoms[0], J: d.Atoms[1], K: d.Atoms[2], L: d.Atoms[3], Label: d.Label, Degrees: d.Value})
	}
	res.Structure = st
}

func geomAngstrom(mol *molecule.Molecule) []GeomAtom {
	var g []GeomAtom
	for _, a := range mol.Atoms {
		g = append(g, GeomAtom{Symbol: a.Symbol, XYZ: [3]float64{a.PosBohr[0] * molecule.BohrAngstrom, a.PosBohr[1] * molecule.BohrAngstrom, a.PosBohr[2] * molecule.BohrAngstrom}})
	}
	return g
}

// runOptimize minimises the energy of the job's level, then computes the
// properties at the final geometry.
func runOptimize(job *Job, mol *molecule.Molecule, set *basis.Set, o RunOptions) (*Result, error) {
	os := *job.Opt
	var eg opt.EnergyGradient
	switch os.GradientMethod {
	case "finite-difference":
		eg = opt.InternalFiniteDifferenceGradient(energyAt(job, mol, set, o), os.FiniteDiffStepAU, o.threads(), o.Progress)
	default:
		eg = func(x []float64) (float64, []float64, error) {
			m := opt.WithCoordinates(mol, x)
			return gradient(job, m, set, o)
		}
	}
	settings := opt.Settings{MaxForce: os.MaxForce, RMSForce: os.RMSForce, MaxStep: os.MaxStep, EnergyChange: os.EnergyChange, MaxSteps: os.MaxSteps, TrustRadius: os.TrustRadiusBohr}
	if o.Progress != nil {
		settings.Progress = o.Progress
	}
	start, pg := mol, (*symmetry.Group)(nil)
	if tol := os.SymmetryTolAngstrom; tol > 0 {
		pg = symmetry.Detect(mol, tol)
		if pg.Order() > 1 {
			start = opt.WithCoordinates(mol, pg.Symmetrize(opt.Coordinates(mol)))
			settings.Symmetrize = pg.Vector
			o.logf("  symmetry: point group %s within %g Å; the start geometry moved by at most %.1e Å onto it; every gradient and step keeps it\n", pg.Name, tol, pg.MaxShiftBohr*molecule.BohrAngstrom)
		}
	}
	or, err := opt.Minimize(start, eg, settings)
	var nc errNotConverged
	if errors.As(err, &nc) {
		return &Result{Status: StatusNotConverged, Error: "an SCF along the optimisation did not converge: " + nc.msg, GeometryAngstrom: geomAngstrom(mol)}, nil
	}
	if err != nil {
		return nil, err
	}
	final := opt.WithCoordinates(mol, or.Final)
	res, err := single(job, final, set, o, true)
	if err != nil {
		return nil, err
	}
	for i, st := range or.Steps {
		res.Trajectory = append(res.Trajectory, OptStep{Step: i, EnergyHartree: st.Energy, MaxForce: st.MaxForce, RMSForce: st.RMSForce, MaxStepBohr: st.MaxStep, GeometryAngstrom: geomAngstrom(opt.WithCoordinates(mol, st.X)), Rejected: st.Rejected})
	}
	if pg != nil {
		res.PointGroup = pg.Name
		if d := pg.MaxShiftBohr * molecule.BohrAngstrom; d > 1e-6 {
			res.Notes = append(res.Notes, fmt.Sprintf("the start geometry was symmetrised to point group %s (atoms moved by up to %.1e Å) and the optimisation kept that symmetry", pg.Name, d))
		}
	}
	finishGeometry(res, final)
	if !or.Converged && res.Status == StatusConverged {
		res.Status = StatusNotConverged
		res.Error = "geometry optimisation " + or.Reason
	}
	if job.Freq != nil && res.Status == StatusConverged {
		if err := addVibrations(res, job, final, set, o); err != nil {
			return nil, err
		}
	}
	return res, nil
}

// energyAt returns the energy of the job's level at coordinates x (bohr)
// of mol's atoms, with the options of a displaced calculation, no properties.
func energyAt(job *Job, mol *molecule.Molecule, set *basis.Set, o RunOptions) func(x []float64) (float64, error) {
	return func(x []float64) (float64, error) {
		r, err := single(job, opt.WithCoordinates(mol, x), set, o.displaced(), false)
		if err != nil {
			return 0, err
		}
		if r.Status != StatusConverged {
			return 0, errNotConverged{r.Error}
		}
		return r.EnergyHartree, nil
	}
}

// addVibrations computes the harmonic analysis at mol's geometry and adds
// it to res, with a note when the geometry is not a minimum. A displaced
// calculation that does not converge makes res not converged.
func addVibrations(res *Result, job *Job, mol *molecule.Molecule, set *basis.Set, o RunOptions) error {
	f := job.Freq
	x := opt.Coordinates(mol)
	vo := vib.Options{StepBohr: f.StepBohr, Workers: o.threads(), Progress: o.Progress}
	var H *vib.Hessian
	var err error
	var how string
	switch f.Derivatives {
	case "energy-differences":
		how = fmt.Sprintf("second differences of energies, step %g bohr along the internal directions", f.StepBohr)
		o.logf("  frequencies: Hessian from energies (%d internal directions)\n", len(opt.InternalDirections(x)))
		H, err = vib.FromEnergies(x, energyAt(job, mol, set, o), vo)
	default:
		how = fmt.Sprintf("central differences of analytic gradients, step %g bohr along the internal directions", f.StepBohr)
		o.logf("  frequencies: Hessian from gradients (%d internal directions)\n", len(opt.InternalDirections(x)))
		H, err = vib.FromGradients(x, func(y []float64) (float64, []float64, error) {
			return gradient(job, opt.WithCoordinates(mol, y), set, o.displaced())
		}, vo)
	}
	var nc errNotConverged
	if errors.As(err, &nc) {
		res.Status = StatusNotConverged
		res.Error = "an SCF of the frequency calculation's displaced geometries did not converge: " + nc.msg
		return nil
	}
	if err != nil {
		return err
	}
	a, err := vib.Analyse(mol, H.H, H.Gradient)
	if err != nil {
		return err
	}
	v := &Vibrations{Method: how, StepBohr: f.StepBohr, Calculations: H.Calculations,
		WavenumbersPerCm: a.WavenumbersPerCm, ReducedMassesDalton: a.ReducedMassesDalton, NormalModes: a.Modes,
		ImaginaryModes: a.Imaginary, SmallImaginaryModes: a.SmallImaginary, ZeroPointHartree: a.ZeroPointHartree,
		MaxForce: a.MaxForce, StationaryPoint: a.Character, Linear: a.Linear}
	n, _ := H.H.Dims()
	for i := 0; i < n; i++ {
		for j := 0; j <= i; j++ {
			v.HessianLower = append(v.HessianLower, H.H.At(i, j))
		}
	}
	res.Vibrations = v
	switch a.Character {
	case vib.SaddlePoint:
		res.Notes = append(res.Notes, fmt.Sprintf("the structure is not a minimum: %d imaginary mode(s), the largest %.1fi cm⁻¹; a minimum lies along that mode", a.Imaginary, -a.WavenumbersPerCm[0]))
	case vib.NotStationary:
		res.Notes = append(res.Notes, fmt.Sprintf("the geometry is not a stationary point (largest force %.1e hartree/bohr, above %.1e): harmonic frequencies here describe no minimum; optimise first", a.MaxForce, vib.StationaryMaxForce))
	}
	if a.SmallImaginary > 0 {
		res.Notes = append(res.Notes, fmt.Sprintf("%d small imaginary wavenumber(s) (below %.0f cm⁻¹ in magnitude) are taken as numerical noise of the finite differences", a.SmallImaginary, vib.ImaginaryToleranceCm))
	}
	return nil
}

// displaced are the options of one of the o.threads() displaced
// calculations that run at once: one thread and its share of the memory.
func (o RunOptions) displaced() RunOptions {
	return RunOptions{Threads: 1, MemoryLimitBytes: o.memory().limit / int64(o.threads())}
}

type errNotConverged struct{ msg string }

func (e errNotConverged) Error() string { return e.msg }

// prefixWriter prefixes each write (one progress line) with a label.
type prefixWriter struct {
	w      io.Writer
	prefix string
}

func (p prefixWriter) Write(b []byte) (int, error) {
	if _, err := io.WriteString(p.w, p.prefix); err != nil {
		return 0, err
	}
	return p.w.Write(b)
}
