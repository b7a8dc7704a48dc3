package props

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/molecule"
)

// Populations are atomic charges (e) from one density partitioning.
type Populations struct {
	// Charges[A] = Z_A − (electrons assigned to atom A).
	Charges []float64
	// Spin[A] is the alpha − beta population of atom A (nil for a closed shell).
	Spin []float64
}

// Mulliken partitions tr(D S) by basis-function atom: the population of
// atom A is Σ_{μ∈A} (D S)_μμ. funcAtom[μ] is the atom carrying function μ.
func Mulliken(mol *molecule.Molecule, funcAtom []int, S, Da, Db *mat.SymDense) (Populations, error) {
	if err := checkShapes(mol, funcAtom, S, Da, Db); err != nil {
		return Populations{}, err
	}
	var ps [2][]float64
	for s, d := range []*mat.SymDense{Da, Db} {
		var ds mat.Dense
		ds.Mul(d, S)
		ps[s] = atomSums(len(mol.Atoms), funcAtom, &ds)
	}
	return assemble(mol, ps, Da, Db), nil
}

// Lowdin partitions tr(S^½ D S^½) by basis-function atom.
func Lowdin(mol *molecule.Molecule, funcAtom []int, S, Da, Db *mat.SymDense) (Populations, error) {
	if err := checkShapes(mol, funcAtom, S, Da, Db); err != nil {
		return Populations{}, err
	}
	half, err := sqrtSym(S)
	if err != nil {
		return Populations{}, err
	}
	var ps [2][]float64
	for s, d := range []*mat.SymDense{Da, Db} {
		var t, u mat.Dense
		t.Mul(half, d)
		u.Mul(&t, half)
		ps[s] = atomSums(len(mol.Atoms), funcAtom, &u)
	}
	return assemble(mol, ps, Da, Db), nil
}

func checkShapes(mol *molecule.Molecule, funcAtom []int, S, Da, Db *mat.SymDense) error {
	n := S.SymmetricDim()
	if len(funcAtom) != n || Da.SymmetricDim() != n || Db.SymmetricDim() != n {
		return fmt.Errorf("props: population analysis needs overlap, densities and function map of one size (got %d, %d, %d, %d)", n, Da.SymmetricDim(), Db.SymmetricDim(), len(funcAtom))
	}
	for mu, a := range funcAtom {
		if a < 0 || a >= len(mol.Atoms) {
			return fmt.Errorf("props: basis function %d sits on atom %d, but the molecule has %d atoms", mu, a, len(mol.Atoms))
		}
	}
	return nil
}

func atomSums(natom int, funcAtom []int, m *mat.Dense) []float64 {
	out := make([]float64, natom)
	for mu, a := range funcAtom {
		out[a] += m.At(mu, mu)
	}
	return out
}

func assemble(mol *molecule.Molecule, ps [2][]float64, Da, Db *mat.SymDense) Populations {
	p := Populations{Charges: make([]float64, len(mol.Atoms))}
	open := !mat.Equal(Da, Db)
	if open {
		p.Spin = make([]float64, len(mol.Atoms))
	}
	for a, at := range mol.Atoms {
		p.Charges[a] = float64(at.Z) - ps[0][a] - ps[1][a]
		if open {
			p.Spin[a] = ps[0][a] - ps[1][a]
		}
	}
	return p
}

// sqrtSym is S^½ of a positive definite symmetric matrix.
func sqrtSym(s *mat.SymDense) (*mat.Dense, error) {
	var eig mat.EigenSym
	if !eig.Factorize(s, true) {
		return nil, fmt.Errorf("props: the overlap matrix could not be diagonalised")
	}
	vals := eig.Values(nil)
	var v mat.Dense
	eig.VectorsTo(&v)
	n := len(vals)
	w := mat.NewDense(n, n, nil)
	for j, l := range vals {
		if l < 0 {
			return nil, fmt.Errorf("props: the overlap matrix has a negative eigenvalue %g", l)
		}
		r := math.Sqrt(l)
		for i := 0; i < n; i++ {
			w.Set(i, j, v.At(i, j)*r)
		}
	}
	var out mat.Dense
	out.Mul(w, v.T())
	return &out, nil
}

// Frontier summarises the orbital energies around the Fermi level.
type Frontier struct {
	HOMOHartree float64
	// LUMOHartree and GapHartree are meaningful only when HasLUMO.
	LUMOHartree, GapHartree float64
	HasLUMO                 bool
}

// FrontierOrbitals returns HOMO, LUMO and gap of ascending orbital energies
// with nocc occupied orbitals. For an open shell pass both spins: the HOMO
// is the highest occupied level of either spin and the LUMO the lowest
// empty one.
func FrontierOrbitals(eps [][]float64, nocc []int) (Frontier, error) {
	if len(eps) != len(nocc) || len(eps) == 0 {
		return Frontier{}, fmt.Errorf("props: frontier orbitals need one occupation count per orbital-energy list")
	}
	f := Frontier{HOMOHartree: math.Inf(-1), LUMOHartree: math.Inf(1)}
	any := false
	for s, e := range eps {
		n := nocc[s]
		if n < 0 || n > len(e) {
			return Frontier{}, fmt.Errorf("props: %d occupied orbitals of %d in spin set %d", n, len(e), s)
		}
		if n > 0 {
			any = true
			f.HOMOHartree = math.Max(f.HOMOHartree, e[n-1])
		}
		if n < len(e) {
			f.HasLUMO = true
			f.LUMOHartree = math.Min(f.LUMOHartree, e[n])
		}
	}
	if !any {
		return Frontier{}, fmt.Errorf("props: no occupied orbitals")
	}
	if f.HasLUMO {
		f.GapHartree = f.LUMOHartree - f.HOMOHartree
	} else {
		f.LUMOHartree = 0
	}
	return f, nil
}
