package integral

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/basis"
)

// twoElectronEnergy is ½ cJ tr(D J[D]) − ½ cK Σσ tr(Dσ K[Dσ]) from the J/K
// build of the energy code.
func twoElectronEnergy(t testing.TB, mb *basis.Molecular, da, db *mat.SymDense, cJ, cK float64) float64 {
	t.Helper()
	e, err := NewERI(mb, Options{SchwarzThreshold: 1e-14, Threads: 2})
	if err != nil {
		t.Fatal(err)
	}
	n := mb.NBasis
	dt := mat.NewSymDense(n, nil)
	dt.AddSym(da, db)
	J, _ := e.JK([]*mat.SymDense{dt}, false)
	_, K := e.JK([]*mat.SymDense{da, db}, true)
	tr := func(a, b *mat.SymDense) float64 {
		s := 0.0
		for i := 0; i < n; i++ {
			for j := 0; j < n; j++ {
				s += a.At(i, j) * b.At(i, j)
			}
		}
		return s
	}
	return 0.5*cJ*tr(dt, J[0]) - 0.5*cK*(tr(da, K[0])+tr(db, K[1]))
}

// gShells is a made-up contracted basis with s to g shells on four
// centres (two primitives each), for derivative checks beyond the library
// sets.
func gShells(pure bool, centres [][3]float64) *basis.Molecular {
	spec := []struct {
		l, atom int
		exps    []float64
		coefs   []float64
	}{
		{0, 0, []float64{3.1, 0.6}, []float64{0.7, 0.4}},
		{1, 0, []float64{1.3, 0.35}, []float64{0.5, 0.6}},
		{4, 0, []float64{0.9}, []float64{1}},
		{2, 1, []float64{0.9, 0.3}, []float64{0.6, 0.5}},
		{0, 1, []float64{1.7}, []float64{1}},
		{3, 2, []float64{0.8, 0.4}, []float64{0.4, 0.7}},
		{1, 2, []float64{2.2, 0.5}, []float64{0.3, 0.9}},
		{0, 3, []float64{1.2, 0.25}, []float64{0.5, 0.5}},
		{2, 3, []float64{0.7}, []float64{1}},
	}
	mb := &basis.Molecular{Angular: basis.Cartesian}
	if pure {
		mb.Angular = basis.Spherical
	}
	for _, s := range spec {
		sh := basis.Shell{L: s.l, Exponents: s.exps, Coefs: s.coefs, Centre: centres[s.atom], Atom: s.atom, Pure: pure && s.l >= 2}
		mb.Offsets = append(mb.Offsets, mb.NBasis)
		mb.Shells = append(mb.Shells, sh)
		for k := 0; k < sh.NFunc(); k++ {
			mb.FuncAtom = append(mb.FuncAtom, s.atom)
		}
		mb.NBasis += sh.NFunc()
	}
	return mb
}

// The contracted derivative-ERI gradient equals central finite differences
// (four-point formula, h = 1e-3 bohr; common practice, no source) of the
// two-electron energy at fixed densities, with Coulomb and a fraction of
// exchange, for unrelated α and β densities; s–g shells, spherical and
// Cartesian, and the library set cc-pVTZ on distorted water (f on O).
func TestTwoElectronGradientFiniteDifference(t *testing.T) {
	centres := [][3]float64{{0.1, -0.2, 0.05}, {1.4, 0.6, -0.3}, {-0.9, 1.1, 0.4}, {0.3, -0.5, 1.5}}
	type tc struct {
		name  string
		build func(c [][3]float64) *basis.Molecular
		nat   int
	}
	mol := derivTestMol()
	molCentres := [][3]float64{mol.Atoms[0].PosBohr, mol.Atoms[1].PosBohr, mol.Atoms[2].PosBohr}
	cases := []tc{
		{"s-g spherical", func(c [][3]float64) *basis.Molecular { return gShells(true, c) }, 4},
		{"s-g cartesian", func(c [][3]float64) *basis.Molecular { return gShells(false, c) }, 4},
		{"cc-pvtz water", func(c [][3]float64) *basis.Molecular {
			m := mol.Clone()
			for i := range m.Atoms {
				m.Atoms[i].PosBohr = c[i]
			}
			return derivBasis(t, "cc-pvtz", m, basis.Spherical)
		}, 3},
	}
	// coordinates checked against finite differences (the rest follow
	// from translational invariance, also checked)
	checks := map[int][][2]int{4: {{0, 0}, {1, 2}, {2, 1}}, 3: {{0, 1}, {1, 0}, {1, 2}, {2, 1}}}
	for _, c := range cases {
		cs := centres
		if c.nat == 3 {
			cs = molCentres
		}
		mb := c.build(cs)
		n := mb.NBasis
		da, db := randomSym(n, 11), randomSym(n, 12)
		da.ScaleSym(0.1, da)
		db.ScaleSym(0.05, db)
		const cJ, cK = 1.0, 0.6
		got, err := TwoElectronGradient(mb, da, db, cJ, cK, c.nat, GradientOptions{SchwarzThreshold: 1e-14})
		if err != nil {
			t.Fatal(err)
		}
		const h = 1e-3
		var sum [3]float64
		scale := 0.0
		for k, v := range got {
			scale = math.Max(scale, math.Abs(v))
			sum[k%3] += v
		}
		for _, ad := range checks[c.nat] {
			atom, d := ad[0], ad[1]
			{
				en := func(s float64) float64 {
					cc := append([][3]float64(nil), cs...)
					cc[atom][d] += s
					return twoElectronEnergy(t, c.build(cc), da, db, cJ, cK)
				}
				want := (8*(en(h)-en(-h)) - (en(2*h) - en(-2*h))) / (12 * h)
				if g := got[3*atom+d]; math.Abs(g-want) > 1e-7*math.Max(1, scale) {
					t.Errorf("%s atom %d dir %d: analytic %.10g, finite differences %.10g", c.name, atom, d, g, want)
				}
			}
		}
		for d := 0; d < 3; d++ {
			if math.Abs(sum[d]) > 1e-9*math.Max(1, scale) {
				t.Errorf("%s: gradient components along %d sum to %.3e", c.name, d, sum[d])
			}
		}
	}
}

// The same bits for one and several threads.
func TestTwoElectronGradientThreadDeterminism(t *testing.T) {
	mb := derivBasis(t, "cc-pvdz", derivTestMol(), basis.Spherical)
	da := randomSym(mb.NBasis, 3)
	var ref []float64
	for _, th := range []int{1, 2, 5} {
		g, err := TwoElectronGradient(mb, da, da, 1, 1, 3, GradientOptions{Threads: th})
		if err != nil {
			t.Fatal(err)
		}
		if ref == nil {
			ref = g
			continue
		}
		for k := range g {
			if g[k] != ref[k] {
				t.Fatalf("threads %d: component %d is %.17g, with one thread %.17g", th, k, g[k], ref[k])
			}
		}
	}
}
