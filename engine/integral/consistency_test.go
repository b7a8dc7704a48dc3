package integral

import (
	"math"
	"math/rand"
	"testing"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/basis"
	"moltrail/engine/molecule"
)

// primitiveBasis builds an uncontracted basis of single Cartesian or
// spherical primitives with coefficient 1 (so a final Cartesian function is
// CartNorm·x^lx y^ly z^lz exp(−a r²)).
func primitiveBasis(pure bool, shells ...basis.Shell) *basis.Molecular {
	mb := &basis.Molecular{Angular: basis.Cartesian}
	for _, s := range shells {
		s.Pure = pure && s.L >= 2
		if s.Coefs == nil {
			s.Coefs = []float64{1}
		}
		mb.Offsets = append(mb.Offsets, mb.NBasis)
		mb.Shells = append(mb.Shells, s)
		for k := 0; k < s.NFunc(); k++ {
			mb.FuncAtom = append(mb.FuncAtom, s.Atom)
		}
		mb.NBasis += s.NFunc()
	}
	return mb
}

func prim(l int, a float64, c [3]float64) basis.Shell {
	return basis.Shell{L: l, Exponents: []float64{a}, Centre: c}
}

func shellBlock(e *ERI, i, j, k, l int) []float64 {
	sh := e.mb.Shells
	out := make([]float64, sh[i].NFunc()*sh[j].NFunc()*sh[k].NFunc()*sh[l].NFunc())
	e.Shell(i, j, k, l, out)
	return out
}

// Permutational symmetry (ij|kl) = (ji|kl) = (ij|lk) = (kl|ij) on
// contracted shells up to g (cc-pVQZ water).
func TestERIPermutationalSymmetry(t *testing.T) {
	mb, _ := buildBasis(t, "cc-pvqz", "", water()...)
	e, err := NewERI(mb, Options{})
	if err != nil {
		t.Fatal(err)
	}
	sh := mb.Shells
	rng := rand.New(rand.NewSource(7))
	var g []int // shells with l ≥ 2 to make the cases demanding
	for i, s := range sh {
		if s.L >= 2 {
			g = append(g, i)
		}
	}
	for trial := 0; trial < 25; trial++ {
		i, j, k, l := g[rng.Intn(len(g))], rng.Intn(len(sh)), g[rng.Intn(len(g))], rng.Intn(len(sh))
		ni, nj, nk, nl := sh[i].NFunc(), sh[j].NFunc(), sh[k].NFunc(), sh[l].NFunc()
		ref := shellBlock(e, i, j, k, l)
		ji := shellBlock(e, j, i, k, l)
		lk := shellBlock(e, i, j, l, k)
		kl := shellBlock(e, k, l, i, j)
		for a := 0; a < ni; a++ {
			for b := 0; b < nj; b++ {
				for c := 0; c < nk; c++ {
					for d := 0; d < nl; d++ {
						v := ref[((a*nj+b)*nk+c)*nl+d]
						for name, w := range map[string]float64{
							"(ji|kl)": ji[((b*ni+a)*nk+c)*nl+d],
							"(ij|lk)": lk[((a*nj+b)*nl+d)*nk+c],
							"(kl|ij)": kl[((c*nl+d)*ni+a)*nj+b],
						} {
							if math.Abs(v-w) > 1e-13*math.Max(1, math.Abs(v)) {
								t.Fatalf("shells %d %d %d %d functions %d %d %d %d: (ij|kl) = %.15g, %s = %.15g", i, j, k, l, a, b, c, d, v, name, w)
							}
						}
					}
				}
			}
		}
	}
}

