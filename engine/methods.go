package engine

import (
	"errors"
	"fmt"
	"math"
	"sort"
	"strings"

	"moltrail/engine/basis"
	"moltrail/engine/molecule"
	"moltrail/engine/symmetry"
)

// MethodInfo describes one method name accepted by the engine.
type MethodInfo struct {
	Name        string
	Family      string // "hf", "mp2", "cc", "dft"
	Description string
	// Functional is the stored XC definition for DFT methods.
	Functional string
	// SameSpin/OppositeSpin scales for MP2-family methods.
	SameSpin, OppositeSpin float64
}

// Methods is the method table (names fixed by the outside contract).
var Methods = map[string]MethodInfo{
	"hf":      {Name: "hf", Family: "hf", Description: "Hartree–Fock: RHF for closed shells, UHF otherwise"},
	"rhf":     {Name: "rhf", Family: "hf", Description: "restricted closed-shell Hartree–Fock"},
	"uhf":     {Name: "uhf", Family: "hf", Description: "unrestricted Hartree–Fock"},
	"rohf":    {Name: "rohf", Family: "hf", Description: "restricted open-shell Hartree–Fock"},
	"mp2":     {Name: "mp2", Family: "mp2", Description: "second-order Møller–Plesset on RHF (closed shell) or UHF", SameSpin: 1, OppositeSpin: 1},
	"scs-mp2": {Name: "scs-mp2", Family: "mp2", Description: "spin-component-scaled MP2 (Grimme 2003: same-spin 1/3, opposite-spin 6/5)", SameSpin: 1.0 / 3.0, OppositeSpin: 6.0 / 5.0},
	"ccsd":    {Name: "ccsd", Family: "cc", Description: "coupled cluster with single and double excitations on a closed-shell RHF reference"},
	"ccsd(t)": {Name: "ccsd(t)", Family: "cc", Description: "CCSD with the perturbative triples correction (T) on a closed-shell RHF reference"},
	"svwn5":   {Name: "svwn5", Family: "dft", Functional: "slater+vwn5", Description: "LDA: Slater exchange + VWN5 correlation"},
	"blyp":    {Name: "blyp", Family: "dft", Functional: "b88+lyp", Description: "GGA: Becke 88 exchange + LYP correlation"},
	"pbe":     {Name: "pbe", Family: "dft", Functional: "pbe-x+pbe-c", Description: "GGA: PBE exchange and correlation"},
	"b3lyp":   {Name: "b3lyp", Family: "dft", Functional: "b3lyp(vwn-rpa)", Description: "hybrid: B3LYP with the VWN-RPA local correlation (libxc's B3LYP definition)"},
	"b3lyp5":  {Name: "b3lyp5", Family: "dft", Functional: "b3lyp5(vwn5)", Description: "hybrid: B3LYP with VWN5 local correlation"},
	"pbe0":    {Name: "pbe0", Family: "dft", Functional: "pbe0", Description: "hybrid: PBE with 25 % exact exchange"},
}

// Correlated reports whether the method adds a correlation energy to a
// Hartree–Fock reference (the MP2 family and coupled cluster).
func (m MethodInfo) Correlated() bool { return m.Family == "mp2" || m.Family == "cc" }

// MethodNames lists the method names in a stable order.
func MethodNames() []string {
	var out []string
	for k := range Methods {
		out = append(out, k)
	}
	sort.Strings(out)
	return out
}

// Defaults for the SCF. Tight enough that dipoles (4 decimals in debye) and
// energies (8 decimals in hartree) are converged to their printed digits.
var DefaultSCF = SCFSettings{
	EnergyTolHartree: 1e-10,
	DensityTol:       1e-8,
	GradientTol:      1e-7,
	MaxIter:          150,
	Guess:            "sad",
	DIISSize:         8,
	SchwarzThreshold: 1e-12,
}

// DefaultOrigin is the centre of mass.
var DefaultOrigin = OriginSpec{Kind: "centre-of-mass"}

