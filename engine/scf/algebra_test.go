package scf

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/molecule"
)

func TestOrthogonaliser(t *testing.T) {
	cases := []struct {
		name    string
		s       []float64
		dropped int
	}{
		{"well conditioned", []float64{1, 0.5, 0.1, 0.5, 1, 0.3, 0.1, 0.3, 1}, 0},
		// Functions 1 and 2 almost identical: one eigenvalue ≈ 2e-9.
		{"near dependence", []float64{1, 1 - 1e-9, 0.2, 1 - 1e-9, 1, 0.2, 0.2, 0.2, 1}, 1},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			s := mat.NewSymDense(3, c.s)
			o, err := newOrthogonaliser(s, LinearDependenceTol)
			if err != nil {
				t.Fatal(err)
			}
			if o.dropped != c.dropped || o.nmo() != 3-c.dropped {
				t.Fatalf("dropped %d (nmo %d), want %d", o.dropped, o.nmo(), c.dropped)
			}
			id := o.toOrth(s)
			for i := 0; i < o.nmo(); i++ {
				for j := 0; j < o.nmo(); j++ {
					want := 0.0
					if i == j {
						want = 1
					}
					if math.Abs(id.At(i, j)-want) > 1e-10 {
						t.Errorf("(X†SX)[%d,%d] = %g", i, j, id.At(i, j))
					}
				}
			}
		})
	}
}

// TestDIISLinear: for errors linear in F, DIIS recovers the fixed point
// from two points (common practice, no source).
func TestDIISLinear(t *testing.T) {
	d := newDIIS(4)
	fstar := 3.0
	for _, f := range []float64{1, 2} {
		fm := mat.NewSymDense(1, []float64{f})
		e := mat.NewDense(1, 1, []float64{f - fstar})
		d.push([]*mat.SymDense{fm}, []*mat.Dense{e})
	}
	got := d.extrapolate()[0].At(0, 0)
	if math.Abs(got-fstar) > 1e-12 {
		t.Errorf("extrapolated %g, want %g", got, fstar)
	}
	// Identical error vectors make the equations singular: the oldest
	// entries are dropped and the newest kept.
	d = newDIIS(4)
	for _, f := range []float64{1, 2, 5} {
		d.push([]*mat.SymDense{mat.NewSymDense(1, []float64{f})}, []*mat.Dense{mat.NewDense(1, 1, []float64{0.5})})
	}
	if got := d.extrapolate()[0].At(0, 0); got != 5 || d.len() != 1 {
		t.Errorf("singular subspace: got %g with %d vectors, want the newest (5) alone", got, d.len())
	}
	// Bounded subspace.
	d = newDIIS(2)
	for _, f := range []float64{1, 2, 4} {
		d.push([]*mat.SymDense{mat.NewSymDense(1, []float64{f})}, []*mat.Dense{mat.NewDense(1, 1, []float64{f - fstar})})
	}
	if d.len() != 2 {
		t.Errorf("subspace holds %d vectors, bound 2", d.len())
	}
}

func TestShellOccupations(t *testing.T) {
	cases := []struct {
		eps   []float64
		nelec float64
		want  []float64
	}{
		// Carbon-like: 1s² 2s² 2p² spread over the three p orbitals.
		{[]float64{-11, -0.7, -0.4, -0.4, -0.4, 0.2}, 6, []float64{2, 2, 2.0 / 3, 2.0 / 3, 2.0 / 3, 0}},
		{[]float64{-0.5, 0.3}, 1, []float64{1, 0}},
		{[]float64{-20, -1, -0.5, -0.5, -0.5}, 10, []float64{2, 2, 2, 2, 2}},
	}
	for _, c := range cases {
		got := shellOccupations(c.eps, c.nelec)
		for i := range got {
			if math.Abs(got[i]-c.want[i]) > 1e-14 {
				t.Errorf("eps %v, %g electrons: occupations %v, want %v", c.eps, c.nelec, got, c.want)
				break
			}
		}
	}
}

// TestROHFEffective: with Fα, Fβ diagonal in the orbital basis the
// gradient vanishes and the operator is the spin average; a closed–open
// coupling in Fβ appears in the gradient, one in Fα does not.
func TestROHFEffective(t *testing.T) {
	c := mat.NewDense(3, 3, []float64{1, 0, 0, 0, 1, 0, 0, 0, 1})
	fa := mat.NewSymDense(3, []float64{-1, 0, 0, 0, -0.5, 0, 0, 0, 1})
	fb := mat.NewSymDense(3, []float64{-0.8, 0, 0, 0, 0.1, 0, 0, 0, 1.2})
	eff, g := rohfEffective(fa, fb, c, 1, 2)
	if maxAbs(g) != 0 {
		t.Errorf("gradient %v for diagonal Fock matrices", mat.Formatted(g))
	}
	if math.Abs(eff.At(1, 1)+0.2) > 1e-15 {
		t.Errorf("open-shell diagonal %g, want (−0.5+0.1)/2", eff.At(1, 1))
	}
	fb.SetSym(0, 1, 0.3)
	_, g = rohfEffective(fa, fb, c, 1, 2)
	if g.At(0, 1) != 0.3 || g.At(1, 0) != -0.3 {
		t.Errorf("closed–open gradient %v, want ±0.3", mat.Formatted(g))
	}
	fb.SetSym(0, 1, 0)
	fa.SetSym(0, 1, 0.3)
	_, g = rohfEffective(fa, fb, c, 1, 2)
	if maxAbs(g) != 0 {
		t.Errorf("closed–open coupling in Fα should not enter the ROHF gradient: %v", mat.Formatted(g))
	}
}