// Translating everything leaves all integrals unchanged.
func TestTranslationalInvariance(t *testing.T) {
	shift := [3]float64{0.37, -1.21, 2.05}
	a1, a2 := water(), water()
	for k := range a2 {
		for d := 0; d < 3; d++ {
			a2[k].PosBohr[d] += shift[d]
		}
	}
	mb1, mol1 := buildBasis(t, "cc-pvtz", "", a1...)
	mb2, mol2 := buildBasis(t, "cc-pvtz", "", a2...)
	for name, pair := range map[string][2]*mat.SymDense{
		"overlap": {Overlap(mb1), Overlap(mb2)},
		"kinetic": {Kinetic(mb1), Kinetic(mb2)},
		"nuclear": {NuclearMolecule(mb1, mol1), NuclearMolecule(mb2, mol2)},
	} {
		if d := maxDiff(pair[0], pair[1]); d > 1e-12 {
			t.Errorf("%s changes by %.3g under translation", name, d)
		}
	}
	e1, _ := NewERI(mb1, Options{})
	e2, _ := NewERI(mb2, Options{})
	rng := rand.New(rand.NewSource(3))
	ns := len(mb1.Shells)
	for trial := 0; trial < 40; trial++ {
		i, j, k, l := rng.Intn(ns), rng.Intn(ns), rng.Intn(ns), rng.Intn(ns)
		x, y := shellBlock(e1, i, j, k, l), shellBlock(e2, i, j, k, l)
		for q := range x {
			if math.Abs(x[q]-y[q]) > 1e-12 {
				t.Fatalf("(%d %d|%d %d)[%d] changes from %.15g to %.15g under translation", i, j, k, l, q, x[q], y[q])
			}
		}
	}
}

func maxDiff(a, b mat.Symmetric) float64 {
	n := a.SymmetricDim()
	m := 0.0
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			m = math.Max(m, math.Abs(a.At(i, j)-b.At(i, j)))
		}
	}
	return m
}

// Spherical integrals are C·(normalised Cartesian)·Cᵀ with
// C = basis.CartToSpherical, for one- and two-electron integrals to g.
func TestSphericalFromCartesian(t *testing.T) {
	atoms := []molecule.Atom{molecule.MustAtom("O", 0.1, -0.2, 0.05), molecule.MustAtom("H", 1.5, 0.9, -0.3)}
	mbS, mol := buildBasis(t, "cc-pvqz", basis.Spherical, atoms...)
	mbC, _ := buildBasis(t, "cc-pvqz", basis.Cartesian, atoms...)
	// per shell: rows of C (identity for l ≤ 1)
	tr := func(i int) [][]float64 { return basis.CartToSpherical(mbS.Shells[i].L) }
	ns := len(mbS.Shells)
	for name, f := range map[string]func(*basis.Molecular) *mat.SymDense{
		"overlap": Overlap, "kinetic": Kinetic,
		"nuclear": func(m *basis.Molecular) *mat.SymDense { return NuclearMolecule(m, mol) },
	} {
		s, c := f(mbS), f(mbC)
		worst := 0.0
		for i := 0; i < ns; i++ {
			for j := 0; j < ns; j++ {
				ti, tj := tr(i), tr(j)
				for a := range ti {
					for b := range tj {
						v := 0.0
						for x := range ti[a] {
							for y := range tj[b] {
								v += ti[a][x] * tj[b][y] * c.At(mbC.Offsets[i]+x, mbC.Offsets[j]+y)
							}
						}
						worst = math.Max(worst, math.Abs(v-s.At(mbS.Offsets[i]+a, mbS.Offsets[j]+b)))
					}
				}
			}
		}
		if worst > 1e-12 {
			t.Errorf("%s: spherical differs from transformed Cartesian by %.3g", name, worst)
		}
	}
	eS, _ := NewERI(mbS, Options{})
	eC, _ := NewERI(mbC, Options{})
	rng := rand.New(rand.NewSource(11))
	for trial := 0; trial < 12; trial++ {
		q := [4]int{}
		for k := range q {
			q[k] = rng.Intn(ns)
		}
		q[0] = ns - 1 - rng.Intn(4) // bias towards the high-l shells at the end of O's list
		for mbS.Shells[q[0]].L < 2 {
			q[0]--
		}
		s := shellBlock(eS, q[0], q[1], q[2], q[3])
		c := shellBlock(eC, q[0], q[1], q[2], q[3])
		t4 := [4][][]float64{tr(q[0]), tr(q[1]), tr(q[2]), tr(q[3])}
		nc := [4]int{}
		for k := range nc {
			nc[k] = len(t4[k][0])
		}
		for a := range t4[0] {
			for b := range t4[1] {
				for cc := range t4[2] {
					for d := range t4[3] {
						v := 0.0
						for w := 0; w < nc[0]; w++ {
							for x := 0; x < nc[1]; x++ {
								for y := 0; y < nc[2]; y++ {
									for z := 0; z < nc[3]; z++ {
										v += t4[0][a][w] * t4[1][b][x] * t4[2][cc][y] * t4[3][d][z] * c[((w*nc[1]+x)*nc[2]+y)*nc[3]+z]
									}
								}
							}
						}
						got := s[((a*len(t4[1])+b)*len(t4[2])+cc)*len(t4[3])+d]
						if math.Abs(got-v) > 1e-12 {
							t.Fatalf("quartet %v: spherical %.15g, transformed Cartesian %.15g", q, got, v)
						}
					}
				}
			}
		}
	}
}