// Request is what a user asks for; NewJob turns it into a normalised Job.
type Request struct {
	Molecule     *molecule.Molecule
	Method       string
	Basis        string // library name/alias or path to a basis JSON file
	Angular      basis.Angular
	Task         string
	FrozenCore   bool
	SCF          *SCFSettings
	Grid         string // grid level name for DFT ("" = default)
	Origin       *OriginSpec
	Opt          *OptSettings
	RelaxedProps string
	// CC overrides DefaultCC for coupled-cluster methods.
	CC *CCSettings
	// FieldStepAU and FieldFormula override the finite-field defaults of
	// coupled-cluster methods (DefaultFieldStepAU, DefaultFieldFormula).
	FieldStepAU  float64
	FieldFormula string
	// Frequencies adds a harmonic vibrational analysis at the optimised
	// geometry to task "optimize" (task "frequencies" always has one).
	Frequencies bool
	// Freq overrides the default frequency settings of the method.
	Freq *FreqSettings
	// AllowCloseAtoms lets a molecule with atoms closer than the physical
	// minimum (molecule.CloseFraction) through; the result then carries a note.
	AllowCloseAtoms bool
	// Fitting asks for density-fitted two-electron integrals (nil: exact).
	Fitting *FittingRequest
}

// ErrCloseAtoms marks the refusal of a molecule whose atoms are closer than
// the physical minimum.
var ErrCloseAtoms = errors.New("close atoms are refused unless explicitly allowed")

// Coupled-cluster defaults: energies converged well past their printed
// eighth decimal.
var DefaultCC = CCSettings{EnergyTolHartree: 1e-10, AmplitudeTol: 1e-9, MaxIter: 100, DIISSize: 8, Integrals: "exact"}

// Finite-field defaults of coupled-cluster dipoles.
const (
	DefaultFieldStepAU  = 2e-3
	DefaultFieldFormula = "four-point"
)

