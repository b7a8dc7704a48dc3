package molecule

// Physical constants, CODATA 2018 (exact SI defining constants where the SI
// fixes them). Derived factors are computed from these, never typed rounded.
const (
	// BohrAngstrom is the Bohr radius in ångström (CODATA 2018).
	BohrAngstrom = 0.529177210903
	// ElementaryChargeCoulomb is the elementary charge e (exact in the 2019 SI).
	ElementaryChargeCoulomb = 1.602176634e-19
	// SpeedOfLightMPerS is c (exact).
	SpeedOfLightMPerS = 299792458.0
	// PlanckJouleSecond is the Planck constant h (exact in the 2019 SI).
	PlanckJouleSecond = 6.62607015e-34
	// HartreeJoule is the Hartree energy in joule (CODATA 2018).
	HartreeJoule = 4.3597447222071e-18
	// AvogadroPerMol is N_A (exact).
	AvogadroPerMol = 6.02214076e23
	// HartreeEV is the Hartree energy in electronvolt (CODATA 2018).
	HartreeEV = 27.211386245988
	// CalorieJoule is the thermochemical calorie (exact by definition).
	CalorieJoule = 4.184
	// DaltonElectronMass is the atomic mass constant in electron masses (CODATA 2018).
	DaltonElectronMass = 1822.888486209
)

// Derived conversion factors.
var (
	// AngstromBohr converts ångström to bohr.
	AngstromBohr = 1 / BohrAngstrom
	// DebyeCoulombMetre is one debye, 1e-21/c C·m.
	DebyeCoulombMetre = 1e-21 / SpeedOfLightMPerS
	// AtomicDipoleCoulombMetre is one e·a0 in C·m.
	AtomicDipoleCoulombMetre = ElementaryChargeCoulomb * BohrAngstrom * 1e-10
	// DebyePerAU converts a dipole in e·a0 to debye (≈2.541746).
	DebyePerAU = AtomicDipoleCoulombMetre / DebyeCoulombMetre
	// BuckinghamPerAU converts a quadrupole in e·a0² to D·Å (buckingham).
	BuckinghamPerAU = DebyePerAU * BohrAngstrom
	// KJPerMolPerHartree converts hartree to kJ/mol.
	KJPerMolPerHartree = HartreeJoule * AvogadroPerMol / 1000
	// KcalPerMolPerHartree converts hartree to kcal/mol.
	KcalPerMolPerHartree = KJPerMolPerHartree / CalorieJoule
)
