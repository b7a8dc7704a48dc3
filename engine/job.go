// Package engine is the one door into moltrail's quantum-chemistry engine:
// a validated Job with a canonical byte encoding (whose SHA-256 is the
// archive's input key), Run(job) → Result, and the method table.
//
// Canonical encoding (version CanonicalVersion): the JSON encoding of the
// Job struct as declared here — fields in declaration order, no
// indentation, floats in Go's shortest round-trip form, optional sections
// omitted when absent — after Normalize has filled every default. Two jobs
// that can give different numbers never share an encoding; when a field is
// added the version changes.
package engine

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"math"
	"strings"

	"moltrail/engine/basis"
	"moltrail/engine/molecule"
)

// CanonicalVersion names the canonical-encoding layout of Job.
const CanonicalVersion = "moltrail-job/1"

// AtomSpec is one atom of the job's geometry, in bohr (the unit the engine
// computes in, so no conversion enters the hash).
type AtomSpec struct {
	Symbol string     `json:"symbol"`
	Bohr   [3]float64 `json:"xyz_bohr"`
}

// MoleculeSpec is the job's molecule.
type MoleculeSpec struct {
	Name         string     `json:"name"`
	Charge       int        `json:"charge"`
	Multiplicity int        `json:"multiplicity"`
	Atoms        []AtomSpec `json:"atoms"`
}

// BasisSpec names the orbital basis and pins its content.
type BasisSpec struct {
	Name    string        `json:"name"`
	File    string        `json:"file"`
	SHA256  string        `json:"sha256"`
	Angular basis.Angular `json:"angular"`
	// Inline carries the exact bytes of a user-supplied basis file, so the
	// record alone can reproduce the calculation. Empty for built-in sets.
	Inline []byte `json:"inline_base64,omitempty"`
}

// SCFSettings are the SCF convergence controls.
type SCFSettings struct {
	// EnergyTolHartree: converged when |ΔE| between iterations is below this …
	EnergyTolHartree float64 `json:"energy_tol_hartree"`
	// DensityTol: … and the RMS change of the density matrix is below this …
	DensityTol float64 `json:"density_rms_tol"`
	// GradientTol: … and the largest element of the orbital gradient (FDS − SDF) is below this.
	GradientTol float64 `json:"orbital_gradient_tol"`
	MaxIter     int     `json:"max_iterations"`
	// Guess is "sad" (superposition of atomic densities) or "core".
	Guess    string `json:"guess"`
	DIISSize int    `json:"diis_size"`
	// SchwarzThreshold: ERI shell quartets whose Schwarz bound is below this are skipped.
	SchwarzThreshold float64 `json:"schwarz_threshold"`
	// LevelShiftHartree shifts virtual orbitals during the iterations (0 = none).
	LevelShiftHartree float64 `json:"level_shift_hartree"`
}

// GridSpec is the full specification of a DFT integration grid.
type GridSpec struct {
	Level        string  `json:"level"`
	RadialScheme string  `json:"radial_scheme"`
	RadialPoints int     `json:"radial_points"`
	AngularOrder int     `json:"angular_order"`
	Partition    string  `json:"partition"`
	Pruning      string  `json:"pruning"`
	DensityCut   float64 `json:"density_cutoff"`
	BasisCut     float64 `json:"basis_cutoff"`
}

// OriginSpec says where multipoles are taken about.
type OriginSpec struct {
	// Kind: "centre-of-mass" (default), "centre-of-charge",
	// "coordinate-origin", "point" (Point) or "atom" (the nucleus of atom
	// Atom, wherever an optimisation moves it).
	Kind  string     `json:"kind"`
	Point [3]float64 `json:"point_bohr"`
	// Atom is the 0-based atom index of kind "atom".
	Atom int `json:"atom_index,omitempty"`
	// symbol, when set, is the element the user named the atom by (checked by NewJob).
	symbol string
}

// CorrelationSettings are the options of correlated methods (MP2 family,
// coupled cluster).
type CorrelationSettings struct {
	FrozenCore bool `json:"frozen_core"`
	// RelaxedProperties: "finite-field" or "z-vector" (analytic relaxed
	// density, MP2 family only); "none" skips them.
	RelaxedProperties string  `json:"relaxed_properties"`
	FieldStepAU       float64 `json:"field_step_au"`
	// FieldFormula is the finite-difference formula of coupled-cluster
	// finite-field dipoles: "two-point" (E(±h)) or "four-point" (E(±h),
	// E(±2h)). Absent for the MP2 family, whose route is fixed (steps h
	// and 2h with Richardson extrapolation, the same four energies).
	FieldFormula string `json:"field_formula,omitempty"`
	// CC holds the coupled-cluster convergence criteria; absent for the MP2 family.
	CC *CCSettings `json:"coupled_cluster,omitempty"`
}

// CCSettings control the coupled-cluster iterations.
type CCSettings struct {
	// Converged when |ΔE| between iterations is below EnergyTolHartree and
	// the RMS change of the amplitudes is below AmplitudeTol.
	EnergyTolHartree float64 `json:"energy_tol_hartree"`
	AmplitudeTol     float64 `json:"amplitude_rms_tol"`
	MaxIter          int     `json:"max_iterations"`
	DIISSize         int     `json:"diis_size"`
	// Integrals names the integral source: "exact" (four-index
	// transformation of the exact integrals).
	Integrals string `json:"integrals"`
}

