// Package mp2 computes second-order Møller–Plesset correlation energies on
// a converged Hartree–Fock reference: RMP2 on RHF, UMP2 on UHF, with the
// same-spin and opposite-spin components kept apart (so SCS-MP2 and other
// spin scalings are a recombination), an optional frozen chemical core,
// and the orbital-relaxed MP2 one-particle density (analytic, Z-vector)
// from which relaxed dipoles and quadrupoles follow.
//
// Energies (real canonical orbitals, i j occupied active, a b virtual,
// D = ε_i + ε_j − ε_a − ε_b, chemists' notation (ia|jb)):
//
//	E_os = Σ_{iα jβ aα bβ} (ia|jb)² / D
//	E_ss = ¼ Σ_σ Σ_{ijab∈σ} [(ia|jb) − (ib|ja)]² / D
//	E(MP2) = E_ss + E_os;  E(SCS-MP2) = (1/3) E_ss + (6/5) E_os
//	(S. Grimme, J. Chem. Phys. 118, 9095 (2003)).
//
// Transformation. For a batch of active occupied orbitals j (sized to the
// memory budget), the half-transformed (j p|λσ) are formed (p over the
// virtual orbitals for energies, over all orbitals for the relaxed
// density; λ ≥ σ packed); then, orbital j by orbital j, (j p|k b) and the
// amplitudes. The AO integrals come from the SCF's engine by blocks of
// shell-group pairs (stored.go: slabs of ket pairs, 8-fold symmetry,
// quarter transformations as dense matrix products): read from its
// in-core store when it holds them, otherwise computed (direct). Cost
// O(o N⁴) for the first two quarters, O(o² N³) after. Memory: the batch
// buffer (≥ one j: N·N(N+1)/2 doubles, 62 MiB at N = 250), a slab buffer
// of what the budget leaves (at least 16 MiB or one pair class; at most
// 128 MiB in-core, 512 MiB direct) and O(o v N) per worker, so MP2 stays
// within the budget plus 16 MiB and never holds the full AO or MO
// tensor: energies of 250 basis functions (whose integrals do not fit
// the engine's default in-core budget) fit in 2 GiB with the default
// budget. The same loop accumulates every piece of the relaxed density
// (relaxed.go), so the relaxed density needs no second integral pass; the
// Z-vector equations are then solved with one J/K build per iteration.
//
// Determinism: every quantity is either written by one worker only or
// summed over occupied orbitals in index order, so the result has the same
// bits whatever the number of threads.
package mp2

import (
	"fmt"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/basis"
	"moltrail/engine/molecule"
	"moltrail/engine/scf"
)

// Spin-component scaling of SCS-MP2 (Grimme 2003).
const (
	SCSSameSpin     = 1.0 / 3.0
	SCSOppositeSpin = 6.0 / 5.0
)

// Defaults of Options.
const (
	DefaultZVectorTol     = 1e-9
	DefaultZVectorMaxIter = 100
)

// Options control an MP2 calculation.
type Options struct {
	// FrozenCore freezes the chemical core (molecule.CoreOrbitals orbitals per spin).
	FrozenCore bool
	// Relaxed computes the orbital-relaxed density of the energy
	// E(SCF) + SameSpinScale·E_ss + OppositeSpinScale·E_os.
	Relaxed bool
	// SameSpinScale and OppositeSpinScale select the energy the relaxed
	// density belongs to; both zero means MP2 (1, 1). Use SCSSameSpin,
	// SCSOppositeSpin for SCS-MP2. The energies in Result are unscaled.
	SameSpinScale, OppositeSpinScale float64
	// ZVectorTol is the largest residual element accepted in the Z-vector
	// equations (default 1e-9); ZVectorMaxIter bounds the iterations (default 100).
	ZVectorTol     float64
	ZVectorMaxIter int
	// Threads (0 = all cores) and the memory budget of the half-transformed
	// integrals (0 = DefaultMemoryBytes) change speed, never numbers.
	Threads           int
	MemoryBudgetBytes int64
}

// Result is the outcome of an MP2 calculation.
type Result struct {
	// Reference is "rhf" or "uhf".
	Reference string
	// FrozenOrbitals is the number of frozen orbitals per spin.
	FrozenOrbitals int
	// SCFEnergyHartree is the reference energy.
	SCFEnergyHartree float64
	// Unscaled same-spin (αα + ββ) and opposite-spin (αβ) components.
	SameSpinHartree, OppositeSpinHartree float64
	// CorrelationHartree = SameSpin + OppositeSpin.
	CorrelationHartree float64
	// RelaxedDa, RelaxedDb are the orbital-relaxed densities (SCF density
	// plus the correction, AO basis) of the energy selected by the scales;
	// nil unless Options.Relaxed.
	RelaxedDa, RelaxedDb *mat.SymDense
	// ZVectorIterations and ZVectorResidual describe the Z-vector solution.
	ZVectorIterations int
	ZVectorResidual   float64
	// IntegralPasses is the number of passes over the AO integrals.
	IntegralPasses int
}

