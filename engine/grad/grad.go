// Package grad computes analytic nuclear gradients of SCF energies (RHF,
// UHF, ROHF, RKS, UKS) from a converged engine/scf result.
//
// For an SCF energy E(C) made stationary under orbital rotations subject
// to Cᵀ S C = 1, the derivative with respect to a nuclear coordinate x is
//
//	dE/dx = dVnn/dx + Σ_μν D_μν (T + V)^x_μν + Σ_μνλσ (μν|λσ)^x Γ_μνλσ
//	        + E_xc^x − Σ_μν W_μν S^x_μν,
//
// D = Dα + Dβ, Γ_μνλσ = ½ D_μν D_λσ − ½ a Σσ Dσ_μλ Dσ_νσ (a the fraction of
// exact exchange), V^x including the derivative of the attraction operator
// itself (Hellmann–Feynman term), and W the energy-weighted density made
// from the orbital Lagrangian: with nσ_j the occupations,
//
//	λσ_ij = (Cσᵀ Fσ Cσ)_ij nσ_j  over orbitals occupied in spin σ,
//	W = Σσ Cσ,occ sym(λσ) Cσ,occᵀ.
//
// For RHF and UHF λ is diagonal (orbital energies times occupations); for
// ROHF it has the closed–open blocks of the α Fock matrix, and the formula
// holds because the ROHF stationarity conditions make the β Fock matrix
// vanish between closed and open orbitals. The expression assumes a fully
// converged SCF: the residual orbital gradient enters the result to first
// order, so tight convergence is needed for accurate gradients.
//
// Kohn–Sham: the exchange–correlation term comes from the XC object used
// in the SCF (Options.XC); engine/dft includes the derivatives of the grid
// partition weights and of the moving grid points, so it is the exact
// derivative of the quadrature on any grid.
//
// The gradient is not defined for runs with an external one-electron
// perturbation (finite fields): its derivative is not included.
//
// Units: hartree/bohr, 3·Natoms components ordered atom by atom (x, y, z).
package grad

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/basis"
	"moltrail/engine/integral"
	"moltrail/engine/molecule"
	"moltrail/engine/scf"
)

// XCGradient is what a Kohn–Sham functional provides for gradients: the
// derivative of E_xc with respect to the nuclear coordinates at fixed
// density matrices (restricted: Da == Db, each half the total density).
type XCGradient interface {
	NuclearGradient(Da, Db *mat.SymDense, natoms int) ([]float64, error)
	ExactExchange() float64
}

// Options control SCF.
type Options struct {
	// Threads for the two-electron part (0 = all cores).
	Threads int
	// SchwarzThreshold for the derivative integrals (0 = that of the SCF's
	// integral engine, or the integral package default).
	SchwarzThreshold float64
	// XC is required for rks/uks: the functional object of the SCF run.
	XC XCGradient
}

// Parts is the gradient split into its terms (each 3·Natoms, hartree/bohr).
type Parts struct {
	Nuclear, OneElectron, TwoElectron, XC, Overlap []float64
	Total                                          []float64
}

// SCF returns the analytic nuclear gradient (hartree/bohr) of the SCF
// energy of sr, which must be a converged result for mol in basis mb.
func SCF(mol *molecule.Molecule, mb *basis.Molecular, sr *scf.Result, opt Options) ([]float64, error) {
	p, err := SCFParts(mol, mb, sr, opt)
	if err != nil {
		return nil, err
	}
	return p.Total, nil
}

