// Package scf is moltrail's self-consistent-field driver: restricted,
// unrestricted and restricted open-shell Hartree–Fock (RHF, UHF, ROHF) and
// Kohn–Sham (RKS, UKS, through the XC interface) on the integrals of
// engine/integral.
//
// Orthogonalisation. The overlap matrix S is diagonalised; when every
// eigenvalue is at least 1e-7 the symmetric (Löwdin) orthogonaliser
// X = S^{-1/2} is used, otherwise canonical orthogonalisation
// X = U s^{-1/2} over the eigenvectors with s ≥ 1e-7, and the combinations
// with s < 1e-7 are removed (Result.DroppedFunctions records how many; the
// orbitals then number NBasis − DroppedFunctions).
//
// Fock matrices and energies (per spin σ, densities Dα, Dβ, Dt = Dα + Dβ,
// a = fraction of exact exchange: 1 for HF, XC.ExactExchange() for KS):
//
//	Fσ = H + J[Dt] − a·K[Dσ] + Vxc,σ
//	E  = tr(Dt H) + ½ tr(Dt J[Dt]) − ½ a Σσ tr(Dσ K[Dσ]) + Exc + Vnn
//
// OneElectron is tr(Dt H) (H includes Options.Perturbation), TwoElectron
// is the Coulomb plus scaled exact-exchange part, XC is Exc, and
// NuclearRepulsion is Vnn; Energy is their sum.
//
// ROHF. Both spin Fock matrices are built from the ROHF densities and
// combined, in the basis of the current orbitals (closed c, open o,
// virtual v), into one effective operator whose diagonal blocks are the
// spin average Fc = (Fα + Fβ)/2, whose c–o block is Fβ, o–v block Fα and
// c–v block Fc. Its off-diagonal blocks vanish exactly at the ROHF
// stationary point, so they are the orbital gradient; its eigenvalues are
// the ROHF orbital energies reported. The choice of diagonal blocks is a
// canonicalisation (it fixes the orbitals within each space, not the
// energy); all three equal to Fc is the one usually attributed to Guest and
// Saunders, Mol. Phys. 28, 819 (1974) (from memory).
//
// Guesses. "core" diagonalises H. "sad" (the default) superposes atomic
// densities: for each distinct element of the molecule a spherically
// averaged, spin-restricted atomic SCF of the neutral atom is run in the
// molecule's own basis functions on that atom (same integrals, a one-atom
// basis), with fractional occupation by the atom's ground-state
// configuration: the orbitals of a spherical atom come in degenerate sets
// of 2l+1, each l's electrons (Madelung order; Cr 3d⁵4s¹, Cu 3d¹⁰4s¹) fill
// that l's sets in order of energy, and a partly filled set shares its
// electrons equally, which keeps the atomic density spherical (when the
// pattern is not found, the orbitals are filled by energy alone). The atomic
// densities form a block-diagonal molecular density, scaled to the
// molecule's electron count (for UHF/ROHF: Dα and Dβ are this density
// scaled to Nα and Nβ electrons). The first iteration builds the Fock
// matrix from that density; its diagonalisation gives the first orbitals.
//
// Iterations. Iteration k builds F from the density Dk, the energy Ek and
// the orbital gradient (largest element of X†(F D S − S D F)X, over both
// spins; for ROHF the largest off-diagonal-block element of the effective
// operator), then extrapolates F by Pulay's DIIS (error vectors
// X†(FDS − SDF)X; a bounded subspace of Options.DIISSize; the oldest
// vectors are dropped while the DIIS equations are ill-conditioned),
// applies an optional level shift to the virtual (and half of it to the
// open-shell) orbitals and diagonalises to get Dk+1. The run has converged
// when |Ek − Ek−1|, the RMS change Dk − Dk−1 (over both spin densities, in
// the orthonormal basis: X†S D S X, which stays well conditioned when the
// AO basis is nearly dependent) and
// the orbital gradient are all below their thresholds; for the first
// iteration ΔE and the density change are measured from zero. The final
// orbitals are eigenvectors of the last (unextrapolated, unshifted) Fock
// matrix, and Da, Db are built from them; Energy is Ek.
//
// J and K are built from the density change since the previous build,
// with a full build every few iterations, whether the integrals are held
// in memory or recomputed at every build (the two give the same bits).
// A J/K builder given in Options.JK (density-fitted integrals) is asked for
// the full density at every build.
//
// Non-convergence within MaxIter is a result (Converged false, with the
// history), not an error. All reductions run in a fixed order, so the same
// input gives the same bits whatever the thread count.
package scf

