package engine

import (
	"encoding/json"
	"fmt"
)

// Status values of a result.
const (
	StatusConverged    = "converged"
	StatusNotConverged = "not_converged"
	StatusFailed       = "failed"
)

// Quadrupole is a symmetric 3×3 tensor by its six components.
type Quadrupole struct {
	XX float64 `json:"xx"`
	YY float64 `json:"yy"`
	ZZ float64 `json:"zz"`
	XY float64 `json:"xy"`
	XZ float64 `json:"xz"`
	YZ float64 `json:"yz"`
}

// GeomAtom is one atom of a geometry, serialised as ["O", x, y, z].
type GeomAtom struct {
	Symbol string
	XYZ    [3]float64
}

// MarshalJSON writes ["Symbol", x, y, z].
func (g GeomAtom) MarshalJSON() ([]byte, error) {
	return json.Marshal([]any{g.Symbol, g.XYZ[0], g.XYZ[1], g.XYZ[2]})
}

// UnmarshalJSON reads ["Symbol", x, y, z].
func (g *GeomAtom) UnmarshalJSON(b []byte) error {
	var raw []json.RawMessage
	if err := json.Unmarshal(b, &raw); err != nil {
		return err
	}
	if len(raw) != 4 {
		return fmt.Errorf("geometry atom must be [symbol, x, y, z], found %d items", len(raw))
	}
	if err := json.Unmarshal(raw[0], &g.Symbol); err != nil {
		return fmt.Errorf("geometry atom symbol: %v", err)
	}
	for k := 0; k < 3; k++ {
		if err := json.Unmarshal(raw[k+1], &g.XYZ[k]); err != nil {
			return fmt.Errorf("geometry atom coordinate %d: %v", k, err)
		}
	}
	return nil
}

// SCFIteration is one line of the SCF history.
type SCFIteration struct {
	Iteration       int     `json:"iteration"`
	EnergyHartree   float64 `json:"energy_hartree"`
	DeltaEHartree   float64 `json:"delta_e_hartree"`
	DensityRMS      float64 `json:"density_rms"`
	OrbitalGradient float64 `json:"orbital_gradient"`
	DIISVectors     int     `json:"diis_vectors"`
}

// Orbitals are the canonical orbital energies and occupations.
type Orbitals struct {
	EnergiesAlphaHartree []float64 `json:"energies_alpha_hartree"`
	EnergiesBetaHartree  []float64 `json:"energies_beta_hartree,omitempty"`
	OccupationsAlpha     []float64 `json:"occupations_alpha"`
	OccupationsBeta      []float64 `json:"occupations_beta,omitempty"`
	HOMOHartree          float64   `json:"homo_hartree"`
	LUMOHartree          *float64  `json:"lumo_hartree,omitempty"`
	GapHartree           *float64  `json:"homo_lumo_gap_hartree,omitempty"`
}

// MultipoleParts is a moment split as total = nuclear + electronic.
type MultipoleParts struct {
	TotalAU      []float64 `json:"total_au"`
	NuclearAU    []float64 `json:"nuclear_au"`
	ElectronicAU []float64 `json:"electronic_au"`
}

// Properties are one-electron properties of one density.
type Properties struct {
	// Density names the density: "scf", "mp2-relaxed", "kohn-sham".
	Density     string         `json:"density"`
	OriginBohr  [3]float64     `json:"origin_bohr"`
	OriginKind  string         `json:"origin_kind"`
	Dipole      MultipoleParts `json:"dipole"`
	DipoleDebye [3]float64     `json:"dipole_debye"`
	DipoleNormD float64        `json:"dipole_magnitude_debye"`
	// Quadrupole: traceless (Buckingham), components xx yy zz xy xz yz.
	Quadrupole            MultipoleParts `json:"quadrupole_traceless"`
	QuadrupoleBuckingham  Quadrupole     `json:"quadrupole_buckingham"`
	SecondMoment          MultipoleParts `json:"second_moment"`
	DipoleOriginDependent bool           `json:"dipole_origin_dependent"`
	QuadOriginDependent   bool           `json:"quadrupole_origin_dependent"`
	MullikenCharges       []float64      `json:"mulliken_charges,omitempty"`
	LowdinCharges         []float64      `json:"lowdin_charges,omitempty"`
	Method                string         `json:"method,omitempty"`
	FiniteFieldStepAU     float64        `json:"finite_field_step_au,omitempty"`
	FiniteFieldErrorDebye float64        `json:"finite_field_error_estimate_debye,omitempty"`
}

