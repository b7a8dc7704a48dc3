package main

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"maps"
	"math"
	"strings"

	"moltrail/archive"
	"moltrail/engine"
	"moltrail/engine/basis"
	"moltrail/engine/dft"
	"moltrail/engine/molecule"
)

func init() {
	register(Command{Name: "run", Summary: "run one calculation and store it (or return the stored one)", Run: cmdRun})
}

// engineCompute is the archive's Computer backed by the engine, with the
// engine's default memory limit.
var engineCompute = engineComputer(0)

// engineComputer is the archive's Computer backed by the engine, each
// calculation limited to memoryBytes (0 = the engine's default).
func engineComputer(memoryBytes int64) archive.Computer {
	return func(job *engine.Job, threads int, progress io.Writer) (*engine.Result, error) {
		return engine.Run(job, engine.RunOptions{Threads: threads, Progress: progress, MemoryLimitBytes: memoryBytes})
	}
}

// addMemoryFlag adds --memory-limit to a command that computes.
func addMemoryFlag(fs *flag.FlagSet) *string {
	return fs.String("memory-limit", "", "memory `SIZE` each calculation may use, e.g. 6GiB or 800MB (default: half the memory the system reports available, shared among calculations run at once); never changes a number")
}

// memoryLimit reads the --memory-limit value (0 when not given).
func memoryLimit(s string) (int64, error) {
	if s == "" {
		return 0, nil
	}
	b, err := engine.ParseMemorySize(s)
	if err != nil {
		return 0, fmt.Errorf("--memory-limit: %v", err)
	}
	return b, nil
}

