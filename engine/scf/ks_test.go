package scf

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/integral"
)

// exchangeXC is a test functional: the missing (1−a) part of exact
// exchange, Exc = −½(1−a) Σσ tr(Dσ K[Dσ]), Vσ = −(1−a) K[Dσ]. With it a
// Kohn–Sham run must reproduce Hartree–Fock for any a, which checks how
// the driver adds Vxc, scales K and counts Exc.
type exchangeXC struct {
	eri *integral.ERI
	a   float64
}

func (x exchangeXC) ExactExchange() float64 { return x.a }

func (x exchangeXC) Compute(da, db *mat.SymDense) (float64, *mat.SymDense, *mat.SymDense, error) {
	_, k := x.eri.JK([]*mat.SymDense{da, db}, true)
	n := da.SymmetricDim()
	va, vb := mat.NewSymDense(n, nil), mat.NewSymDense(n, nil)
	va.ScaleSym(-(1 - x.a), k[0])
	vb.ScaleSym(-(1 - x.a), k[1])
	e := -0.5 * (1 - x.a) * (dotSym(da, k[0]) + dotSym(db, k[1]))
	return e, va, vb, nil
}

func TestKohnShamPlumbing(t *testing.T) {
	cases := []struct {
		ks, hf    string
		charge, m int
	}{{"rks", "rhf", 0, 1}, {"uks", "uhf", 1, 2}}
	for _, c := range cases {
		m, mb := water(t, "sto-3g")
		m.Charge, m.Multiplicity = c.charge, c.m
		hf := mustRun(t, m, mb, Options{Reference: c.hf})
		for _, a := range []float64{0, 0.25, 1} {
			ks := mustRun(t, m, mb, Options{Reference: c.ks, XC: exchangeXC{hf.ERI, a}, ERI: hf.ERI})
			if d := ks.Energy - hf.Energy; math.Abs(d) > 1e-9 {
				t.Errorf("%s a=%g: E = %.12f, %s %.12f", c.ks, a, ks.Energy, c.hf, hf.Energy)
			}
			if d := ks.TwoElectron + ks.XC - hf.TwoElectron; math.Abs(d) > 1e-8 {
				t.Errorf("%s a=%g: two-electron + XC = %.10f, %s two-electron %.10f", c.ks, a, ks.TwoElectron+ks.XC, c.hf, hf.TwoElectron)
			}
		}
	}
}

// TestPerturbation: adding λ·y to the core Hamiltonian changes the
// energy by λ·tr(D y) to first order (Hellmann–Feynman; a central finite
// difference in λ, common practice, no source).
func TestPerturbation(t *testing.T) {
	m, mb := water(t, "sto-3g")
	ref := mustRun(t, m, mb, Options{Reference: "rhf"})
	dip, _ := integral.Multipole(mb, [3]float64{})
	const f = 1e-3
	var e [2]float64
	for k, sgn := range []float64{1, -1} {
		p := mat.NewSymDense(mb.NBasis, nil)
		p.ScaleSym(sgn*f, dip[1])
		r := mustRun(t, m, mb, Options{Reference: "rhf", Perturbation: p, ERI: ref.ERI})
		e[k] = r.Energy
	}
	dt := mat.NewSymDense(mb.NBasis, nil)
	dt.AddSym(ref.Da, ref.Db)
	want := dotSym(dt, dip[1])
	if slope := (e[0] - e[1]) / (2 * f); math.Abs(slope-want) > 1e-6 {
		t.Errorf("dE/dλ = %.8f, tr(D y) = %.8f", slope, want)
	}
}