// ScaledCorrelationHartree is sameScale·E_ss + oppositeScale·E_os.
func (r *Result) ScaledCorrelationHartree(sameScale, oppositeScale float64) float64 {
	return sameScale*r.SameSpinHartree + oppositeScale*r.OppositeSpinHartree
}

// SCSCorrelationHartree is the SCS-MP2 correlation energy.
func (r *Result) SCSCorrelationHartree() float64 {
	return r.ScaledCorrelationHartree(SCSSameSpin, SCSOppositeSpin)
}

// Run computes MP2 on the converged RHF or UHF reference ref of mol in the
// basis mb (the basis ref was computed in; its ERI engine is reused).
func Run(mol *molecule.Molecule, mb *basis.Molecular, ref *scf.Result, opt Options) (*Result, error) {
	p, err := newProblem(mol, mb, ref, opt)
	if err != nil {
		return nil, err
	}
	res, err := p.solve(opt)
	if err != nil {
		return nil, err
	}
	res.Reference = ref.Reference
	res.SCFEnergyHartree = ref.Energy
	if res.RelaxedDa != nil {
		res.RelaxedDa.AddSym(res.RelaxedDa, ref.Da)
		res.RelaxedDb.AddSym(res.RelaxedDb, ref.Db)
	}
	return res, nil
}

// newProblem checks the reference and sets up the calculation.
func newProblem(mol *molecule.Molecule, mb *basis.Molecular, ref *scf.Result, opt Options) (*problem, error) {
	if mol == nil || mb == nil || ref == nil {
		return nil, fmt.Errorf("mp2: molecule, basis and SCF reference are required")
	}
	if ref.Reference != "rhf" && ref.Reference != "uhf" {
		return nil, fmt.Errorf("mp2: reference %q is not supported (MP2 runs on rhf or uhf)", ref.Reference)
	}
	if !ref.Converged {
		return nil, fmt.Errorf("mp2: the %s reference is not converged", ref.Reference)
	}
	if ref.ERI == nil {
		return nil, fmt.Errorf("mp2: the SCF result carries no integral engine")
	}
	lay := layout{n: mb.NBasis}
	for i := range mb.Shells {
		lay.off = append(lay.off, mb.Offsets[i])
		lay.size = append(lay.size, mb.Shells[i].NFunc())
	}
	frozen := 0
	if opt.FrozenCore {
		frozen = mol.CoreOrbitals()
		if frozen > ref.NBeta {
			return nil, fmt.Errorf("mp2: the chemical core of %s has %d orbitals but there are only %d beta electrons; run without frozen core", mol.Formula(), frozen, ref.NBeta)
		}
	}
	p := &problem{
		lay:        lay,
		eri:        ref.ERI,
		restricted: ref.Reference == "rhf",
		frozen:     frozen,
		relaxed:    opt.Relaxed,
		threads:    opt.Threads,
		memory:     opt.MemoryBudgetBytes,
		schwarz:    ref.ERI.Threshold(),
		scale:      [2]float64{opt.SameSpinScale, opt.OppositeSpinScale},
	}
	if opt.SameSpinScale == 0 && opt.OppositeSpinScale == 0 {
		p.scale = [2]float64{1, 1}
	}
	p.spin[0] = spinRef{C: ref.Ca, eps: ref.Ea, nocc: ref.NAlpha}
	p.spin[1] = spinRef{C: ref.Cb, eps: ref.Eb, nocc: ref.NBeta}
	if p.restricted {
		p.spin[1] = p.spin[0]
	}
	return p, nil
}

// solve runs the problem; relaxed densities in the result are the
// corrections only (Run adds the SCF densities).
func (p *problem) solve(opt Options) (*Result, error) {
	if err := p.check(); err != nil {
		return nil, err
	}
	acc, passes, err := p.run()
	if err != nil {
		return nil, err
	}
	r := &Result{FrozenOrbitals: p.frozen, IntegralPasses: passes}
	if p.restricted {
		r.SameSpinHartree = 2 * acc[0].ess
		r.OppositeSpinHartree = acc[0].eos
	} else {
		r.SameSpinHartree = acc[0].ess + acc[1].ess
		r.OppositeSpinHartree = acc[0].eos
	}
	r.CorrelationHartree = r.SameSpinHartree + r.OppositeSpinHartree
	if !p.relaxed {
		return r, nil
	}
	tol, maxIter := opt.ZVectorTol, opt.ZVectorMaxIter
	if tol <= 0 {
		tol = DefaultZVectorTol
	}
	if maxIter <= 0 {
		maxIter = DefaultZVectorMaxIter
	}
	z, err := p.relaxedDensity(acc, tol, maxIter)
	if err != nil {
		return nil, err
	}
	r.ZVectorIterations, r.ZVectorResidual = z.iterations, z.residual
	// copies, so that adding the SCF densities never aliases (restricted: dP[1] == dP[0])
	r.RelaxedDa = mat.NewSymDense(p.lay.n, nil)
	r.RelaxedDa.CopySym(z.dP[0])
	r.RelaxedDb = mat.NewSymDense(p.lay.n, nil)
	r.RelaxedDb.CopySym(z.dP[1])
	return r, nil
}
