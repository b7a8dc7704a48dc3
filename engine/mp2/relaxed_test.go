package mp2

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/basis"
	"moltrail/engine/integral"
	"moltrail/engine/molecule"
	"moltrail/engine/scf"
)

// relaxedDipole is the total dipole (e·a0) about origin of the relaxed density.
func relaxedDipole(mol *molecule.Molecule, mb *basis.Molecular, r *Result, origin [3]float64) [3]float64 {
	return dipoleOf(mol, mb, r.RelaxedDa, r.RelaxedDb, origin)
}

// dipoleOf is the total dipole (e·a0) about origin of the density Da + Db.
func dipoleOf(mol *molecule.Molecule, mb *basis.Molecular, Da, Db *mat.SymDense, origin [3]float64) [3]float64 {
	dip, _ := integral.Multipole(mb, origin)
	var d [3]float64
	D := mat.NewSymDense(mb.NBasis, nil)
	D.AddSym(Da, Db)
	for k := 0; k < 3; k++ {
		for _, a := range mol.Atoms {
			d[k] += float64(a.Z) * (a.PosBohr[k] - origin[k])
		}
		n := mb.NBasis
		for i := 0; i < n; i++ {
			for j := 0; j < n; j++ {
				d[k] -= D.At(i, j) * dip[k].At(i, j)
			}
		}
	}
	return d
}

// TestRelaxedMatchesFiniteField: the analytic relaxed dipole is the field
// derivative of the MP2 (or SCS-MP2) energy (internal consistency, no outside value).
func TestRelaxedMatchesFiniteField(t *testing.T) {
	cases := []struct {
		name   string
		ref    string
		frozen bool
		mol    func(testing.TB) (*molecule.Molecule, *basis.Molecular)
		scs    bool
	}{
		{"water rhf scs", "rhf", true, waterSTO3G, true},
		{"water cation uhf scs", "uhf", false, func(tb testing.TB) (*molecule.Molecule, *basis.Molecular) {
			return build(tb, "6-31g", true, 1, 2, molecule.MustAtom("O", 0, -0.143225816552, 0.05),
				molecule.MustAtom("H", 1.638036840407, 1.136548822547, 0), molecule.MustAtom("H", -1.538036840407, 1.136548822547, 0.1))
		}, true},
		{"water rhf", "rhf", false, waterSTO3G, false},
		{"water rhf fc", "rhf", true, waterSTO3G, false},
		{"water uhf fc", "uhf", true, waterSTO3G, false},
		{"OH uhf", "uhf", false, func(tb testing.TB) (*molecule.Molecule, *basis.Molecular) {
			return build(tb, "6-31g", true, 0, 2, molecule.MustAtom("O", 0.1, 0, 0), molecule.MustAtom("H", 0.3, 0.2, 1.83))
		}, false},
		{"OH uhf fc", "uhf", true, func(tb testing.TB) (*molecule.Molecule, *basis.Molecular) {
			return build(tb, "6-31g", true, 0, 2, molecule.MustAtom("O", 0.1, 0, 0), molecule.MustAtom("H", 0.3, 0.2, 1.83))
		}, false},
	}
	for _, c := range cases {
		m, mb := c.mol(t)
		so := scf.Options{Reference: c.ref, EnergyTolHartree: 1e-12, DensityTol: 1e-10, GradientTol: 1e-9}
		sr := runSCF(t, m, mb, so)
		ss, os := 1.0, 1.0
		if c.scs {
			ss, os = SCSSameSpin, SCSOppositeSpin
		}
		r, err := Run(m, mb, sr, Options{Relaxed: true, FrozenCore: c.frozen, SameSpinScale: ss, OppositeSpinScale: os})
		if err != nil {
			t.Fatal(err)
		}
		origin := [3]float64{}
		got := relaxedDipole(m, mb, r, origin)
		so.ERI = sr.ERI
		ff, err := FiniteFieldDipole(m, mb, so, Options{FrozenCore: c.frozen}, ss, os, 1e-3, origin)
		if err != nil {
			t.Fatal(err)
		}
		for k := 0; k < 3; k++ {
			if math.Abs(got[k]-ff.DipoleAU[k]) > 1e-8 {
				t.Errorf("%s: dipole %c analytic %.8f finite field %.8f (±%.1e), z-vector %d its", c.name, "xyz"[k], got[k], ff.DipoleAU[k], ff.ErrorEstimateAU[k], r.ZVectorIterations)
			}
		}
		t.Logf("%s: analytic %.10f finite field %.10f (est. %.1e)", c.name, got, ff.DipoleAU, ff.ErrorEstimateAU)
	}
}

// TestRelaxedSecondMoment: the relaxed density also gives the derivative
// of the MP2 energy with respect to a perturbation g·⟨μ|(r−O)_i(r−O)_j|ν⟩,
// i.e. the relaxed second moments (and so the relaxed quadrupole):
// dE/dg = Σ_μν D^relaxed_μν ⟨μ|r_i r_j|ν⟩, checked by central differences
// (steps h and 2h, Richardson) for every component (internal consistency).
// The water cation (²B1, no degeneracy that a field gradient could split) is used.
func TestRelaxedSecondMoment(t *testing.T) {
	m, mb := build(t, "6-31g", true, 1, 2,
		molecule.MustAtom("O", 0, -0.143225816552, 0.05),
		molecule.MustAtom("H", 1.638036840407, 1.136548822547, 0),
		molecule.MustAtom("H", -1.538036840407, 1.136548822547, 0.1))
	so := scf.Options{Reference: "uhf", EnergyTolHartree: 1e-12, DensityTol: 1e-10, GradientTol: 1e-9}
	sr := runSCF(t, m, mb, so)
	r, err := Run(m, mb, sr, Options{Relaxed: true, FrozenCore: true})
	if err != nil {
		t.Fatal(err)
	}
	origin := [3]float64{0.2, -0.1, 0.9}
	_, second := integral.Multipole(mb, origin)
	D := mat.NewSymDense(mb.NBasis, nil)
	D.AddSym(r.RelaxedDa, r.RelaxedDb)
	so.ERI = sr.ERI
	energy := func(k int, g float64) float64 {
		o := so
		v := mat.NewSymDense(mb.NBasis, nil)
		v.ScaleSym(g, second[k])
		o.Perturbation = v
		s := runSCF(t, m, mb, o)
		q, err := Run(m, mb, s, Options{FrozenCore: true})
		if err != nil {
			t.Fatal(err)
		}
		return s.Energy + q.CorrelationHartree
	}
	const h = 1e-3
	for k := 0; k < 6; k++ {
		d1 := (energy(k, h) - energy(k, -h)) / (2 * h)
		d2 := (energy(k, 2*h) - energy(k, -2*h)) / (4 * h)
		fd := (4*d1 - d2) / 3
		an := 0.0
		for i := 0; i < mb.NBasis; i++ {
			for j := 0; j < mb.NBasis; j++ {
				an += D.At(i, j) * second[k].At(i, j)
			}
		}
		if math.Abs(an-fd) > 1e-7 {
			t.Errorf("second moment %d: analytic %.9f, finite difference %.9f (h vs Richardson %.1e)", k, an, fd, math.Abs(d1-fd))
		}
	}
}