// OptSettings are geometry-optimisation controls.
type OptSettings struct {
	MaxForce         float64 `json:"max_force_hartree_per_bohr"`
	RMSForce         float64 `json:"rms_force_hartree_per_bohr"`
	MaxStep          float64 `json:"max_step_bohr"`
	EnergyChange     float64 `json:"energy_change_hartree"`
	MaxSteps         int     `json:"max_steps"`
	TrustRadiusBohr  float64 `json:"trust_radius_bohr"`
	Coordinates      string  `json:"coordinates"`
	GradientMethod   string  `json:"gradient_method"`
	FiniteDiffStepAU float64 `json:"finite_difference_step_bohr,omitempty"`
	// SymmetryTolAngstrom: the point group the start geometry has within
	// this tolerance is detected, the start geometry symmetrised to it, and
	// every gradient and step kept to it (engine/symmetry). 0: none.
	SymmetryTolAngstrom float64 `json:"symmetry_tolerance_angstrom,omitempty"`
}

// FreqSettings are the controls of a harmonic vibrational analysis.
type FreqSettings struct {
	// Derivatives: "gradient-differences" (central differences of analytic
	// gradients) or "energy-differences" (second differences of energies,
	// for methods without analytic gradients).
	Derivatives string  `json:"derivatives"`
	StepBohr    float64 `json:"step_bohr"`
}

// Job is everything that can change a number.
type Job struct {
	Version   string       `json:"canonical_version"`
	Molecule  MoleculeSpec `json:"molecule"`
	Method    string       `json:"method"`
	Reference string       `json:"reference"`
	// Functional names the exact XC definition for DFT methods (e.g.
	// "b3lyp(vwn-rpa)"), empty otherwise.
	Functional  string               `json:"functional,omitempty"`
	Basis       BasisSpec            `json:"basis"`
	Task        string               `json:"task"`
	SCF         SCFSettings          `json:"scf"`
	Grid        *GridSpec            `json:"grid,omitempty"`
	Correlation *CorrelationSettings `json:"correlation,omitempty"`
	Origin      OriginSpec           `json:"multipole_origin"`
	Opt         *OptSettings         `json:"optimization,omitempty"`
	// Freq asks for harmonic frequencies: task "frequencies" at the input
	// geometry, task "optimize" at the optimised one.
	Freq *FreqSettings `json:"frequencies,omitempty"`
	// Fitting selects density-fitted two-electron integrals (absent: exact).
	Fitting *FittingSpec `json:"density_fitting,omitempty"`
}

// Canonical returns the canonical bytes of a normalised job.
func (j *Job) Canonical() ([]byte, error) {
	if j.Version != CanonicalVersion {
		return nil, fmt.Errorf("job is not normalised (canonical_version %q)", j.Version)
	}
	return json.Marshal(j)
}

// InputKey is the hex SHA-256 of the canonical bytes.
func (j *Job) InputKey() (string, error) {
	b, err := j.Canonical()
	if err != nil {
		return "", err
	}
	s := sha256.Sum256(b)
	return hex.EncodeToString(s[:]), nil
}

// MoleculeOf builds the molecule of the job.
func (j *Job) MoleculeOf() (*molecule.Molecule, error) {
	m := &molecule.Molecule{Name: j.Molecule.Name, Charge: j.Molecule.Charge, Multiplicity: j.Molecule.Multiplicity}
	for i, a := range j.Molecule.Atoms {
		at, err := molecule.NewAtom(a.Symbol, a.Bohr[0], a.Bohr[1], a.Bohr[2])
		if err != nil {
			return nil, fmt.Errorf("molecule.atoms[%d]: %v", i, err)
		}
		for k := 0; k < 3; k++ {
			if math.IsNaN(a.Bohr[k]) || math.IsInf(a.Bohr[k], 0) {
				return nil, fmt.Errorf("molecule.atoms[%d]: coordinate is not finite", i)
			}
		}
		m.Atoms = append(m.Atoms, at)
	}
	return m, nil
}

// SpecFromMolecule converts a molecule to the job's spec.
func SpecFromMolecule(m *molecule.Molecule) MoleculeSpec {
	s := MoleculeSpec{Name: m.Name, Charge: m.Charge, Multiplicity: m.Multiplicity}
	for _, a := range m.Atoms {
		s.Atoms = append(s.Atoms, AtomSpec{Symbol: a.Symbol, Bohr: a.PosBohr})
	}
	return s
}

// ResolveBasis loads the job's basis set (built-in name, or the inline
// copy of a user file) and checks its content hash against the job.
func (j *Job) ResolveBasis() (*basis.Set, error) { return j.Basis.resolve() }

// resolve loads a pinned basis (built-in name, or the inline copy of a
// user file) and checks its content hash.
func (b BasisSpec) resolve() (*basis.Set, error) {
	var set *basis.Set
	var err error
	if len(b.Inline) > 0 {
		set, err = basis.ParseBytes(b.Inline, "inline:"+b.File)
	} else {
		set, err = basis.Builtin(b.Name)
	}
	if err != nil {
		return nil, err
	}
	if b.SHA256 != "" && set.SHA256 != b.SHA256 {
		return nil, &BasisChangedError{Name: b.Name, Want: b.SHA256, Have: set.SHA256}
	}
	return set, nil
}

// BasisChangedError says the basis data differs from what the job pinned.
type BasisChangedError struct{ Name, Want, Have string }

func (e *BasisChangedError) Error() string {
	return fmt.Sprintf("basis %q data changed: the job pins content hash %s… but the library now has %s…", e.Name, short(e.Want), short(e.Have))
}

func short(h string) string {
	if len(h) > 12 {
		return h[:12]
	}
	return h
}

func lower(s string) string { return strings.ToLower(strings.TrimSpace(s)) }
