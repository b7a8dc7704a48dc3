package dft

import (
	"math"
	"testing"

	"moltrail/engine/basis"
	"moltrail/engine/molecule"
)

// water in bohr, the geometry of testdata/psi4/scf_energies.json.
func water() *molecule.Molecule {
	return &molecule.Molecule{Name: "water", Multiplicity: 1, Atoms: []molecule.Atom{
		molecule.MustAtom("O", 0, -0.143225816552, 0),
		molecule.MustAtom("H", 1.638036840407, 1.136548822547, 0),
		molecule.MustAtom("H", -1.638036840407, 1.136548822547, 0),
	}}
}

// sphereMonomial is ∫ x^a y^b z^c dΩ over the unit sphere (closed form,
// e.g. G. B. Folland, Amer. Math. Monthly 108, 446 (2001)).
func sphereMonomial(a, b, c int) float64 {
	if a%2 == 1 || b%2 == 1 || c%2 == 1 {
		return 0
	}
	g := func(k int) float64 { return math.Gamma((float64(k) + 1) / 2) }
	return 2 * g(a) * g(b) * g(c) / math.Gamma(float64(a+b+c+3)/2)
}

func TestProductSphereExactness(t *testing.T) {
	for _, L := range []int{7, 17, 35} {
		r, err := productSphere(L)
		if err != nil {
			t.Fatal(err)
		}
		if len(r.w) != (L+1)*(L+1)/2 {
			t.Errorf("L=%d: %d points, want %d", L, len(r.w), (L+1)*(L+1)/2)
		}
		for deg := 0; deg <= L+2; deg++ {
			worst := 0.0
			for a := 0; a <= deg; a++ {
				for b := 0; a+b <= deg; b++ {
					c := deg - a - b
					s := 0.0
					for k := range r.w {
						s += r.w[k] * math.Pow(r.x[k], float64(a)) * math.Pow(r.y[k], float64(b)) * math.Pow(r.z[k], float64(c))
					}
					worst = math.Max(worst, math.Abs(s-sphereMonomial(a, b, c)))
				}
			}
			if deg <= L && worst > 1e-13 {
				t.Errorf("L=%d degree %d: error %g", L, deg, worst)
			}
			if deg == L+1 && worst < 1e-10 {
				t.Errorf("L=%d degree %d integrated exactly too: the test cannot tell the degree", L, deg)
			}
		}
	}
	if _, err := productSphere(8); err == nil {
		t.Error("even angular order accepted")
	}
}

func TestRadialRules(t *testing.T) {
	// ∫_0^∞ r² e^{−α r²} dr = √π / (4 α^{3/2}) (common practice, no source)
	for _, tc := range []struct {
		name string
		q    radialRule
	}{{"treutler", treutlerM4(75, 0.9)}, {"becke", beckeRadial(75, 0.6)}} {
		for _, a := range []float64{0.3, 1, 10, 1000} {
			s := 0.0
			for k, r := range tc.q.r {
				s += tc.q.w[k] * math.Exp(-a*r*r)
			}
			want := math.Sqrt(math.Pi) / (4 * math.Pow(a, 1.5))
			if math.Abs(s/want-1) > 1e-8 {
				t.Errorf("%s α=%g: %g, want %g", tc.name, a, s, want)
			}
		}
	}
}

func TestGaussLegendre(t *testing.T) {
	x, w := gaussLegendre(10)
	for k := 0; k <= 19; k++ {
		s := 0.0
		for i := range x {
			s += w[i] * math.Pow(x[i], float64(k))
		}
		want := 0.0
		if k%2 == 0 {
			want = 2 / float64(k+1)
		}
		if math.Abs(s-want) > 1e-14 {
			t.Errorf("x^%d: %g, want %g", k, s, want)
		}
	}
}

// Normalised s Gaussians on each atom, and products of two on different
// atoms, integrated on the molecular grid: ∫ e^{−a|r−A|²} e^{−b|r−B|²} =
// (π/(a+b))^{3/2} e^{−ab|A−B|²/(a+b)} (Gaussian product theorem).
func TestMolecularGridGaussians(t *testing.T) {
	m := water()
	for _, lev := range []string{"coarse", "standard", "fine"} {
		spec, _ := Level(lev)
		g, err := NewGrid(m, spec, 2)
		if err != nil {
			t.Fatal(err)
		}
		// The worst case is a tight (α = 50) Gaussian on H: the O grid sees
		// it through the small tail of O's Becke cell with too few angular
		// points; real densities are far milder there (see the electron
		// counts in the SCF tests). Bounds: observed errors × ~3.
		tol := map[string]float64{"coarse": 5e-5, "standard": 7e-6, "fine": 1.5e-6}[lev]
		worst := 0.0
		for i, A := range m.Atoms {
			for j, B := range m.Atoms {
				for _, a := range []float64{0.5, 5, 50} {
					b := a * 0.7
					if i == j {
						b = a
					}
					s := 0.0
					for p := range g.W {
						r := [3]float64{g.X[p], g.Y[p], g.Z[p]}
						s += g.W[p] * math.Exp(-a*sq3(r, A.PosBohr)-b*sq3(r, B.PosBohr))
					}
					want := math.Pow(math.Pi/(a+b), 1.5) * math.Exp(-a*b/(a+b)*sq3(A.PosBohr, B.PosBohr))
					worst = math.Max(worst, math.Abs(s-want)/math.Pow(math.Pi/(a+b), 1.5))
				}
			}
		}
		t.Logf("%s: %d points in %d batches; worst relative error %.2e", lev, g.NPoints(), g.NBatches(), worst)
		if worst > tol {
			t.Errorf("%s: worst relative error %g above %g", lev, worst, tol)
		}
	}
}