// NewJob validates a request and returns the normalised job.
func NewJob(r Request) (*Job, error) {
	if r.Molecule == nil {
		return nil, fmt.Errorf("no molecule given")
	}
	m := r.Molecule.Clone()
	if err := m.Check(); err != nil {
		return nil, err
	}
	if !r.AllowCloseAtoms {
		if err := m.CheckContacts(); err != nil {
			return nil, fmt.Errorf("%v; %w", err, ErrCloseAtoms)
		}
	}
	method := lower(r.Method)
	if method == "" {
		method = "hf"
	}
	info, ok := Methods[method]
	if !ok {
		return nil, fmt.Errorf("method %q is not known (known: %s)", r.Method, strings.Join(MethodNames(), ", "))
	}
	set, err := basis.LoadShared(r.Basis) // only read here
	if err != nil {
		return nil, err
	}
	j := &Job{
		Version:  CanonicalVersion,
		Molecule: SpecFromMolecule(m),
		Method:   method,
		Basis:    BasisSpec{Name: set.Name, File: set.File, SHA256: set.SHA256, Angular: set.Angular},
		Task:     lower(r.Task),
		SCF:      DefaultSCF,
		Origin:   DefaultOrigin,
	}
	if r.Angular != "" {
		j.Basis.Angular = r.Angular
	}
	if !strings.HasPrefix(set.File, "builtin:") {
		raw, err := basis.RawBytes(set)
		if err != nil {
			return nil, err
		}
		j.Basis.Inline = raw
	}
	if r.SCF != nil {
		j.SCF = *r.SCF
	}
	if r.Origin != nil {
		j.Origin = *r.Origin
	}
	j.normaliseZeros()
	if j.Task == "" {
		j.Task = "energy"
	}
	open := m.Multiplicity != 1
	switch info.Family {
	case "hf":
		j.Reference = method
		if method == "hf" {
			j.Reference = "rhf"
			if open {
				j.Reference = "uhf"
			}
		}
		if j.Reference == "rhf" && open {
			return nil, fmt.Errorf("method rhf needs a closed shell, but multiplicity is %d: use uhf or rohf", m.Multiplicity)
		}
	case "mp2":
		j.Reference = "rhf"
		if open {
			j.Reference = "uhf"
		}
		rp := r.RelaxedProps
		if rp == "" {
			// The analytic relaxed density (Z-vector) of the level's own
			// (spin-scaled) energy: dipole and quadrupole in one pass.
			rp = "z-vector"
		}
		switch rp {
		case "z-vector", "finite-field", "none":
		default:
			return nil, fmt.Errorf("relaxed-properties route %q is not known (z-vector, finite-field, none)", rp)
		}
		j.Correlation = &CorrelationSettings{FrozenCore: r.FrozenCore, RelaxedProperties: rp}
		if rp == "finite-field" {
			j.Correlation.FieldStepAU = 2e-3
		}
	case "cc":
		if open {
			return nil, fmt.Errorf("method %s needs a closed-shell (RHF) reference, but multiplicity is %d: open-shell coupled cluster is not available", method, m.Multiplicity)
		}
		j.Reference = "rhf"
		rp := r.RelaxedProps
		if rp == "" {
			rp = "none"
		}
		if rp != "none" && rp != "finite-field" {
			return nil, fmt.Errorf("relaxed-properties route %q is not available for %s (finite-field or none)", rp, method)
		}
		c := DefaultCC
		if r.CC != nil {
			c = *r.CC
		}
		j.Correlation = &CorrelationSettings{FrozenCore: r.FrozenCore, RelaxedProperties: rp, CC: &c}
		if rp == "finite-field" {
			j.Correlation.FieldStepAU, j.Correlation.FieldFormula = DefaultFieldStepAU, DefaultFieldFormula
			if r.FieldStepAU != 0 {
				j.Correlation.FieldStepAU = r.FieldStepAU
			}
			if r.FieldFormula != "" {
				j.Correlation.FieldFormula = lower(r.FieldFormula)
			}
		} else if r.FieldStepAU != 0 || r.FieldFormula != "" {
			return nil, fmt.Errorf("a field step or formula applies to the finite-field route only")
		}
	case "dft":
		j.Reference = "rks"
		if open {
			j.Reference = "uks"
		}
		j.Functional = info.Functional
		g, err := GridForLevel(r.Grid)
		if err != nil {
			return nil, err
		}
		j.Grid = &g
	}
	if r.Fitting != nil {
		if info.Correlated() {
			return nil, fmt.Errorf("density fitting covers the SCF and DFT methods in this build; %s runs with exact integrals (leave the fitting out)", method)
		}
		if j.Fitting, err = fittingFor(r.Fitting, set, j.Basis.Angular, m); err != nil {
			return nil, err
		}
	}
	if r.FrozenCore && !info.Correlated() {
		return nil, fmt.Errorf("frozen core applies to correlated methods (mp2, scs-mp2, ccsd, ccsd(t)), not to %s", method)
	}
	switch j.Task {
	case "energy", "frequencies":
	case "optimize":
		o := DefaultOpt
		if info.Correlated() || j.Fitting != nil {
			// Correlated-method and fitted gradients are central differences of energies.
			o.GradientMethod, o.FiniteDiffStepAU = "finite-difference", 1e-3
		}
		if r.Opt != nil {
			o = *r.Opt
		}
		switch o.GradientMethod {
		case "analytic":
			if info.Correlated() {
				return nil, fmt.Errorf("analytic gradients are not available for %s; use the finite-difference gradient method", method)
			}
			if j.Fitting != nil {
				return nil, fmt.Errorf("analytic gradients of density-fitted energies are not available in this build; use the finite-difference gradient method")
			}
			o.FiniteDiffStepAU = 0
		case "finite-difference":
			if !(o.FiniteDiffStepAU > 0 && o.FiniteDiffStepAU < 0.1) {
				return nil, fmt.Errorf("finite-difference step %g bohr must lie between 0 and 0.1", o.FiniteDiffStepAU)
			}
		default:
			return nil, fmt.Errorf("gradient method %q is not known (analytic or finite-difference)", o.GradientMethod)
		}
		j.Opt = &o
	default:
		return nil, fmt.Errorf("task %q is not known (energy, optimize or frequencies)", r.Task)
	}
	if j.Task == "frequencies" || (j.Task == "optimize" && (r.Frequencies || r.Freq != nil)) {
		f := DefaultFreq
		if info.Correlated() || j.Fitting != nil {
			f = DefaultFreqEnergies
		}
		if r.Freq != nil {
			f = *r.Freq
		}
		j.Freq = &f
	} else if r.Frequencies || r.Freq != nil {
		return nil, fmt.Errorf("frequencies are computed by task frequencies, or by task optimize at the optimised geometry, not by task %s", j.Task)
	}
	if err := j.Validate(); err != nil {
		return nil, err
	}
	if err := j.checkBasis(set, m); err != nil {
		return nil, err
	}
	return j, nil
}

