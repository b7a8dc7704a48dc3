package engine

import (
	"errors"
	"fmt"
	"math"
	"strings"
	"sync"
	"unicode/utf8"

	"moltrail/engine/basis"
	"moltrail/engine/molecule"
)

// Limits on a job, checked before anything is computed (by NewJob for run
// and study, and by CheckComputable for records arriving by import).
const (
	// MaxNameBytes bounds the molecule's and the basis set's names, which
	// the archive keeps in index keys.
	MaxNameBytes = 1024
	// MinCharge is the most negative total charge accepted.
	MinCharge = -10
	// MaxBasisFunctions bounds the number of basis functions: the SCF
	// keeps several N×N matrices and MP2 N³-sized intermediates, so a
	// larger basis would exhaust the memory of a workstation.
	MaxBasisFunctions = 3000
)

// checkText refuses a name that the archive could not store as given.
func checkName(field, s string) error {
	switch {
	case !utf8.ValidString(s):
		return fmt.Errorf("%s is not valid UTF-8 text", field)
	case strings.ContainsRune(s, 0):
		return fmt.Errorf("%s contains a NUL character", field)
	case len(s) > MaxNameBytes:
		return fmt.Errorf("%s is %d bytes long; at most %d bytes are allowed", field, len(s), MaxNameBytes)
	}
	return nil
}

// finite reports whether x is a finite number.
func finite(x float64) bool { return !math.IsNaN(x) && !math.IsInf(x, 0) }

// checkLimits checks the numeric settings and names of a normalised job:
// every tolerance, limit and step a finite positive number in its range,
// the charge within [MinCharge, nuclear charge − 1].
func (j *Job) checkLimits(m *molecule.Molecule) error {
	if err := checkName("molecule.name", j.Molecule.Name); err != nil {
		return err
	}
	if err := checkName("basis.name", j.Basis.Name); err != nil {
		return err
	}
	if j.Molecule.Charge < MinCharge {
		return fmt.Errorf("molecule.charge %d is below the lowest charge accepted, %d", j.Molecule.Charge, MinCharge)
	}
	s := j.SCF
	for _, c := range []struct {
		name string
		v    float64
		max  float64
	}{
		{"scf.energy_tol_hartree", s.EnergyTolHartree, 1e-2},
		{"scf.density_rms_tol", s.DensityTol, 1e-1},
		{"scf.orbital_gradient_tol", s.GradientTol, 1e-1},
	} {
		if !(c.v > 0) || !finite(c.v) || c.v > c.max {
			return fmt.Errorf("%s %g must be a positive number no larger than %g", c.name, c.v, c.max)
		}
	}
	if s.MaxIter > 100000 {
		return fmt.Errorf("scf.max_iterations %d is above the limit of 100000", s.MaxIter)
	}
	if s.DIISSize > 100 {
		return fmt.Errorf("scf.diis_size %d is above the limit of 100", s.DIISSize)
	}
	if !finite(s.SchwarzThreshold) || !finite(s.LevelShiftHartree) {
		return fmt.Errorf("scf settings must be finite numbers")
	}
	for k, x := range j.Origin.Point {
		if !finite(x) {
			return fmt.Errorf("multipole_origin.point_bohr[%d] is not a finite number", k)
		}
	}
	if o := j.Opt; o != nil {
		for _, c := range []struct {
			name string
			v    float64
		}{
			{"optimization.max_force_hartree_per_bohr", o.MaxForce},
			{"optimization.rms_force_hartree_per_bohr", o.RMSForce},
			{"optimization.max_step_bohr", o.MaxStep},
			{"optimization.energy_change_hartree", o.EnergyChange},
			{"optimization.trust_radius_bohr", o.TrustRadiusBohr},
		} {
			if !(c.v > 0) || !finite(c.v) || c.v > 10 {
				return fmt.Errorf("%s %g must be a positive number no larger than 10", c.name, c.v)
			}
		}
		if o.MaxSteps < 1 || o.MaxSteps > 10000 {
			return fmt.Errorf("optimization.max_steps %d must lie between 1 and 10000", o.MaxSteps)
		}
		if !finite(o.FiniteDiffStepAU) || o.FiniteDiffStepAU < 0 || o.FiniteDiffStepAU >= 0.1 {
			return fmt.Errorf("optimization.finite_difference_step_bohr %g must lie between 0 and 0.1", o.FiniteDiffStepAU)
		}
	}
	if c := j.Correlation; c != nil && (!finite(c.FieldStepAU) || c.FieldStepAU < 0 || c.FieldStepAU > 0.1) {
		return fmt.Errorf("correlation.field_step_au %g must lie between 0 and 0.1", c.FieldStepAU)
	}
	if g := j.Grid; g != nil {
		if err := g.DFTGrid().Check(); err != nil {
			return err
		}
	}
	return nil
}

// checkBasis checks the basis set against the molecule before anything is
// computed: functions for every element, no shell beyond the engine's
// angular-momentum limit on the molecule's atoms, at most
// MaxBasisFunctions functions, and room for every occupied orbital.
func (j *Job) checkBasis(set *basis.Set, m *molecule.Molecule) error {
	if set.Role != "" && set.Role != "orbital" {
		return fmt.Errorf("basis %q is a %s fitting set, not an orbital basis", set.Name, set.Role)
	}
	if el := set.Covers(m); el != "" {
		return fmt.Errorf("basis %q has no functions for element %s", set.Name, el)
	}
	n := 0
	for _, a := range m.Atoms {
		for _, sh := range set.Elements[a.Symbol] {
			if sh.L > basis.MaxL {
				return fmt.Errorf("basis %q: element %s has l=%d functions, beyond the engine's limit of g (l=%d)", set.Name, a.Symbol, sh.L, basis.MaxL)
			}
			if j.Basis.Angular == basis.Spherical && sh.L >= 2 {
				n += 2*sh.L + 1
			} else {
				n += basis.NCart(sh.L)
			}
		}
		if n > MaxBasisFunctions {
			return fmt.Errorf("basis %q gives %s more than %d basis functions, the limit of this build", set.Name, m.Formula(), MaxBasisFunctions)
		}
	}
	if na, _ := m.AlphaBeta(); na > n {
		return fmt.Errorf("basis %q gives %s %d basis functions, too few for its %d occupied α orbitals", set.Name, m.Formula(), n, na)
	}
	return nil
}