// TestHydrogenAtom: one electron, UHF and ROHF are exact within the basis
// and free of self-interaction. STO-3G hydrogen atom E = −0.466582 Eh
// (Szabo & Ostlund ch. 3, STO-3G 1s energy for ζ = 1.24; from memory).
func TestHydrogenAtom(t *testing.T) {
	m, mb := build(t, "sto-3g", "", 0, 2, molecule.MustAtom("H", 0, 0, 0))
	for _, ref := range []string{"uhf", "rohf"} {
		for _, guess := range []string{"sad", "core"} {
			r := mustRun(t, m, mb, Options{Reference: ref, Guess: guess})
			if math.Abs(r.Energy+0.466582) > 1e-6 {
				t.Errorf("%s/%s: E = %.8f, want −0.466582", ref, guess, r.Energy)
			}
			if math.Abs(r.S2-0.75) > 1e-12 || math.Abs(r.TwoElectron) > 1e-12 {
				t.Errorf("%s/%s: <S²> = %.14f, two-electron energy %g", ref, guess, r.S2, r.TwoElectron)
			}
		}
	}
}

// TestIncrementalJK: with a linear stand-in for the integral engine
// (J = 2D, K = −D) the incremental builds reproduce full builds; builds
// after the first get density differences, and every rebuildEvery-th
// build and every change of request shape gets the full density.
func TestIncrementalJK(t *testing.T) {
	var seen []float64
	full := func(d []*mat.SymDense, wantK bool) (j, k []*mat.SymDense) {
		for _, x := range d {
			seen = append(seen, x.At(0, 0))
			a, b := mat.NewSymDense(2, nil), mat.NewSymDense(2, nil)
			a.ScaleSym(2, x)
			b.ScaleSym(-1, x)
			j, k = append(j, a), append(k, b)
		}
		return j, k
	}
	inc := &incrementalJK{full: full}
	for step := 1; step <= 12; step++ {
		d := mat.NewSymDense(2, []float64{float64(step), 0.5, 0.5, 1 / float64(step)})
		j, k := inc.build([]*mat.SymDense{d}, true)
		if math.Abs(j[0].At(1, 1)-2/float64(step)) > 1e-14 || math.Abs(k[0].At(0, 0)+float64(step)) > 1e-14 {
			t.Fatalf("step %d: J %v K %v", step, mat.Formatted(j[0]), mat.Formatted(k[0]))
		}
		want := 1.0 // the difference from the previous step
		if step == 1 || step == 2+rebuildEvery {
			want = float64(step)
		}
		if seen[step-1] != want {
			t.Fatalf("step %d: the engine got density element %g, want %g", step, seen[step-1], want)
		}
	}
	d := mat.NewSymDense(2, []float64{20, 0.5, 0.5, 1})
	inc.build([]*mat.SymDense{d}, false)
	if got := seen[len(seen)-1]; got != 20 {
		t.Errorf("a Coulomb-only request after exchange builds got %g, want the full density 20", got)
	}
}

func TestElectronsPerL(t *testing.T) {
	// Ground-state configurations of the neutral atoms (standard periodic
	// table, common knowledge, no source).
	cases := map[int][5]float64{
		1:  {1},         // H 1s1
		6:  {4, 2},      // C 1s2 2s2 2p2
		10: {4, 6},      // Ne
		19: {7, 12},     // K [Ar] 4s1
		21: {8, 12, 1},  // Sc [Ar] 3d1 4s2
		24: {7, 12, 5},  // Cr [Ar] 3d5 4s1
		26: {8, 12, 6},  // Fe [Ar] 3d6 4s2
		29: {7, 12, 10}, // Cu [Ar] 3d10 4s1
		36: {8, 18, 10}, // Kr
	}
	for z, want := range cases {
		if got := electronsPerL(z); got != want {
			t.Errorf("Z=%d: %v, want %v", z, got, want)
		}
	}
	// Carbon-like orbital pattern: the p set takes the two p electrons even
	// though an s orbital lies below it.
	eps := []float64{-11, -0.7, -0.5, -0.4, -0.4, -0.4, 0.2}
	occ := configOccupations(eps, 6)
	want := []float64{2, 2, 0, 2.0 / 3, 2.0 / 3, 2.0 / 3, 0}
	for i := range want {
		if occ == nil || math.Abs(occ[i]-want[i]) > 1e-14 {
			t.Fatalf("occupations %v, want %v", occ, want)
		}
	}
	if configOccupations([]float64{-1, -0.5, -0.5}, 2) != nil {
		t.Error("a degenerate pair (no l has two functions) was accepted")
	}
}