// DefaultOpt gives bond lengths converged to about 1e-4 Å.
var DefaultOpt = OptSettings{
	MaxForce:        3e-5,
	RMSForce:        2e-5,
	MaxStep:         1e-4,
	EnergyChange:    1e-8,
	MaxSteps:        100,
	TrustRadiusBohr: 0.3,
	Coordinates:     "cartesian",
	GradientMethod:  "analytic",
	// Symmetric molecules stay symmetric (within 0.01 Å).
	SymmetryTolAngstrom: symmetry.DefaultToleranceAngstrom,
}

// Default frequency settings: central differences of analytic gradients
// (HF, DFT) with 0.0025 bohr steps, second differences of energies (the
// correlated methods, which have no analytic gradient here) with 0.005 bohr steps.
// The O(h²) truncation error dominates: for water (RHF/6-31G*, MP2/cc-pVDZ)
// the wavenumbers move by 0.12–0.4 cm⁻¹ when the step doubles, and lie
// within 0.07 cm⁻¹ of psi4's at these steps, with the default SCF
// convergence (measured; see engine/freq_psi4_test.go).
var (
	DefaultFreq         = FreqSettings{Derivatives: "gradient-differences", StepBohr: 2.5e-3}
	DefaultFreqEnergies = FreqSettings{Derivatives: "energy-differences", StepBohr: 5e-3}
)

// Validate checks a normalised job for settings that cannot work.
func (j *Job) Validate() error {
	if j.Version != CanonicalVersion {
		return fmt.Errorf("job canonical_version is %q; this build reads %q", j.Version, CanonicalVersion)
	}
	m, err := j.MoleculeOf()
	if err != nil {
		return err
	}
	if err := m.Check(); err != nil {
		return err
	}
	if _, ok := Methods[j.Method]; !ok {
		return fmt.Errorf("method %q is not available in this build", j.Method)
	}
	if err := j.checkConsistent(m); err != nil {
		return err
	}
	if err := j.checkLimits(m); err != nil {
		return err
	}
	s := j.SCF
	switch {
	case !(s.EnergyTolHartree > 0):
		return fmt.Errorf("scf.energy_tol_hartree must be positive")
	case !(s.DensityTol > 0):
		return fmt.Errorf("scf.density_rms_tol must be positive")
	case !(s.GradientTol > 0):
		return fmt.Errorf("scf.orbital_gradient_tol must be positive")
	case s.MaxIter < 1:
		return fmt.Errorf("scf.max_iterations must be at least 1")
	case s.Guess != "sad" && s.Guess != "core":
		return fmt.Errorf("scf.guess %q is not known (sad or core)", s.Guess)
	case s.DIISSize < 0:
		return fmt.Errorf("scf.diis_size must not be negative")
	case s.LevelShiftHartree < 0 || s.LevelShiftHartree > 10 || math.IsNaN(s.LevelShiftHartree):
		return fmt.Errorf("scf.level_shift_hartree %g is outside 0–10 hartree", s.LevelShiftHartree)
	case s.SchwarzThreshold < 0 || s.SchwarzThreshold > 1e-6:
		return fmt.Errorf("scf.schwarz_threshold %g is outside 0–1e-6", s.SchwarzThreshold)
	}
	if c := j.Correlation; c != nil {
		if err := c.validate(); err != nil {
			return err
		}
	}
	if err := j.Origin.check(m); err != nil {
		return err
	}
	if o := j.Opt; o != nil && !(o.SymmetryTolAngstrom >= 0 && o.SymmetryTolAngstrom <= 0.1) {
		return fmt.Errorf("optimization.symmetry_tolerance_angstrom %g is outside 0–0.1 Å", o.SymmetryTolAngstrom)
	}
	if f := j.Freq; f != nil {
		switch {
		case j.Task != "frequencies" && j.Task != "optimize":
			return fmt.Errorf("frequencies settings belong to task frequencies or optimize, not %s", j.Task)
		case f.Derivatives == "gradient-differences" && Methods[j.Method].Correlated():
			return fmt.Errorf("frequencies.derivatives gradient-differences needs analytic gradients, which %s lacks: use energy-differences", j.Method)
		case f.Derivatives == "gradient-differences" && j.Fitting != nil:
			return fmt.Errorf("frequencies.derivatives gradient-differences needs analytic gradients, which density-fitted energies lack here: use energy-differences")
		case f.Derivatives != "gradient-differences" && f.Derivatives != "energy-differences":
			return fmt.Errorf("frequencies.derivatives %q is not known (gradient-differences or energy-differences)", f.Derivatives)
		case !(f.StepBohr >= 1e-4 && f.StepBohr <= 0.1):
			return fmt.Errorf("frequencies.step_bohr %g is outside 1e-4–0.1 bohr", f.StepBohr)
		}
	} else if j.Task == "frequencies" {
		return fmt.Errorf("task frequencies needs its frequencies settings")
	}
	if j.Basis.Angular != basis.Spherical && j.Basis.Angular != basis.Cartesian {
		return fmt.Errorf("basis.angular %q is not spherical or cartesian", j.Basis.Angular)
	}
	if f := j.Fitting; f != nil {
		if Methods[j.Method].Correlated() {
			return fmt.Errorf("density_fitting is set, but fitted integrals cover the SCF and DFT methods only, not %s", j.Method)
		}
		if o := j.Opt; o != nil && o.GradientMethod == "analytic" {
			return fmt.Errorf("density_fitting is set, but analytic gradients of fitted energies are not available; optimization.gradient_method must be finite-difference")
		}
		if err := f.validate(); err != nil {
			return err
		}
	}
	return nil
}

