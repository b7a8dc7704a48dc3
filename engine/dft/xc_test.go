package dft

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/basis"
	"moltrail/engine/molecule"
)

// a positive definite density: 0.05·1 + Σ_i c_i c_iᵀ for a few made-up
// orbitals (no physical meaning needed). The diagonal part keeps ρ away
// from the nodes where ρ^{1/3} is not differentiable.
func testDensity(n, nocc int, seed float64) *mat.SymDense {
	d := mat.NewSymDense(n, nil)
	for i := 0; i < n; i++ {
		d.SetSym(i, i, 0.05)
	}
	for o := 0; o < nocc; o++ {
		c := make([]float64, n)
		for i := range c {
			c[i] = 0.3 * math.Sin(seed+float64(o*n+i)*0.7) / math.Sqrt(float64(n))
		}
		for i := 0; i < n; i++ {
			for j := i; j < n; j++ {
				d.SetSym(i, j, d.At(i, j)+c[i]*c[j])
			}
		}
	}
	return d
}

func coarseXC(t *testing.T, m *molecule.Molecule, def string, threads int) (*XC, *basis.Molecular) {
	t.Helper()
	set, _ := basis.Builtin("6-31g*")
	mb, err := basis.Build(set, m, "")
	if err != nil {
		t.Fatal(err)
	}
	// a small grid: these tests check algebra, not quadrature accuracy
	spec, _ := Level("coarse")
	spec.RadialPoints, spec.AngularOrder = 30, 13
	x, err := NewXC(m, mb, def, spec, threads)
	if err != nil {
		t.Fatal(err)
	}
	return x, mb
}

// Vxc_μν = ∂Exc/∂D_μν: central differences of the energy on the same grid.
func TestPotentialIsEnergyDerivative(t *testing.T) {
	m := water()
	for _, def := range []string{"slater+vwn5", "b3lyp(vwn-rpa)", "pbe0"} {
		x, mb := coarseXC(t, m, def, 2)
		n := mb.NBasis
		da := testDensity(n, 5, 0.1)
		db := testDensity(n, 4, 0.9)
		for _, restricted := range []bool{true, false} {
			b := db
			if restricted {
				b = da
			}
			_, va, vb, err := x.Compute(da, b)
			if err != nil {
				t.Fatal(err)
			}
			for _, e := range [][2]int{{0, 0}, {1, 4}, {3, 9}, {5, 5}} {
				i, j := e[0], e[1]
				const h = 1e-5
				en := func(s float64) float64 {
					p := mat.NewSymDense(n, nil)
					p.CopySym(da)
					p.SetSym(i, j, p.At(i, j)+s)
					q := p
					if !restricted {
						q = b
					}
					E, _, _, err := x.Compute(p, q)
					if err != nil {
						t.Fatal(err)
					}
					return E
				}
				fd := (en(h) - en(-h)) / (2 * h)
				want := va.At(i, j)
				if i != j {
					want *= 2 // D_ij and D_ji move together
				}
				if restricted {
					want *= 2 // both spins move
				}
				if math.Abs(fd-want) > 2e-6*math.Max(1, math.Abs(want)) {
					t.Errorf("%s restricted=%v V[%d,%d]: analytic %.9g, difference %.9g", def, restricted, i, j, want, fd)
				}
			}
			_ = vb
		}
	}
}

// Same bits for any thread count; and a closed shell run unrestricted gives
// the restricted numbers.
func TestDeterminismAndSpinConsistency(t *testing.T) {
	m := water()
	var ref float64
	var refV *mat.SymDense
	for _, th := range []int{1, 2, 5} {
		x, mb := coarseXC(t, m, "b3lyp5(vwn5)", th)
		d := testDensity(mb.NBasis, 5, 0.3)
		e, v, _, err := x.Compute(d, d)
		if err != nil {
			t.Fatal(err)
		}
		if th == 1 {
			ref, refV = e, v
			d2 := mat.NewSymDense(mb.NBasis, nil)
			d2.CopySym(d)
			eu, va, vb, err := x.Compute(d, d2)
			if err != nil {
				t.Fatal(err)
			}
			if math.Abs(eu-e) > 1e-12*math.Abs(e) {
				t.Errorf("unrestricted closed shell: E %.15g, restricted %.15g", eu, e)
			}
			if !mat.EqualApprox(va, v, 1e-11) || !mat.EqualApprox(vb, v, 1e-11) {
				t.Errorf("unrestricted closed shell: potentials differ from the restricted one")
			}
			continue
		}
		if e != ref || !mat.Equal(v, refV) {
			t.Errorf("threads %d: E %.17g differs from 1 thread %.17g (or the potential does)", th, e, ref)
		}
	}
}

func TestNewXCErrors(t *testing.T) {
	m := water()
	set, _ := basis.Builtin("sto-3g")
	mb, _ := basis.Build(set, m, "")
	spec, _ := Level("")
	if _, err := NewXC(m, mb, "b3lypp", spec, 1); err == nil {
		t.Error("unknown functional accepted")
	}
	bad := spec
	bad.RadialPoints = 0
	if _, err := NewXC(m, mb, "pbe0", bad, 1); err == nil {
		t.Error("bad grid accepted")
	}
	x, err := NewXC(m, mb, "pbe0", spec, 1)
	if err != nil {
		t.Fatal(err)
	}
	if _, _, _, err := x.Compute(mat.NewSymDense(3, nil), mat.NewSymDense(3, nil)); err == nil {
		t.Error("wrong-size density accepted")
	}
	if x.ExactExchange() != 0.25 || x.Definition() != "pbe0" {
		t.Errorf("pbe0: exact exchange %g, definition %q", x.ExactExchange(), x.Definition())
	}
}

// Basis values kept between calls (all, some or none of the batches) give
// the same bits as values computed afresh, for LDA (upper-triangle
// products) and GGA, restricted and unrestricted.
func TestBasisCacheSameBits(t *testing.T) {
	m := water()
	saved := basisCacheBytes
	defer func() { basisCacheBytes = saved }()
	for _, def := range []string{"slater+vwn5", "pbe0"} {
		var refE [2]float64
		var refV [2]*mat.SymDense
		for ib, budget := range []int{0, 200 << 10, 1 << 30} {
			basisCacheBytes = budget
			x, mb := coarseXC(t, m, def, 2)
			kept := 0
			for _, c := range x.cache {
				if c.phi != nil {
					kept++
				}
			}
			switch {
			case budget == 0 && kept != 0, budget == 1<<30 && kept != len(x.cache), budget == 200<<10 && (kept == 0 || kept == len(x.cache)):
				t.Fatalf("%s: budget %d keeps %d of %d batches", def, budget, kept, len(x.cache))
			}
			da := testDensity(mb.NBasis, 5, 0.2)
			db := testDensity(mb.NBasis, 4, 0.6)
			for call := 0; call < 2; call++ {
				for u, b := range []*mat.SymDense{da, db} {
					e, va, _, err := x.Compute(da, b)
					if err != nil {
						t.Fatal(err)
					}
					if ib == 0 && call == 0 {
						refE[u], refV[u] = e, va
						continue
					}
					if e != refE[u] || !mat.Equal(va, refV[u]) {
						t.Errorf("%s budget %d call %d unrestricted %v: E %.17g, uncached %.17g (or the potential differs)", def, budget, call, u == 1, e, refE[u])
					}
				}
			}
		}
	}
}