import (
	"fmt"
	"io"
	"math"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/basis"
	"moltrail/engine/integral"
	"moltrail/engine/molecule"
)

// XC is what a Kohn–Sham functional provides to the driver (implemented by engine/dft).
type XC interface {
	// Compute returns the XC energy and the alpha and beta XC potential matrices (AO basis) for the
	// alpha and beta densities (restricted: Da == Db, each half the total density).
	Compute(Da, Db *mat.SymDense) (excHartree float64, Va, Vb *mat.SymDense, err error)
	ExactExchange() float64 // fraction of exact (HF) exchange, 0 for pure functionals
}

// Options are the settings of one SCF run. Zero values take the defaults
// listed beside each field.
type Options struct {
	// Reference is "rhf", "uhf", "rohf", "rks" or "uks".
	Reference string
	// Convergence when all three are met (defaults 1e-10 Eh, 1e-8, 1e-7).
	EnergyTolHartree, DensityTol, GradientTol float64
	// MaxIter is the iteration limit (default 150).
	MaxIter int
	// Guess is "sad" (default) or "core".
	Guess string
	// DIISSize bounds the DIIS subspace (default 8; 1 means no extrapolation).
	DIISSize int
	// SchwarzThreshold for the ERI engine (default 1e-12); unused when ERI is given.
	SchwarzThreshold float64
	// LevelShiftHartree raises the virtual orbitals during the iterations (0 = none).
	LevelShiftHartree float64
	// XC is required for rks/uks.
	XC XC
	// GuessMixing (radians, uhf/uks only) rotates the alpha HOMO and LUMO of
	// the first orbitals into each other, so that a closed-shell guess can
	// relax to a spin-broken unrestricted solution (0 = none). It can change
	// the result and belongs to the job's input.
	GuessMixing float64
	// Perturbation is an optional one-electron operator added to the core
	// Hamiltonian (e.g. an electric field −F·μ).
	Perturbation *mat.SymDense
	// Threads for the ERI engine (0 = all cores); unused when ERI is given.
	Threads int
	// Progress receives one line per iteration (nil = silent).
	Progress io.Writer
	// ERI reuses an existing integral engine for this basis (finite-field runs).
	ERI *integral.ERI
	// MemoryBudgetBytes for in-core integrals (0 = the integral engine's default).
	MemoryBudgetBytes int64
	// JK, when set, gives the Coulomb and exchange matrices in place of the
	// exact integrals (density fitting, engine/integral.FittedJK); the ERI
	// engine then only lends its shell data to those who ask for it.
	JK JKBuilder
}

// JKBuilder is what the driver needs from the two-electron integrals:
// for densities D[i], J[i] = J[D[i]] and, when wantK, K[i] = K[D[i]],
// J_μν = Σ (μν|λσ) D_λσ and K_μν = Σ (μλ|νσ) D_λσ.
type JKBuilder interface {
	JK(D []*mat.SymDense, wantK bool) (J, K []*mat.SymDense)
}

// Defaults of Options.
const (
	DefaultEnergyTolHartree = 1e-10
	DefaultDensityTol       = 1e-8
	DefaultGradientTol      = 1e-7
	DefaultMaxIter          = 150
	DefaultDIISSize         = 8
	DefaultSchwarzThreshold = 1e-12
	// LinearDependenceTol: overlap eigenvalues below this are removed.
	LinearDependenceTol = 1e-7
)