// OriginBohr resolves the multipole origin of the job for a molecule.
func (j *Job) OriginBohr(m *molecule.Molecule) [3]float64 {
	switch j.Origin.Kind {
	case "centre-of-charge":
		return m.CentreOfNuclearCharge()
	case "coordinate-origin":
		return [3]float64{}
	case "point":
		return j.Origin.Point
	case "atom":
		return m.Atoms[j.Origin.Atom].PosBohr
	default:
		return m.CentreOfMass()
	}
}

func (c *CorrelationSettings) validate() error {
	if cc := c.CC; cc != nil {
		switch {
		case !(cc.EnergyTolHartree > 0 && cc.EnergyTolHartree < 1e-3):
			return fmt.Errorf("correlation.coupled_cluster.energy_tol_hartree %g must lie between 0 and 1e-3", cc.EnergyTolHartree)
		case !(cc.AmplitudeTol > 0 && cc.AmplitudeTol < 1e-2):
			return fmt.Errorf("correlation.coupled_cluster.amplitude_rms_tol %g must lie between 0 and 1e-2", cc.AmplitudeTol)
		case cc.MaxIter < 1:
			return fmt.Errorf("correlation.coupled_cluster.max_iterations must be at least 1")
		case cc.DIISSize < 0:
			return fmt.Errorf("correlation.coupled_cluster.diis_size must not be negative")
		case cc.Integrals != "exact":
			return fmt.Errorf("correlation.coupled_cluster.integrals %q is not available (exact)", cc.Integrals)
		}
	}
	if c.FieldFormula != "" {
		if c.FieldFormula != "two-point" && c.FieldFormula != "four-point" {
			return fmt.Errorf("correlation.field_formula %q is not known (two-point or four-point)", c.FieldFormula)
		}
		if !(c.FieldStepAU > 0 && c.FieldStepAU <= 0.05) {
			return fmt.Errorf("correlation.field_step_au %g must lie between 0 and 0.05", c.FieldStepAU)
		}
	}
	return nil
}