func cmdRun(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("run", stderr, "[flags] FILE  |  [flags] --geometry-from ID")
	af := addArchiveFlags(fs)
	method := fs.String("method", "hf", "the `METHOD`: "+joinNames(engine.MethodNames())+" (ccsd and ccsd(t) need a closed-shell RHF reference: open shells are refused)")
	basisName := fs.String("basis", "cc-pvdz", "basis set `NAME` or alias (moltrail basis lists them), or a basis JSON file")
	charge := fs.Int("charge", 0, "total charge")
	mult := fs.Int("multiplicity", 0, "spin multiplicity (default: the lowest the electron count allows)")
	task := fs.String("task", "energy", "the `TASK`: energy, optimize or frequencies (harmonic, at the input geometry)")
	freqs := fs.Bool("frequencies", false, "with --task optimize: harmonic frequencies at the optimised geometry (is it a minimum?)")
	frozen := fs.Bool("frozen-core", false, "correlated methods: freeze the chemical core")
	var tags multiFlag
	fs.Var(&tags, "tag", "a tag `KEY=VALUE` stored with the record (repeatable)")
	force := fs.Bool("force", false, "compute again even if the archive holds this input at this code version")
	asJSON := fs.Bool("json", false, "print the stored record as JSON")
	unitName := addEnergyUnitFlag(fs)
	name := fs.String("name", "", "molecule `NAME` (default: the XYZ comment line)")
	cart := fs.Bool("cartesian", false, "Cartesian d, f, … functions")
	sph := fs.Bool("spherical", false, "spherical-harmonic d, f, … functions")
	threads := fs.Int("threads", 0, "worker threads (0 = all cores); never changes a number")
	memFlag := addMemoryFlag(fs)
	eTol := fs.Float64("energy-tol", engine.DefaultSCF.EnergyTolHartree, "SCF: converged when |ΔE| < this (hartree) …")
	dTol := fs.Float64("density-tol", engine.DefaultSCF.DensityTol, "SCF: … and RMS density change < this …")
	gTol := fs.Float64("gradient-tol", engine.DefaultSCF.GradientTol, "SCF: … and max |FDS−SDF| < this")
	maxIter := fs.Int("max-iter", engine.DefaultSCF.MaxIter, "SCF: iteration limit")
	guess := fs.String("guess", engine.DefaultSCF.Guess, "SCF start `GUESS`: sad or core")
	diis := fs.Int("diis", engine.DefaultSCF.DIISSize, "SCF: DIIS subspace size (0 = off)")
	schwarz := fs.Float64("schwarz", engine.DefaultSCF.SchwarzThreshold, "skip ERI shell quartets with Schwarz bound below this")
	shift := fs.Float64("level-shift", engine.DefaultSCF.LevelShiftHartree, "SCF: virtual-orbital level shift (hartree)")
	grid := fs.String("grid", "", "DFT grid `LEVEL`: "+joinNames(dft.LevelNames())+" (default: "+dft.DefaultLevel+")")
	origin := fs.String("origin", "centre-of-mass", "multipole `ORIGIN`: "+engine.OriginForms)
	closeOK := fs.Bool("force-close-atoms", false, fmt.Sprintf("compute even when atoms are closer than %.1f × the sum of their covalent radii (at least %.1f Å)", molecule.CloseFraction, molecule.CloseFloorAngstrom))
	geomFrom := fs.String("geometry-from", "", "start from the final geometry of the archived record `ID` (unique prefix) instead of an XYZ file; recorded in the lineage")
	maxForce := fs.Float64("max-force", engine.DefaultOpt.MaxForce, "optimisation: largest force limit (hartree/bohr); with the RMS force, step and energy-change limits")
	maxSteps := fs.Int("max-steps", engine.DefaultOpt.MaxSteps, "optimisation: step limit")
	relaxed := fs.String("relaxed-properties", "", "correlated methods: the level's dipole `ROUTE`: z-vector (MP2 family, its default), finite-field, or none (coupled cluster's default: the SCF dipole)")
	fieldStep := fs.Float64("field-step", engine.DefaultFieldStepAU, "coupled cluster, finite-field route: field strength h (atomic units)")
	fieldFormula := fs.String("field-formula", engine.DefaultFieldFormula, "coupled cluster, finite-field route: `FORMULA` two-point (E(±h)) or four-point (E(±h), E(±2h))")
	ccETol := fs.Float64("cc-energy-tol", engine.DefaultCC.EnergyTolHartree, "coupled cluster: converged when |ΔE| < this (hartree) …")
	ccATol := fs.Float64("cc-amplitude-tol", engine.DefaultCC.AmplitudeTol, "coupled cluster: … and the RMS amplitude change < this")
	ccMaxIter := fs.Int("cc-max-iter", engine.DefaultCC.MaxIter, "coupled cluster: iteration limit")
	symTol := fs.Float64("symmetry-tol", engine.DefaultOpt.SymmetryTolAngstrom, "optimisation: keep the start geometry's point group found within this tolerance (Å; 0 = do not)")
	gradMethod := fs.String("gradient", "", "optimisation gradient `KIND`: analytic or finite-difference (default: analytic for HF and DFT, finite-difference for the MP2 family)")
	fit := fs.Bool("fit", false, "density-fitted Coulomb and exchange for the SCF/DFT, with the library's fitting set for the basis (cc-pVXZ-JKFIT, aug-cc-pVXZ-JKFIT, def2-universal-JKFIT for def2 and Pople sets)")
	fitSet := fs.String("fit-set", "", "density fitting with this auxiliary `SET` (a JKFIT set of the library or a basis JSON file); implies --fit")
	fitCut := fs.Float64("fit-metric-cutoff", engine.DefaultFitMetricCutoff, "density fitting: relative eigenvalue cut-off of the metric inversion")
	fitSchwarz := fs.Float64("fit-schwarz", engine.DefaultFitSchwarzThreshold, "density fitting: skip three-centre blocks with Schwarz bound below this")
	pos, code, ok := parseFlags(fs, args)
	if !ok {
		return code
	}
	if *geomFrom == "" && len(pos) != 1 {
		fmt.Fprintln(stderr, "moltrail run: give exactly one molecule file (XYZ, extended XYZ, MDL molfile or SDF), or --geometry-from ID")
		return exitUsage
	}
	if *geomFrom != "" && len(pos) != 0 {
		fmt.Fprintln(stderr, "moltrail run: give either a molecule file or --geometry-from ID, not both")
		return exitUsage
	}
	if *cart && *sph {
		fmt.Fprintln(stderr, "moltrail run: --cartesian and --spherical exclude each other")
		return exitUsage
	}
	tagMap, err := parseTags(tags)
	if err != nil {
		return fail(stderr, exitUsage, "run", err)
	}
	unit, err := parseEnergyUnit(*unitName)
	if err != nil {
		return fail(stderr, exitUsage, "run", err)
	}
	if *threads < 0 {
		return fail(stderr, exitUsage, "run", fmt.Errorf("--threads %d: give 0 (all cores) or more", *threads))
	}
	memBytes, err := memoryLimit(*memFlag)
	if err != nil {
		return fail(stderr, exitUsage, "run", err)
	}
	set := map[string]bool{}
	fs.Visit(func(f *flag.Flag) { set[f.Name] = true })
	var m *molecule.Molecule
	var lineage []archive.Link
	source := ""
	fileCharge, fileMult := false, false
	if *geomFrom != "" {
		var id string
		m, id, code, err = geometryFromRecord(af, *geomFrom, stderr)
		if err != nil {
			return fail(stderr, code, "run", err)
		}
		lineage = []archive.Link{{Relation: archive.GeometryFrom, ID: id}}
		source = "geometry of record " + id[:12]
	} else {
		in, err := molecule.ReadFile(pos[0])
		if err != nil {
			return fail(stderr, exitUsage, "run", err)
		}
		for _, n := range in.Notes {
			fmt.Fprintf(stderr, "moltrail run: %s: %s\n", pos[0], n)
		}
		m, source = in.Mol, pos[0]
		fileCharge, fileMult = in.ChargeGiven, in.MultiplicityGiven
	}
	if *name != "" {
		m.Name = *name
	}
	if (*geomFrom == "" && !fileCharge) || set["charge"] {
		m.Charge = *charge
	}
	if (*geomFrom == "" && !fileMult) || set["multiplicity"] {
		m.Multiplicity = *mult
	}
	orig, err := engine.ParseOrigin(*origin)
	if err != nil {
		return fail(stderr, exitUsage, "run", fmt.Errorf("--origin: %v", err))
	}
	scf := engine.DefaultSCF
	scf.EnergyTolHartree, scf.DensityTol, scf.GradientTol = *eTol, *dTol, *gTol
	scf.MaxIter, scf.Guess, scf.DIISSize, scf.SchwarzThreshold, scf.LevelShiftHartree = *maxIter, *guess, *diis, *schwarz, *shift
	req := engine.Request{Molecule: m, Method: *method, Basis: *basisName, Task: *task, FrozenCore: *frozen,
		SCF: &scf, Grid: *grid, Origin: orig, RelaxedProps: *relaxed, AllowCloseAtoms: *closeOK, Frequencies: *freqs}
	if set["field-step"] || set["field-formula"] {
		req.FieldStepAU, req.FieldFormula = *fieldStep, *fieldFormula
	}
	if set["cc-energy-tol"] || set["cc-amplitude-tol"] || set["cc-max-iter"] {
		c := engine.DefaultCC
		c.EnergyTolHartree, c.AmplitudeTol, c.MaxIter = *ccETol, *ccATol, *ccMaxIter
		req.CC = &c
	}
	if set["max-force"] || set["max-steps"] || set["gradient"] || set["symmetry-tol"] {
		o := engine.DefaultOpt
		o.MaxForce, o.MaxSteps, o.SymmetryTolAngstrom = *maxForce, *maxSteps, *symTol
		o.RMSForce = math.Min(o.RMSForce, *maxForce)
		if *gradMethod != "" {
			o.GradientMethod = *gradMethod
		} else if info, ok := engine.Methods[strings.ToLower(*method)]; ok && info.Correlated() {
			o.GradientMethod = "finite-difference"
		}
		if o.GradientMethod == "finite-difference" {
			o.FiniteDiffStepAU = 1e-3
		}
		req.Opt = &o
	}
	if *fit || *fitSet != "" || set["fit-metric-cutoff"] || set["fit-schwarz"] {
		if !*fit && *fitSet == "" {
			return fail(stderr, exitUsage, "run", fmt.Errorf("--fit-metric-cutoff and --fit-schwarz apply to density-fitted runs: add --fit or --fit-set"))
		}
		req.Fitting = &engine.FittingRequest{SCFSet: *fitSet, MetricCutoff: *fitCut, SchwarzThreshold: *fitSchwarz}
	}
	if *cart {
		req.Angular = basis.Cartesian
	}
	if *sph {
		req.Angular = basis.Spherical
	}
	job, err := engine.NewJob(req)
	if errors.Is(err, engine.ErrCloseAtoms) {
		err = fmt.Errorf("%v (--force-close-atoms computes anyway)", err)
	}
	if err != nil {
		return fail(stderr, exitUsage, "run", fmt.Errorf("%s: %v", source, err))
	}
	out, err := archive.RunAndStore(af.path(), archive.RunRequest{Job: job, Tags: tagMap, Force: *force, Lineage: lineage,
		Threads: *threads, Wait: af.waitOrNone(), Log: stderr}, engineComputer(memBytes))
	if err != nil {
		return fail(stderr, archiveErrCode(err), "run", err)
	}
	rec := out.Record
	switch {
	case out.Cached:
		fmt.Fprintf(stderr, "moltrail run: reused, nothing was computed: %s (computed %s; --force computes again)\n", out.Reason, utc(rec.Run.StartUTC))
		if len(tagMap) > 0 && !maps.Equal(tagMap, rec.Tags) {
			fmt.Fprintln(stderr, "moltrail run: the stored record keeps its own tags; the --tag values given now were not applied (use --force, or `moltrail note`)")
		}
	case out.Recomputed != nil:
		fmt.Fprintf(stderr, "moltrail run: computed again because of --force, although %s\n", out.Reason)
		fmt.Fprintf(stderr, "moltrail run: stored record %s, a recomputation of %s\n", rec.ID[:12], out.Recomputed.ID[:12])
	default:
		fmt.Fprintf(stderr, "moltrail run: computed, because %s\n", out.Reason)
		fmt.Fprintf(stderr, "moltrail run: stored record %s in %s\n", rec.ID[:12], af.path())
	}
	if *asJSON {
		b, err := rec.Encode()
		if err != nil {
			return fail(stderr, exitFailed, "run", err)
		}
		fmt.Fprintf(stdout, "%s\n", b)
	} else {
		writeRunSummary(stdout, rec, sourceLookup(af, rec), unit)
	}
	if q := rec.Input.Molecule.Charge; q != 0 && rec.Results.DipoleDebye != nil {
		fmt.Fprintf(stderr, "moltrail run: warning: the molecule has charge %s, so its dipole depends on the origin (here %s); compare dipoles of ions only about the same origin\n", signed(q), rec.Input.OriginLabel())
	}
	if rec.Status != engine.StatusConverged {
		msg := rec.Results.Error
		if msg == "" {
			msg = "the SCF did not reach its convergence criteria"
		}
		fmt.Fprintf(stderr, "moltrail run: %s (status %s)\n", msg, rec.Status)
		return exitFailed
	}
	return exitOK
}