// Derivative with respect to a centre raises or lowers the angular
// momentum: ∂/∂A_x [x_A^n e^{−a r_A²}] = 2a x_A^{n+1} e^{…} − n x_A^{n−1} e^{…},
// so an integral with x^{n+1} on A follows from finite differences of
// integrals with x^n and from x^{n−1}. This ties every angular momentum up
// to g to the s and p cases through the code's own, independent Hermite
// recursions (common practice, no source).
func TestCentreDerivativeRecursion(t *testing.T) {
	const a = 0.9
	A := [3]float64{0.2, -0.3, 0.4}
	others := []basis.Shell{prim(2, 0.7, [3]float64{1.1, 0.5, -0.6}), prim(3, 0.5, [3]float64{-0.8, 1.3, 0.2}), prim(4, 0.6, [3]float64{0.3, -1.0, 1.2})}
	// raw monomial value of component comp of shell 0 (primitive, coef 1)
	type op func(mb *basis.Molecular) func(comp int) float64
	eriOp := func(mb *basis.Molecular) func(int) float64 {
		e, err := NewERI(mb, Options{SchwarzThreshold: 1e-300})
		if err != nil {
			t.Fatal(err)
		}
		blk := shellBlock(e, 0, 1, 2, 3)
		per := len(blk) / mb.Shells[0].NFunc()
		// fixed function of the other shells: the last one of each
		return func(c int) float64 { return blk[c*per+per-1] }
	}
	oneOp := func(f func(*basis.Molecular) *mat.SymDense) op {
		return func(mb *basis.Molecular) func(int) float64 {
			m := f(mb)
			return func(c int) float64 { return m.At(c, mb.NBasis-1) }
		}
	}
	charges := []PointCharge{{Charge: 2, Pos: [3]float64{0.5, 0.5, -0.5}}, {Charge: 1, Pos: [3]float64{-1, 0.2, 0.9}}}
	ops := map[string]op{
		"ERI":     eriOp,
		"overlap": oneOp(Overlap),
		"kinetic": oneOp(Kinetic),
		"nuclear": oneOp(func(mb *basis.Molecular) *mat.SymDense { return Nuclear(mb, charges) }),
	}
	for name, f := range ops {
		for l := 1; l <= 4; l++ {
			build := func(L int, c [3]float64) func(int) float64 {
				sh := append([]basis.Shell{prim(L, a, c)}, others...)
				if name != "ERI" {
					sh = []basis.Shell{prim(L, a, c), others[2]}
				}
				return f(primitiveBasis(false, sh...))
			}
			raw := func(L int, c [3]float64) func([3]int) float64 {
				g := build(L, c)
				idx := map[[3]int]int{}
				for k, cc := range basis.CartComponents(L) {
					idx[cc] = k
				}
				return func(p [3]int) float64 { return g(idx[p]) / basis.CartNorm(p[0], p[1], p[2]) }
			}
			hi := raw(l, A)
			var lo func([3]int) float64
			if l >= 2 {
				lo = raw(l-2, A)
			}
			const h = 1e-3
			for _, comp := range basis.CartComponents(l) {
				d := 0
				for comp[d] == 0 {
					d++
				}
				base := comp
				base[d]--
				// five-point derivative of the x^base integral in A_d
				val := func(s float64) float64 {
					c := A
					c[d] += s
					return raw(l-1, c)(base)
				}
				deriv := (-val(2*h) + 8*val(h) - 8*val(-h) + val(-2*h)) / (12 * h)
				n := float64(base[d])
				want := deriv
				if base[d] > 0 {
					low := base
					low[d]--
					want += n * lo(low)
				}
				want /= 2 * a
				got := hi(comp)
				if math.Abs(got-want) > 1e-8*math.Max(1, math.Abs(got)) {
					t.Errorf("%s l=%d component %v: %.12g, from the derivative %.12g", name, l, comp, got, want)
				}
			}
		}
	}
}
