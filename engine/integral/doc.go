// Package integral computes moltrail's Gaussian integrals: the Boys
// function, one-electron integrals (overlap, kinetic energy, nuclear
// attraction to point charges, dipole and second-moment integrals about any
// origin) and electron-repulsion integrals up to g functions, with the
// contraction of the latter into Coulomb (J) and exchange (K) matrices;
// and the integrals of density fitting: three-centre (μν|P) and two-centre
// (P|Q) Coulomb integrals over an auxiliary basis (ThreeCentre), the
// inverted metric (FitMetric) and fitted J and K (FittedJK).
//
// Using the three-centre integrals elsewhere (e.g. fitted correlation
// energies): NewThreeCentre(eri, auxBasis, ...) over an ERI engine of the
// orbital basis; Shell(i, j, p, out) gives a raw block (ij|p), Metric()
// the matrix (P|Q), and FactorMetric(Metric(), cutoff) its inversion, whose
// Matrix() is M: the fitted factors are B^Q_μν = Σ_P M_QP (P|μν), with
// MᵀM = (P|Q)⁻¹ on the kept auxiliary space.
//
// Algorithm: McMurchie–Davidson (L. E. McMurchie and E. R. Davidson,
// J. Comput. Phys. 26, 218 (1978)). A product of two Gaussians is expanded
// in Hermite Gaussians with coefficients E^{ab}_{tuv}; one-electron
// integrals and ERIs then follow from the Hermite Coulomb integrals
// R_tuv built from the Boys function. Shell pairs are prepared once
// (Gaussian-product exponent p, centre P, prefactor, and the Hermite
// coefficients already transformed to the final normalised Cartesian or
// spherical functions of each shell), so a quartet is two small matrix
// contractions around R per primitive quartet.
//
// Shells on one centre with the same l and exponents (the general
// contractions of correlation-consistent sets, e.g. 1s and 2s) are handled
// together, so their primitive integrals are made once.
//
// Screening: primitive pairs with negligible prefactor (PrimitiveThreshold)
// and primitive quartets below PrimitiveQuartetThreshold are dropped;
// shell quartets with Q_ij·Q_kl below the Schwarz threshold
// (DefaultSchwarzThreshold unless set) are skipped; J/K builds use the
// 8-fold permutational symmetry of (ij|kl) and skip quartets whose Schwarz
// bound times the largest density element they meet (for J alone: the
// Coulomb elements) is below the threshold. The unique screened integrals
// are stored, row by row either whole or as their non-zero values with
// positions (whichever is smaller; at most 8 bytes per integral and 2 per
// row, Stats.StoreBoundBytes), when they fit the memory budget; otherwise
// each build recomputes them (direct mode). Both modes skip the same
// quartets and contract the same values in the same order: a build gives
// the same bits in core and direct, so the memory budget never changes a
// number.
//
// Determinism: a J/K build is split into a fixed number of work units, each
// with its own accumulators, summed in a fixed order, so the result has the
// same bits whatever the number of threads.
//
// Function order and normalisation are those of package basis: each
// function is normalised; spherical shells (l ≥ 2) are real solid
// harmonics m = −l..l (basis.CartToSpherical). Everything is in atomic
// units, positions in bohr.
package integral