func TestGridSpecChecks(t *testing.T) {
	good, _ := Level("")
	if good.Level != DefaultLevel {
		t.Fatalf("default level %q", good.Level)
	}
	for name, mod := range map[string]func(*GridSpec){
		"radial scheme": func(s *GridSpec) { s.RadialScheme = "x" },
		"radial points": func(s *GridSpec) { s.RadialPoints = 1 },
		"even angular":  func(s *GridSpec) { s.AngularOrder = 30 },
		"partition":     func(s *GridSpec) { s.Partition = "voronoi" },
		"pruning":       func(s *GridSpec) { s.Pruning = "x" },
		"density cut":   func(s *GridSpec) { s.DensityCut = -1 },
		"basis cut":     func(s *GridSpec) { s.BasisCut = 1 },
	} {
		s := good
		mod(&s)
		if _, err := NewGrid(water(), s, 1); err == nil {
			t.Errorf("%s: bad spec accepted", name)
		}
	}
	bad := water()
	bad.Atoms[2].PosBohr = bad.Atoms[1].PosBohr
	if _, err := NewGrid(bad, good, 1); err == nil {
		t.Error("coincident atoms accepted")
	}
	if _, err := Level("nope"); err == nil {
		t.Error("unknown level accepted")
	}
}

// The diagonal of the overlap matrix integrated on the grid must be 1 for
// every (normalised) function, Cartesian and spherical; checks the grid,
// the radial normalisation, CartNorm and the spherical transformation.
func TestBasisNormOnGrid(t *testing.T) {
	m := water()
	spec, _ := Level("fine")
	g, err := NewGrid(m, spec, 2)
	if err != nil {
		t.Fatal(err)
	}
	for _, ang := range []basis.Angular{basis.Spherical, basis.Cartesian} {
		set, err := basis.Builtin("cc-pvtz")
		if err != nil {
			t.Fatal(err)
		}
		mb, err := basis.Build(set, m, ang)
		if err != nil {
			t.Fatal(err)
		}
		shells, ae := prepareShells(mb, 0)
		all := make([]int, len(shells))
		for i := range all {
			all[i] = i
		}
		n := mb.NBasis
		diag := make([]float64, n)
		phi := make([]float64, n)
		sw := newEvalWork(4, 1, ae.maxDistinct())
		for p := range g.W {
			evalShells(shells, ae, all, g.X[p:p+1], g.Y[p:p+1], g.Z[p:p+1], n, phi, [3][]float64{}, sw)
			for k := range phi {
				diag[k] += g.W[p] * phi[k] * phi[k]
			}
		}
		for k, v := range diag {
			if math.Abs(v-1) > 1e-6 {
				t.Errorf("%s function %d: ⟨φ|φ⟩ = %.9f", ang, k, v)
			}
		}
	}
}

// Gradients of basis functions against central differences of the values.
func TestBasisGradients(t *testing.T) {
	m := water()
	set, _ := basis.Builtin("cc-pvtz")
	mb, err := basis.Build(set, m, basis.Spherical)
	if err != nil {
		t.Fatal(err)
	}
	shells, ae := prepareShells(mb, 0)
	all := make([]int, len(shells))
	for i := range all {
		all[i] = i
	}
	n := mb.NBasis
	sw := newEvalWork(4, 1, ae.maxDistinct())
	phi := make([]float64, n)
	grad := [3][]float64{make([]float64, n), make([]float64, n), make([]float64, n)}
	p0 := [3]float64{0.31, -0.52, 0.27}
	evalShells(shells, ae, all, p0[:1], p0[1:2], p0[2:3], n, phi, grad, sw)
	const h = 1e-5
	up, dn := make([]float64, n), make([]float64, n)
	for d := 0; d < 3; d++ {
		a, b := p0, p0
		a[d] += h
		b[d] -= h
		evalShells(shells, ae, all, a[:1], a[1:2], a[2:3], n, up, [3][]float64{}, sw)
		evalShells(shells, ae, all, b[:1], b[1:2], b[2:3], n, dn, [3][]float64{}, sw)
		for k := 0; k < n; k++ {
			fd := (up[k] - dn[k]) / (2 * h)
			if math.Abs(fd-grad[d][k]) > 1e-6*math.Max(1, math.Abs(fd)) {
				t.Errorf("function %d d/d%c: analytic %.10g, difference %.10g", k, "xyz"[d], grad[d][k], fd)
			}
		}
	}
}

// Angular orders of the two pruning schemes at the zone boundaries
// (L = 35, R = 1): 11 inside R/4, 23 inside R/2, 35 beyond; zones-outer
// goes back to 23 from 6R on.
func TestPrunedOrders(t *testing.T) {
	for _, c := range []struct {
		r           float64
		zones, outr int
	}{{0.1, 11, 11}, {0.3, 23, 23}, {0.6, 35, 35}, {5.9, 35, 35}, {6, 35, 23}, {20, 35, 23}} {
		if got := prunedOrder(35, c.r, 1); got != c.zones {
			t.Errorf("zones at r=%g: order %d, want %d", c.r, got, c.zones)
		}
		if got := prunedOrderOuter(35, c.r, 1); got != c.outr {
			t.Errorf("zones-outer at r=%g: order %d, want %d", c.r, got, c.outr)
		}
	}
}
