package dft

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/basis"
	"moltrail/engine/molecule"
)

// gradDensity is a positive semidefinite density Σ_i c_i c_iᵀ from nocc
// random vectors (so ρ ≥ 0 everywhere).
func gradDensity(n, nocc int, seed uint64) *mat.SymDense {
	r := rand.New(rand.NewPCG(seed, 3))
	d := mat.NewSymDense(n, nil)
	for k := 0; k < nocc; k++ {
		c := make([]float64, n)
		for i := range c {
			c[i] = 0.3 * (r.Float64() - 0.5)
		}
		for i := 0; i < n; i++ {
			for j := 0; j <= i; j++ {
				d.SetSym(i, j, d.At(i, j)+c[i]*c[j])
			}
		}
	}
	return d
}

// The XC gradient at fixed density matrices equals central finite
// differences (four-point, h = 1e-3 bohr; common practice, no source) of
// E_xc with basis and grid rebuilt at the displaced geometry, and sums to
// zero over the atoms: restricted LDA and GGA, unrestricted GGA, on the
// coarse grid of a distorted water molecule in 6-31G* (Cartesian d).
func TestXCNuclearGradientFiniteDifference(t *testing.T) {
	mol := &molecule.Molecule{Atoms: []molecule.Atom{
		molecule.MustAtom("O", 0.05, -0.1, 0.02),
		molecule.MustAtom("H", 1.45, 1.1, 0.1),
		molecule.MustAtom("H", -1.6, 0.95, -0.25),
	}, Multiplicity: 1}
	set, err := basis.Builtin("6-31g*")
	if err != nil {
		t.Fatal(err)
	}
	spec, err := Level("coarse")
	if err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		def        string
		restricted bool
	}{{"slater+vwn5", true}, {"pbe-x+pbe-c", true}, {"b88+lyp", false}}
	for _, c := range cases {
		exc := func(m *molecule.Molecule, da, db *mat.SymDense) (float64, *XC) {
			mb, err := basis.Build(set, m, basis.Cartesian)
			if err != nil {
				t.Fatal(err)
			}
			x, err := NewXC(m, mb, c.def, spec, 2)
			if err != nil {
				t.Fatal(err)
			}
			e, _, _, err := x.Compute(da, db)
			if err != nil {
				t.Fatal(err)
			}
			return e, x
		}
		mb0, _ := basis.Build(set, mol, basis.Cartesian)
		da := gradDensity(mb0.NBasis, 5, 1)
		db := da
		if !c.restricted {
			db = gradDensity(mb0.NBasis, 4, 2)
		}
		_, x := exc(mol, da, db)
		g, err := x.NuclearGradient(da, db, 3)
		if err != nil {
			t.Fatal(err)
		}
		var sum [3]float64
		for k, v := range g {
			sum[k%3] += v
		}
		for d, s := range sum {
			if math.Abs(s) > 1e-8 {
				t.Errorf("%s: components along %d sum to %.2e", c.def, d, s)
			}
		}
		const h = 1e-3
		for _, ad := range [][2]int{{0, 0}, {1, 1}, {2, 2}} {
			e := func(s float64) float64 {
				m := mol.Clone()
				m.Atoms[ad[0]].PosBohr[ad[1]] += s
				v, _ := exc(m, da, db)
				return v
			}
			want := (8*(e(h)-e(-h)) - (e(2*h) - e(-2*h))) / (12 * h)
			if got := g[3*ad[0]+ad[1]]; math.Abs(got-want) > 1e-7 {
				t.Errorf("%s atom %d axis %d: analytic %.10f, finite differences %.10f", c.def, ad[0]+1, ad[1], got, want)
			}
		}
	}
}
