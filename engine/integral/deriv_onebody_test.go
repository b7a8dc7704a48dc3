package integral

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/basis"
	"moltrail/engine/molecule"
)

// derivTestMol is a distorted water molecule (bohr, no symmetry).
func derivTestMol() *molecule.Molecule {
	return &molecule.Molecule{Atoms: []molecule.Atom{
		molecule.MustAtom("O", 0.05, -0.1, 0.02),
		molecule.MustAtom("H", 1.45, 0.9, 0.1),
		molecule.MustAtom("H", -1.6, 1.0, -0.25),
	}, Multiplicity: 1}
}

func derivBasis(t testing.TB, name string, mol *molecule.Molecule, ang basis.Angular) *basis.Molecular {
	t.Helper()
	set, err := basis.Builtin(name)
	if err != nil {
		t.Fatal(err)
	}
	mb, err := basis.Build(set, mol, ang)
	if err != nil {
		t.Fatal(err)
	}
	return mb
}

func displaced(mol *molecule.Molecule, atom, dir int, h float64) *molecule.Molecule {
	m := mol.Clone()
	m.Atoms[atom].PosBohr[dir] += h
	return m
}

func randomSym(n int, seed uint64) *mat.SymDense {
	r := rand.New(rand.NewPCG(seed, 7))
	m := mat.NewSymDense(n, nil)
	for i := 0; i < n; i++ {
		for j := 0; j <= i; j++ {
			m.SetSym(i, j, r.Float64()-0.5)
		}
	}
	return m
}

// The derivative matrices equal central finite differences of the
// integrals of the displaced molecule (four-point formula, h = 1e-3 bohr;
// common practice, no source). cc-pVQZ brings d, f and g functions on
// oxygen, 6-31G* in Cartesian form six-component d functions.
func TestOneElectronDerivativesFiniteDifference(t *testing.T) {
	mol := derivTestMol()
	cases := []struct {
		name string
		ang  basis.Angular
	}{{"cc-pvqz", basis.Spherical}, {"6-31g*", basis.Cartesian}}
	for _, c := range cases {
		mb := derivBasis(t, c.name, mol, c.ang)
		charges := MoleculeCharges(mol)
		chargeAtom := []int{0, 1, 2}
		const h = 1e-3
		for atom := 0; atom < len(mol.Atoms); atom++ {
			got, err := OneElectronDerivatives(mb, charges, chargeAtom, atom)
			if err != nil {
				t.Fatal(err)
			}
			for d := 0; d < 3; d++ {
				ints := func(s float64) [3]*mat.SymDense {
					m := displaced(mol, atom, d, s)
					b := derivBasis(t, c.name, m, c.ang)
					return [3]*mat.SymDense{Overlap(b), Kinetic(b), NuclearMolecule(b, m)}
				}
				p1, m1, p2, m2 := ints(h), ints(-h), ints(2*h), ints(-2*h)
				want := func(k, mu, nu int) float64 {
					return (8*(p1[k].At(mu, nu)-m1[k].At(mu, nu)) - (p2[k].At(mu, nu) - m2[k].At(mu, nu))) / (12 * h)
				}
				names := []string{"overlap", "kinetic", "nuclear"}
				mats := []*mat.SymDense{got[d].S, got[d].T, got[d].V}
				for k, g := range mats {
					worst := 0.0
					for mu := 0; mu < mb.NBasis; mu++ {
						for nu := 0; nu <= mu; nu++ {
							worst = math.Max(worst, math.Abs(g.At(mu, nu)-want(k, mu, nu)))
						}
					}
					if worst > 2e-7 {
						t.Errorf("%s %s atom %d dir %d: largest deviation from finite differences %.2e", c.name, names[k], atom, d, worst)
					}
				}
			}
		}
	}
}

// OneElectronGradient is the contraction of the derivative matrices.
func TestOneElectronGradientContraction(t *testing.T) {
	mol := derivTestMol()
	mb := derivBasis(t, "cc-pvtz", mol, basis.Spherical)
	P := randomSym(mb.NBasis, 1)
	W := randomSym(mb.NBasis, 2)
	charges := MoleculeCharges(mol)
	chargeAtom := []int{0, 1, 2}
	g, err := OneElectronGradient(mb, P, W, charges, chargeAtom, 3)
	if err != nil {
		t.Fatal(err)
	}
	tr := func(a, b *mat.SymDense) float64 {
		s := 0.0
		for i := 0; i < mb.NBasis; i++ {
			for j := 0; j < mb.NBasis; j++ {
				s += a.At(i, j) * b.At(i, j)
			}
		}
		return s
	}
	sum := [3]float64{}
	for atom := 0; atom < 3; atom++ {
		dm, err := OneElectronDerivatives(mb, charges, chargeAtom, atom)
		if err != nil {
			t.Fatal(err)
		}
		for d := 0; d < 3; d++ {
			want := tr(P, dm[d].T) + tr(P, dm[d].V) - tr(W, dm[d].S)
			if math.Abs(g[3*atom+d]-want) > 1e-10*math.Max(1, math.Abs(want)) {
				t.Errorf("atom %d dir %d: contraction %.12g, from the matrices %.12g", atom, d, g[3*atom+d], want)
			}
			sum[d] += g[3*atom+d]
		}
	}
	// the whole system translated: no change (exact up to rounding)
	for d := 0; d < 3; d++ {
		if math.Abs(sum[d]) > 1e-9 {
			t.Errorf("translation dir %d: gradient components sum to %.3e", d, sum[d])
		}
	}
}