// Iteration is one line of the SCF history.
type Iteration struct {
	Iter                                        int
	Energy, DeltaE, DensityRMS, OrbitalGradient float64
	DIISVectors                                 int
}

// Result is the outcome of an SCF run (converged or not).
type Result struct {
	Converged bool
	// Energy = OneElectron + TwoElectron + XC + NuclearRepulsion (hartree).
	Energy, OneElectron, TwoElectron, XC, NuclearRepulsion float64
	NAlpha, NBeta                                          int
	// Ca, Cb are NBasis × NMO; Cb == Ca for rhf/rohf/rks.
	Ca, Cb     *mat.Dense
	Ea, Eb     []float64
	OccA, OccB []float64
	// Da, Db are the alpha and beta AO densities.
	Da, Db *mat.SymDense
	// Fa, Fb are the final Fock matrices (AO basis; for ROHF the spin Fock matrices).
	Fa, Fb *mat.SymDense
	// S, H: overlap and core Hamiltonian (incl. Perturbation).
	S, H *mat.SymDense
	// S2 is ⟨S²⟩ (exact value for rhf/rohf/rks).
	S2         float64
	Iterations []Iteration
	ERI        *integral.ERI
	// Reference is the normalised reference; Guess the guess used.
	Reference, Guess string
	// DroppedFunctions is the number of near-linearly-dependent combinations removed.
	DroppedFunctions int
	// NMO is the number of orbitals (NBasis − DroppedFunctions).
	NMO int
}

// Run performs the SCF calculation of mol in the basis mb.
func Run(mol *molecule.Molecule, mb *basis.Molecular, opt Options) (*Result, error) {
	if mol == nil || mb == nil {
		return nil, fmt.Errorf("scf: molecule and basis are required")
	}
	m := mol.Clone()
	if err := m.Check(); err != nil {
		return nil, fmt.Errorf("scf: %v", err)
	}
	if mb.NBasis == 0 {
		return nil, fmt.Errorf("scf: the basis has no functions")
	}
	if len(mb.FuncAtom) != mb.NBasis {
		return nil, fmt.Errorf("scf: basis function count %d does not match its atom map (%d)", mb.NBasis, len(mb.FuncAtom))
	}
	for _, a := range mb.FuncAtom {
		if a < 0 || a >= len(m.Atoms) {
			return nil, fmt.Errorf("scf: the basis was placed on a molecule with more atoms (function on atom %d, the molecule has %d)", a+1, len(m.Atoms))
		}
	}
	opt, err := normalise(opt, m)
	if err != nil {
		return nil, err
	}
	if opt.Perturbation != nil {
		if r, _ := opt.Perturbation.Dims(); r != mb.NBasis {
			return nil, fmt.Errorf("scf: perturbation operator is %d×%d but the basis has %d functions", r, r, mb.NBasis)
		}
	}
	sys, err := newSystem(m, mb, opt.Threads, opt.SchwarzThreshold, opt.MemoryBudgetBytes, opt.ERI, opt.JK)
	if err != nil {
		return nil, err
	}
	if opt.Perturbation != nil {
		sys.h.AddSym(sys.h, opt.Perturbation)
	}
	na, nb := m.AlphaBeta()
	sys.nalpha, sys.nbeta = na, nb
	var guess [2]*mat.SymDense
	if opt.Guess == "sad" {
		d, err := sadDensity(m, mb, opt.Threads, opt.SchwarzThreshold)
		if err != nil {
			return nil, err
		}
		guess = splitGuess(d, float64(m.NuclearCharge()), na, nb)
	}
	res, err := solve(sys, opt, guess)
	if err != nil {
		return nil, err
	}
	res.ERI = sys.eri
	return res, nil
}