// Correlation is the MP2-family breakdown.
type Correlation struct {
	Method              string  `json:"method"`
	SameSpinHartree     float64 `json:"same_spin_hartree"`
	OppositeSpinHartree float64 `json:"opposite_spin_hartree"`
	SameSpinScale       float64 `json:"same_spin_scale"`
	OppositeSpinScale   float64 `json:"opposite_spin_scale"`
	FrozenOrbitals      int     `json:"frozen_orbitals"`
	MP2TotalHartree     float64 `json:"mp2_energy_hartree"`
}

// CoupledCluster is the coupled-cluster breakdown.
type CoupledCluster struct {
	Method         string `json:"method"`
	FrozenOrbitals int    `json:"frozen_orbitals"`
	// ActiveOccupied and Virtual are the correlated orbital counts.
	ActiveOccupied int `json:"active_occupied_orbitals"`
	Virtual        int `json:"virtual_orbitals"`
	// Integrals names the integral source ("exact").
	Integrals              string   `json:"integrals"`
	MP2CorrelationHartree  float64  `json:"mp2_correlation_hartree"`
	CCSDCorrelationHartree float64  `json:"ccsd_correlation_hartree"`
	CCSDTotalHartree       float64  `json:"ccsd_energy_hartree"`
	TriplesHartree         *float64 `json:"triples_correction_hartree,omitempty"`
	// T1Diagnostic is the spin-orbital ‖t1‖/√N (N correlated electrons).
	T1Diagnostic float64       `json:"t1_diagnostic"`
	LargestT2    float64       `json:"largest_t2_amplitude"`
	Iterations   []CCIteration `json:"iterations"`
}

// CCIteration is one line of the coupled-cluster history.
type CCIteration struct {
	Iteration          int     `json:"iteration"`
	CorrelationHartree float64 `json:"correlation_hartree"`
	DeltaEHartree      float64 `json:"delta_e_hartree"`
	AmplitudeRMS       float64 `json:"amplitude_rms_change"`
	DIISVectors        int     `json:"diis_vectors"`
}

// OptStep is one point of an optimisation trajectory.
type OptStep struct {
	Step             int        `json:"step"`
	EnergyHartree    float64    `json:"energy_hartree"`
	MaxForce         float64    `json:"max_force_hartree_per_bohr"`
	RMSForce         float64    `json:"rms_force_hartree_per_bohr"`
	MaxStepBohr      float64    `json:"max_step_bohr"`
	GeometryAngstrom []GeomAtom `json:"geometry_angstrom"`
	// Rejected marks a step the optimisation tried and went back from (the
	// energy rose); the next step starts again from the point before it.
	Rejected bool `json:"rejected,omitempty"`
}

// Bond, Angle and Dihedral are structural parameters of a geometry
// (atom indices from 0).
type Bond struct {
	I        int     `json:"i"`
	J        int     `json:"j"`
	Label    string  `json:"label"`
	Angstrom float64 `json:"length_angstrom"`
}
type Angle struct {
	I       int     `json:"i"`
	J       int     `json:"j"`
	K       int     `json:"k"`
	Label   string  `json:"label"`
	Degrees float64 `json:"degrees"`
}
type Dihedral struct {
	I       int     `json:"i"`
	J       int     `json:"j"`
	K       int     `json:"k"`
	L       int     `json:"l"`
	Label   string  `json:"label"`
	Degrees float64 `json:"degrees"`
}

// Structure is the connectivity and internal coordinates of the final geometry.
type Structure struct {
	Bonds     []Bond     `json:"bonds"`
	Angles    []Angle    `json:"angles"`
	Dihedrals []Dihedral `json:"dihedrals"`
}