var (
	basisMu    sync.Mutex
	basisCache = map[string]*basis.Set{}
)

// resolveBasisCached is ResolveBasis with built-in sets kept once read
// (checking many imported records would otherwise parse the same set
// again for each).
func (j *Job) resolveBasisCached() (*basis.Set, error) {
	if len(j.Basis.Inline) > 0 {
		return j.ResolveBasis()
	}
	k := j.Basis.Name + "\x00" + j.Basis.SHA256
	basisMu.Lock()
	set, ok := basisCache[k]
	basisMu.Unlock()
	if ok {
		return set, nil
	}
	set, err := j.ResolveBasis()
	if err != nil {
		return nil, err
	}
	basisMu.Lock()
	basisCache[k] = set
	basisMu.Unlock()
	return set, nil
}

// CheckComputable checks a normalised job as run checks it before
// computing: Validate, the numeric limits, and the basis set (built-in, or
// carried inline) against the molecule. It is how records arriving from
// outside the archive (import, merge) are checked. A built-in set whose
// data changed since the job pinned it is checked in its present form
// (the record stays history; reproduce reports the change).
func (j *Job) CheckComputable() error {
	if err := j.Validate(); err != nil {
		return err
	}
	set, err := j.resolveBasisCached()
	var changed *BasisChangedError
	if errors.As(err, &changed) {
		set, err = basis.Builtin(j.Basis.Name)
	}
	if err != nil {
		return err
	}
	m, err := j.MoleculeOf()
	if err != nil {
		return err
	}
	if err := m.Check(); err != nil {
		return err
	}
	return j.checkBasis(set, m)
}

// checkConsistent checks that the sections of a job agree with its method
// and task the way NewJob makes them: the reference for the spin state,
// the functional and grid of DFT methods, the correlation settings of the
// MP2 family, the optimisation settings of an optimisation.
func (j *Job) checkConsistent(m *molecule.Molecule) error {
	info := Methods[j.Method]
	if j.Molecule.Multiplicity < 1 {
		return fmt.Errorf("molecule.multiplicity %d is not a multiplicity", j.Molecule.Multiplicity)
	}
	open := m.Multiplicity != 1
	pick := func(closed, opened string) string {
		if open {
			return opened
		}
		return closed
	}
	want := ""
	switch info.Family {
	case "hf":
		want = j.Method
		if j.Method == "hf" {
			want = pick("rhf", "uhf")
		}
		if want == "rhf" && open {
			return fmt.Errorf("method rhf needs a closed shell, but multiplicity is %d", m.Multiplicity)
		}
	case "mp2":
		want = pick("rhf", "uhf")
	case "dft":
		want = pick("rks", "uks")
	case "cc":
		want = "rhf"
	default:
		return nil
	}
	if j.Reference != want {
		return fmt.Errorf("reference %q does not fit method %s at multiplicity %d (expected %q)", j.Reference, j.Method, m.Multiplicity, want)
	}
	if j.Functional != info.Functional {
		return fmt.Errorf("functional %q is not the definition of %s (%q)", j.Functional, j.Method, info.Functional)
	}
	if (j.Grid != nil) != (info.Family == "dft") {
		return fmt.Errorf("a grid belongs to DFT methods only; method %s %s one", j.Method, map[bool]string{true: "has", false: "lacks"}[j.Grid != nil])
	}
	if c := j.Correlation; (c != nil) != info.Correlated() {
		return fmt.Errorf("correlation settings belong to correlated methods only; method %s %s them", j.Method, map[bool]string{true: "has", false: "lacks"}[c != nil])
	}
	switch j.Task {
	case "energy", "frequencies":
		if j.Opt != nil {
			return fmt.Errorf("optimization settings belong to the optimize task, not to %s", j.Task)
		}
	case "optimize":
		o := j.Opt
		if o == nil {
			return fmt.Errorf("the optimize task needs its optimization settings")
		}
		switch o.GradientMethod {
		case "analytic":
			if info.Correlated() {
				return fmt.Errorf("analytic gradients are not available for %s; use the finite-difference gradient method", j.Method)
			}
		case "finite-difference":
			if !(o.FiniteDiffStepAU > 0) {
				return fmt.Errorf("optimization.finite_difference_step_bohr must be positive for finite-difference gradients")
			}
		default:
			return fmt.Errorf("optimization.gradient_method %q is not known (analytic or finite-difference)", o.GradientMethod)
		}
	default:
		return fmt.Errorf("task %q is not known (energy, optimize or frequencies)", j.Task)
	}
	return nil
}

// normaliseZeros turns negative zeros in the geometry and the origin into
// zeros, so that "-0.0" and "0" in an input file give the same input key.
func (j *Job) normaliseZeros() {
	for i := range j.Molecule.Atoms {
		for k, x := range j.Molecule.Atoms[i].Bohr {
			if x == 0 {
				j.Molecule.Atoms[i].Bohr[k] = 0
			}
		}
	}
	for k, x := range j.Origin.Point {
		if x == 0 {
			j.Origin.Point[k] = 0
		}
	}
}