// SCFParts is SCF with the individual terms.
func SCFParts(mol *molecule.Molecule, mb *basis.Molecular, sr *scf.Result, opt Options) (*Parts, error) {
	if mol == nil || mb == nil || sr == nil {
		return nil, fmt.Errorf("grad: molecule, basis and SCF result are required")
	}
	if !sr.Converged {
		return nil, fmt.Errorf("grad: the SCF did not converge; its gradient is not defined")
	}
	n := mb.NBasis
	if sr.Da == nil || sr.Da.SymmetricDim() != n {
		return nil, fmt.Errorf("grad: the SCF result does not belong to this basis (%d functions)", n)
	}
	nat := len(mol.Atoms)
	for i, sh := range mb.Shells {
		if sh.Atom < 0 || sh.Atom >= nat || sh.Centre != mol.Atoms[sh.Atom].PosBohr {
			return nil, fmt.Errorf("grad: shell %d is not placed on atom %d of the molecule", i, sh.Atom+1)
		}
	}
	exx := 1.0
	switch sr.Reference {
	case "rhf", "uhf", "rohf":
	case "rks", "uks":
		if opt.XC == nil {
			return nil, fmt.Errorf("grad: reference %s needs the exchange–correlation functional of the SCF run", sr.Reference)
		}
		exx = opt.XC.ExactExchange()
	default:
		return nil, fmt.Errorf("grad: reference %q is not one of rhf, uhf, rohf, rks, uks", sr.Reference)
	}
	restricted := sr.Reference == "rhf" || sr.Reference == "rks"
	da, db := sr.Da, sr.Db
	if restricted {
		db = da
	}
	dt := mat.NewSymDense(n, nil)
	dt.AddSym(da, db)

	parts := &Parts{Nuclear: NuclearRepulsionGradient(mol)}
	W, err := energyWeighted(sr, n)
	if err != nil {
		return nil, err
	}
	charges := integral.MoleculeCharges(mol)
	chargeAtom := make([]int, nat)
	for i := range chargeAtom {
		chargeAtom[i] = i
	}
	one, err := integral.OneElectronGradient(mb, dt, nil, charges, chargeAtom, nat)
	if err != nil {
		return nil, fmt.Errorf("grad: %v", err)
	}
	parts.OneElectron = one
	ovl, err := integral.OneElectronGradient(mb, nil, W, nil, nil, nat)
	if err != nil {
		return nil, fmt.Errorf("grad: %v", err)
	}
	parts.Overlap = ovl
	gopt := integral.GradientOptions{SchwarzThreshold: opt.SchwarzThreshold, Threads: opt.Threads}
	if sr.ERI != nil && sr.ERI.NumShells() == len(mb.Shells) {
		gopt.Bounds = sr.ERI
	}
	two, err := integral.TwoElectronGradient(mb, da, db, 1, exx, nat, gopt)
	if err != nil {
		return nil, fmt.Errorf("grad: %v", err)
	}
	parts.TwoElectron = two
	parts.XC = make([]float64, 3*nat)
	if opt.XC != nil && (sr.Reference == "rks" || sr.Reference == "uks") {
		x, err := opt.XC.NuclearGradient(da, db, nat)
		if err != nil {
			return nil, fmt.Errorf("grad: exchange–correlation: %v", err)
		}
		parts.XC = x
	}
	parts.Total = make([]float64, 3*nat)
	for k := range parts.Total {
		parts.Total[k] = parts.Nuclear[k] + parts.OneElectron[k] + parts.TwoElectron[k] + parts.XC[k] + parts.Overlap[k]
		if math.IsNaN(parts.Total[k]) || math.IsInf(parts.Total[k], 0) {
			return nil, fmt.Errorf("grad: gradient component %d (atom %d) is not finite", k, k/3+1)
		}
	}
	return parts, nil
}

// NuclearRepulsionGradient is dVnn/dR = −Σ_B Z_A Z_B (R_A − R_B)/|R_A − R_B|³.
func NuclearRepulsionGradient(mol *molecule.Molecule) []float64 {
	nat := len(mol.Atoms)
	g := make([]float64, 3*nat)
	for a := 0; a < nat; a++ {
		for b := 0; b < nat; b++ {
			if a == b {
				continue
			}
			A, B := mol.Atoms[a], mol.Atoms[b]
			r := molecule.Dist(A.PosBohr, B.PosBohr)
			f := -float64(A.Z*B.Z) / (r * r * r)
			for d := 0; d < 3; d++ {
				g[3*a+d] += f * (A.PosBohr[d] - B.PosBohr[d])
			}
		}
	}
	return g
}

// energyWeighted builds W = Σσ Cσ,occ sym(λσ) Cσ,occᵀ with
// λσ_ij = (Cσᵀ Fσ Cσ)_ij nσ_j over the orbitals occupied in spin σ.
func energyWeighted(sr *scf.Result, n int) (*mat.SymDense, error) {
	w := mat.NewDense(n, n, nil)
	spins := []struct {
		c   *mat.Dense
		f   *mat.SymDense
		occ []float64
	}{{sr.Ca, sr.Fa, sr.OccA}, {sr.Cb, sr.Fb, sr.OccB}}
	for _, s := range spins {
		if s.c == nil || s.f == nil {
			return nil, fmt.Errorf("grad: the SCF result has no orbitals or Fock matrices")
		}
		r, m := s.c.Dims()
		if r != n || len(s.occ) != m {
			return nil, fmt.Errorf("grad: orbital matrix is %d×%d with %d occupations, the basis has %d functions", r, m, len(s.occ), n)
		}
		var idx []int
		for j, o := range s.occ {
			if o != 0 {
				idx = append(idx, j)
			}
		}
		k := len(idx)
		if k == 0 {
			continue
		}
		co := mat.NewDense(n, k, nil)
		for a, j := range idx {
			for mu := 0; mu < n; mu++ {
				co.Set(mu, a, s.c.At(mu, j))
			}
		}
		var fc, lam mat.Dense
		fc.Mul(s.f, co)
		lam.Mul(co.T(), &fc)
		sym := mat.NewDense(k, k, nil)
		for a := 0; a < k; a++ {
			for b := 0; b < k; b++ {
				sym.Set(a, b, 0.5*(lam.At(a, b)*s.occ[idx[b]]+lam.At(b, a)*s.occ[idx[a]]))
			}
		}
		var t, x mat.Dense
		t.Mul(co, sym)
		x.Mul(&t, co.T())
		w.Add(w, &x)
	}
	out := mat.NewSymDense(n, nil)
	for i := 0; i < n; i++ {
		for j := i; j < n; j++ {
			out.SetSym(i, j, 0.5*(w.At(i, j)+w.At(j, i)))
		}
	}
	return out, nil
}
