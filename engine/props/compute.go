package props

import (
	"gonum.org/v1/gonum/mat"

	"moltrail/engine/basis"
	"moltrail/engine/integral"
	"moltrail/engine/molecule"
)

// Result collects the one-electron properties of one density.
type Result struct {
	Moments
	Mulliken, Lowdin Populations
}

// Compute returns the multipoles about origin (bohr) and the Mulliken and
// Löwdin populations of the alpha and beta densities Da, Db in the basis
// mb with overlap S.
func Compute(mol *molecule.Molecule, mb *basis.Molecular, S, Da, Db *mat.SymDense, origin [3]float64) (*Result, error) {
	dip, second := integral.Multipole(mb, origin)
	D := mat.NewSymDense(mb.NBasis, nil)
	D.AddSym(Da, Db)
	mo, err := Multipoles(mol, dip, second, D, origin)
	if err != nil {
		return nil, err
	}
	r := &Result{Moments: mo}
	if r.Mulliken, err = Mulliken(mol, mb.FuncAtom, S, Da, Db); err != nil {
		return nil, err
	}
	if r.Lowdin, err = Lowdin(mol, mb.FuncAtom, S, Da, Db); err != nil {
		return nil, err
	}
	return r, nil
}

// Charges returns the Mulliken and Löwdin atomic charges of the total
// density D (no spin populations).
func Charges(mol *molecule.Molecule, funcAtom []int, S, D *mat.SymDense) (mulliken, lowdin []float64, err error) {
	half := mat.NewSymDense(D.SymmetricDim(), nil)
	half.ScaleSym(0.5, D)
	m, err := Mulliken(mol, funcAtom, S, half, half)
	if err != nil {
		return nil, nil, err
	}
	l, err := Lowdin(mol, funcAtom, S, half, half)
	if err != nil {
		return nil, nil, err
	}
	return m.Charges, l.Charges, nil
}