func joinNames(n []string) string {
	s := ""
	for i, x := range n {
		if i > 0 {
			s += ", "
		}
		s += x
	}
	return s
}

// geometryFromRecord reads the final geometry of an archived record as a
// molecule (name, charge and multiplicity from the record's input).
func geometryFromRecord(af *archiveFlags, prefix string, stderr io.Writer) (*molecule.Molecule, string, int, error) {
	st, code, err := af.open(true, stderr)
	if err != nil {
		return nil, "", code, err
	}
	defer st.Close()
	id, err := st.Resolve(prefix)
	if err != nil {
		return nil, "", exitUsage, fmt.Errorf("--geometry-from: %v", err)
	}
	rec, _, err := st.Get(id)
	if err != nil {
		return nil, "", exitUsage, fmt.Errorf("--geometry-from %s: %v", prefix, err)
	}
	if rec.Status != engine.StatusConverged {
		return nil, "", exitUsage, fmt.Errorf("--geometry-from %s: record %s has status %s, so its geometry is not a final one", prefix, id[:12], rec.Status)
	}
	if len(rec.Results.GeometryAngstrom) == 0 {
		return nil, "", exitUsage, fmt.Errorf("--geometry-from %s: record %s holds no geometry", prefix, id[:12])
	}
	m := &molecule.Molecule{Name: rec.Input.Molecule.Name, Charge: rec.Input.Molecule.Charge, Multiplicity: rec.Input.Molecule.Multiplicity}
	for i, g := range rec.Results.GeometryAngstrom {
		a, err := molecule.NewAtom(g.Symbol, g.XYZ[0]*molecule.AngstromBohr, g.XYZ[1]*molecule.AngstromBohr, g.XYZ[2]*molecule.AngstromBohr)
		if err != nil {
			return nil, "", exitUsage, fmt.Errorf("--geometry-from %s: atom %d: %v", prefix, i+1, err)
		}
		m.Atoms = append(m.Atoms, a)
	}
	return m, id, exitOK, nil
}

// sourceLookup holds the records a record's geometry-from links lead to,
// read from the archive, so that its level label can name the level of a
// borrowed geometry (nil when the record has no such link or the archive
// cannot be read: the label then names the source record instead).
func sourceLookup(af *archiveFlags, rec *archive.Record) archive.Lookup {
	if k := archive.GeometryOf(rec, nil).Kind; k == archive.GeometryOptimised || k == archive.GeometryInput {
		return nil
	}
	st, _, err := af.open(true, io.Discard)
	if err != nil {
		return nil
	}
	defer st.Close()
	var chain []*archive.Record
	look := st.Lookup()
	archive.GeometryOf(rec, func(id string) *archive.Record {
		r := look(id)
		if r != nil {
			chain = append(chain, r)
		}
		return r
	})
	return archive.LookupIn(chain)
}