// Vibrations are the harmonic vibrational analysis of the final geometry.
type Vibrations struct {
	// Method says how the Hessian was made.
	Method       string  `json:"method"`
	StepBohr     float64 `json:"step_bohr"`
	Calculations int     `json:"displaced_calculations"`
	// WavenumbersPerCm are ascending; an imaginary wavenumber iν is given as −ν.
	WavenumbersPerCm    []float64 `json:"harmonic_wavenumbers_per_cm"`
	ReducedMassesDalton []float64 `json:"reduced_masses_dalton"`
	// NormalModes are the Cartesian displacements (3N each, unit length).
	NormalModes [][]float64 `json:"normal_modes_cartesian"`
	// ImaginaryModes counts imaginary wavenumbers beyond the tolerance
	// (vib.ImaginaryToleranceCm); SmallImaginaryModes those within it.
	ImaginaryModes      int `json:"imaginary_modes"`
	SmallImaginaryModes int `json:"small_imaginary_modes,omitempty"`
	// ZeroPointHartree is ½ Σ ħω over the real modes.
	ZeroPointHartree float64 `json:"zero_point_energy_hartree"`
	// MaxForce is the largest gradient component free of rigid motion.
	MaxForce float64 `json:"max_force_hartree_per_bohr"`
	// StationaryPoint is "minimum", "saddle-point" or "not-stationary".
	StationaryPoint string `json:"stationary_point"`
	Linear          bool   `json:"linear,omitempty"`
	// HessianLower is the Cartesian Hessian's lower triangle, row by row.
	HessianLower []float64 `json:"cartesian_hessian_lower_hartree_per_bohr2"`
}

// IsMinimum reports whether the analysis shows a minimum.
func (v *Vibrations) IsMinimum() bool { return v != nil && v.StationaryPoint == "minimum" }

// Result is what Run returns. The first keys are the outside contract.
type Result struct {
	EnergyHartree            float64     `json:"energy_hartree"`
	SCFEnergyHartree         float64     `json:"scf_energy_hartree"`
	CorrelationEnergyHartree *float64    `json:"correlation_energy_hartree,omitempty"`
	DipoleDebye              *[3]float64 `json:"dipole_debye,omitempty"`
	SCFDipoleDebye           *[3]float64 `json:"scf_dipole_debye,omitempty"`
	QuadrupoleBuckingham     *Quadrupole `json:"quadrupole_buckingham,omitempty"`
	MultipoleOriginBohr      [3]float64  `json:"multipole_origin_bohr"`
	GeometryAngstrom         []GeomAtom  `json:"geometry_angstrom"`

	Status string `json:"status"`
	Error  string `json:"error,omitempty"`

	NuclearRepulsionHartree float64  `json:"nuclear_repulsion_hartree"`
	OneElectronHartree      float64  `json:"one_electron_hartree"`
	TwoElectronHartree      float64  `json:"two_electron_hartree"`
	XCHartree               *float64 `json:"xc_hartree,omitempty"`
	S2                      *float64 `json:"s_squared,omitempty"`
	NBasis                  int      `json:"n_basis_functions"`
	Electrons               [2]int   `json:"electrons_alpha_beta"`
	IntegratedElectrons     *float64 `json:"grid_integrated_electrons,omitempty"`

	Orbitals        *Orbitals       `json:"orbitals,omitempty"`
	SCFIterations   []SCFIteration  `json:"scf_iterations"`
	Correlation     *Correlation    `json:"correlation,omitempty"`
	CoupledCluster  *CoupledCluster `json:"coupled_cluster,omitempty"`
	SCFProperties   *Properties     `json:"scf_properties,omitempty"`
	LevelProperties *Properties     `json:"level_properties,omitempty"`
	Trajectory      []OptStep       `json:"optimization_trajectory,omitempty"`
	Structure       *Structure      `json:"structure,omitempty"`
	Vibrations      *Vibrations     `json:"vibrations,omitempty"`
	// PointGroup is the point group an optimisation kept (Schoenflies symbol).
	PointGroup string `json:"point_group,omitempty"`
	// Fitting says how density-fitted integrals were made (absent: exact integrals).
	Fitting *FittingInfo `json:"density_fitting,omitempty"`
	// Notes are plain-words remarks the engine wants a reader to see.
	Notes []string `json:"notes,omitempty"`
}