// normalise fills defaults and checks the options against the molecule.
func normalise(opt Options, m *molecule.Molecule) (Options, error) {
	switch opt.Reference {
	case "rhf", "uhf", "rohf", "rks", "uks":
	case "":
		return opt, fmt.Errorf("scf: no reference given (rhf, uhf, rohf, rks or uks)")
	default:
		return opt, fmt.Errorf("scf: reference %q is not one of rhf, uhf, rohf, rks, uks", opt.Reference)
	}
	if (opt.Reference == "rks" || opt.Reference == "uks") && opt.XC == nil {
		return opt, fmt.Errorf("scf: reference %s needs an exchange–correlation functional", opt.Reference)
	}
	if (opt.Reference == "rhf" || opt.Reference == "rks") && m.Multiplicity != 1 {
		return opt, fmt.Errorf("scf: reference %s needs a closed shell, but %s has multiplicity %d (use uhf/rohf/uks)", opt.Reference, m.Formula(), m.Multiplicity)
	}
	if opt.EnergyTolHartree == 0 {
		opt.EnergyTolHartree = DefaultEnergyTolHartree
	}
	if opt.DensityTol == 0 {
		opt.DensityTol = DefaultDensityTol
	}
	if opt.GradientTol == 0 {
		opt.GradientTol = DefaultGradientTol
	}
	if opt.MaxIter == 0 {
		opt.MaxIter = DefaultMaxIter
	}
	if opt.DIISSize == 0 {
		opt.DIISSize = DefaultDIISSize
	}
	if opt.SchwarzThreshold == 0 {
		opt.SchwarzThreshold = DefaultSchwarzThreshold
	}
	if opt.Guess == "" {
		opt.Guess = "sad"
	}
	switch {
	case opt.Guess != "sad" && opt.Guess != "core":
		return opt, fmt.Errorf("scf: guess %q is not sad or core", opt.Guess)
	case !(opt.EnergyTolHartree > 0) || !(opt.DensityTol > 0) || !(opt.GradientTol > 0):
		return opt, fmt.Errorf("scf: convergence thresholds must be positive (energy %g, density %g, gradient %g)", opt.EnergyTolHartree, opt.DensityTol, opt.GradientTol)
	case opt.MaxIter < 1:
		return opt, fmt.Errorf("scf: max iterations %d must be at least 1", opt.MaxIter)
	case opt.DIISSize < 1:
		return opt, fmt.Errorf("scf: DIIS size %d must be at least 1", opt.DIISSize)
	case opt.SchwarzThreshold < 0 || math.IsNaN(opt.SchwarzThreshold):
		return opt, fmt.Errorf("scf: Schwarz threshold %g must not be negative", opt.SchwarzThreshold)
	case math.IsNaN(opt.GuessMixing) || math.IsInf(opt.GuessMixing, 0):
		return opt, fmt.Errorf("scf: guess mixing angle %g is not finite", opt.GuessMixing)
	case opt.LevelShiftHartree < 0 || math.IsNaN(opt.LevelShiftHartree) || math.IsInf(opt.LevelShiftHartree, 0):
		return opt, fmt.Errorf("scf: level shift %g Eh must be a finite non-negative number", opt.LevelShiftHartree)
	}
	return opt, nil
}

// splitGuess scales a neutral-atom superposition density (nuclear charge
// electrons) to Nα and Nβ electrons.
func splitGuess(d *mat.SymDense, zsum float64, na, nb int) [2]*mat.SymDense {
	n := d.SymmetricDim()
	da := mat.NewSymDense(n, nil)
	da.ScaleSym(float64(na)/zsum, d)
	if na == nb {
		return [2]*mat.SymDense{da, da}
	}
	db := mat.NewSymDense(n, nil)
	db.ScaleSym(float64(nb)/zsum, d)
	return [2]*mat.SymDense{da, db}
}
