package vib

import (
	"math"
	"strings"
	"testing"

	"moltrail/engine/molecule"
	"moltrail/engine/opt"
)

// model is a valence force field: harmonic stretches of the listed bonds
// (force constant kr, rest length r0) and harmonic bends (kθ, θ0), with its
// analytic gradient.
type model struct {
	bonds  [][2]int
	kr, r0 float64
	bends  [][3]int
	kt, t0 float64
}

func (m model) energy(x []float64) float64 {
	e := 0.0
	for _, b := range m.bonds {
		r := dist(x, b[0], b[1])
		e += 0.5 * m.kr * (r - m.r0) * (r - m.r0)
	}
	for _, a := range m.bends {
		t := bend(x, a[0], a[1], a[2])
		e += 0.5 * m.kt * (t - m.t0) * (t - m.t0)
	}
	return e
}

// gradient by 5-point differences of the analytic energy (exact enough, 1e-11).
func (m model) gradient(x []float64) (float64, []float64, error) {
	g := make([]float64, len(x))
	const h = 1e-4
	for i := range x {
		y := append([]float64(nil), x...)
		f := func(s float64) float64 { y[i] = x[i] + s; return m.energy(y) }
		g[i] = (-f(2*h) + 8*f(h) - 8*f(-h) + f(-2*h)) / (12 * h)
	}
	return m.energy(x), g, nil
}

func dist(x []float64, a, b int) float64 {
	d := 0.0
	for k := 0; k < 3; k++ {
		v := x[3*a+k] - x[3*b+k]
		d += v * v
	}
	return math.Sqrt(d)
}

func bend(x []float64, i, j, k int) float64 {
	var u, v [3]float64
	for c := 0; c < 3; c++ {
		u[c] = x[3*i+c] - x[3*j+c]
		v[c] = x[3*k+c] - x[3*j+c]
	}
	d := (u[0]*v[0] + u[1]*v[1] + u[2]*v[2]) / math.Sqrt((u[0]*u[0]+u[1]*u[1]+u[2]*u[2])*(v[0]*v[0]+v[1]*v[1]+v[2]*v[2]))
	return math.Acos(math.Max(-1, math.Min(1, d)))
}

func mol(atoms ...molecule.Atom) *molecule.Molecule { return &molecule.Molecule{Atoms: atoms} }

func mass(sym string) float64 {
	e, _ := molecule.Lookup(sym)
	return e.MassDalton * molecule.DaltonElectronMass
}

// A harmonic diatomic has ω = √(k/μ) (textbook, no source needed beyond
// the definition); both difference routes must give it.
func TestDiatomic(t *testing.T) {
	m := mol(molecule.MustAtom("H", 0.1, -0.2, 0.3), molecule.MustAtom("F", 0.5, 0.9, 1.8))
	x := opt.Coordinates(m)
	r0 := dist(x, 0, 1)
	ff := model{bonds: [][2]int{{0, 1}}, kr: 0.6, r0: r0}
	mH, mF := mass("H"), mass("F")
	mu := mH * mF / (mH + mF)
	want := math.Sqrt(0.6/mu) * HartreePerCm
	// The reduced mass of a mode with unit Cartesian displacement (not the
	// two-body μ): for a diatomic, mH mF (mH + mF) / (mH² + mF²).
	mred := mH * mF * (mH + mF) / (mH*mH + mF*mF)
	for name, build := range map[string]func() (*Hessian, error){
		"gradients": func() (*Hessian, error) { return FromGradients(x, ff.gradient, Options{StepBohr: 5e-3, Workers: 2}) },
		"energies": func() (*Hessian, error) {
			return FromEnergies(x, func(y []float64) (float64, error) { return ff.energy(y), nil }, Options{StepBohr: 1e-2})
		},
	} {
		H, err := build()
		if err != nil {
			t.Fatal(err)
		}
		a, err := Analyse(m, H.H, H.Gradient)
		if err != nil {
			t.Fatal(err)
		}
		if len(a.WavenumbersPerCm) != 1 || !a.Linear || a.Character != Minimum {
			t.Fatalf("%s: %+v", name, a)
		}
		if got := a.WavenumbersPerCm[0]; math.Abs(got-want) > 1e-6*want {
			t.Errorf("%s: ν = %.6f cm⁻¹, want %.6f", name, got, want)
		}
		if math.Abs(a.ZeroPointHartree-0.5*want/HartreePerCm) > 1e-9 {
			t.Errorf("%s: ZPE %g", name, a.ZeroPointHartree)
		}
		if mr := a.ReducedMassesDalton[0] * molecule.DaltonElectronMass; math.Abs(mr-mred) > 1e-6*mred {
			t.Errorf("%s: reduced mass %g, want %g electron masses", name, mr, mred)
		}
		if H.Calculations != map[string]int{"gradients": 3, "energies": 3}[name] {
			t.Errorf("%s: %d calculations", name, H.Calculations)
		}
	}
	// The wavenumber of one hartree, from CODATA 2018 constants:
	// 219474.6313632 cm⁻¹ (CODATA 2018 derived value, from memory).
	if math.Abs(HartreePerCm-219474.6313632) > 1e-4 {
		t.Errorf("hartree = %.7f cm⁻¹", HartreePerCm)
	}
}

// A bent triatomic at its force-field minimum: 3 modes, all real, the same
// for any orientation; the gradient and energy routes agree; the modes are
// orthogonal in the mass metric and free of rigid motion.
func TestBentTriatomic(t *testing.T) {
	th := 52.0 * math.Pi / 180
	m := mol(molecule.MustAtom("O", 0, 0, 0), molecule.MustAtom("H", 0, 1.8*math.Sin(th), 1.8*math.Cos(th)), molecule.MustAtom("H", 0, -1.8*math.Sin(th), 1.8*math.Cos(th)))
	ff := model{bonds: [][2]int{{0, 1}, {0, 2}}, kr: 0.5, r0: 1.8, bends: [][3]int{{1, 0, 2}}, kt: 0.16, t0: 2 * th}
	x := opt.Coordinates(m)
	H, err := FromGradients(x, ff.gradient, Options{StepBohr: 5e-3})
	if err != nil {
		t.Fatal(err)
	}
	a, err := Analyse(m, H.H, H.Gradient)
	if err != nil {
		t.Fatal(err)
	}
	if len(a.WavenumbersPerCm) != 3 || a.Linear || a.Character != Minimum || a.Imaginary != 0 {
		t.Fatalf("analysis %+v", a)
	}
	He, err := FromEnergies(x, func(y []float64) (float64, error) { return ff.energy(y), nil }, Options{StepBohr: 1e-2, Workers: 3})
	if err != nil {
		t.Fatal(err)
	}
	ae, _ := Analyse(m, He.H, He.Gradient)
	for k := range a.WavenumbersPerCm {
		if d := math.Abs(a.WavenumbersPerCm[k] - ae.WavenumbersPerCm[k]); d > 0.05 {
			t.Errorf("mode %d: %.3f (gradients) vs %.3f cm⁻¹ (energies)", k, a.WavenumbersPerCm[k], ae.WavenumbersPerCm[k])
		}
	}
	if He.Calculations != 1+3+9 {
		t.Errorf("%d energies for 3 internal directions", He.Calculations)
	}
	// Turn and shift the molecule: the same wavenumbers, to the O(h²) error
	// of the differences (their directions turn with the frame only up to
	// the arbitrary basis of the internal space).
	c, s := math.Cos(0.7), math.Sin(0.7)
	turned := m.Clone()
	for i := range turned.Atoms {
		p := turned.Atoms[i].PosBohr
		turned.Atoms[i].PosBohr = [3]float64{c*p[0] - s*p[1] + 0.3, s*p[0] + c*p[1] - 1, p[2] + 2}
	}
	Ht, _ := FromGradients(opt.Coordinates(turned), ff.gradient, Options{StepBohr: 5e-3})
	at, _ := Analyse(turned, Ht.H, Ht.Gradient)
	for k := range a.WavenumbersPerCm {
		if d := math.Abs(a.WavenumbersPerCm[k] - at.WavenumbersPerCm[k]); d > 0.01 {
			t.Errorf("mode %d moved with the frame: %.6f vs %.6f", k, a.WavenumbersPerCm[k], at.WavenumbersPerCm[k])
		}
	}
	rigid := opt.RigidBasis(x, nil)
	for k, c := range a.Modes {
		for _, r := range rigid {
			// Cartesian modes need not be orthogonal to the unweighted rigid
			// vectors, but M·c is orthogonal to the rigid motions.
			d := 0.0
			for i := range c {
				d += r[i] * c[i] * mass(m.Atoms[i/3].Symbol)
			}
			if math.Abs(d) > 1e-8*mass("O") {
				t.Errorf("mode %d has a rigid-motion component %g", k, d)
			}
		}
	}
}

// A saddle point (a bend pushed to negative curvature) has one imaginary
// mode; a geometry away from the minimum is not stationary.
func TestSaddleAndNonStationary(t *testing.T) {
	th := 52.0 * math.Pi / 180
	m := mol(molecule.MustAtom("O", 0, 0, 0), molecule.MustAtom("H", 0, 1.8*math.Sin(th), 1.8*math.Cos(th)), molecule.MustAtom("H", 0, -1.8*math.Sin(th), 1.8*math.Cos(th)))
	ff := model{bonds: [][2]int{{0, 1}, {0, 2}}, kr: 0.5, r0: 1.8, bends: [][3]int{{1, 0, 2}}, kt: -0.1, t0: 2 * th}
	x := opt.Coordinates(m)
	H, _ := FromGradients(x, ff.gradient, Options{StepBohr: 5e-3})
	a, _ := Analyse(m, H.H, H.Gradient)
	if a.Character != SaddlePoint || a.Imaginary != 1 || a.WavenumbersPerCm[0] >= 0 {
		t.Errorf("saddle: %+v", a)
	}
	ff.kt, ff.r0 = 0.16, 1.7
	H, _ = FromGradients(x, ff.gradient, Options{StepBohr: 5e-3})
	a, _ = Analyse(m, H.H, H.Gradient)
	if a.Character != NotStationary || math.Abs(a.MaxForce-2*0.5*0.1*math.Cos(th)) > 1e-6 {
		t.Errorf("stretched: character %s, max force %g", a.Character, a.MaxForce)
	}
}

func TestProgressAndErrors(t *testing.T) {
	m := mol(molecule.MustAtom("H", 0, 0, 0), molecule.MustAtom("H", 0, 0, 1.4))
	var b strings.Builder
	ff := model{bonds: [][2]int{{0, 1}}, kr: 0.4, r0: 1.4}
	if _, err := FromGradients(opt.Coordinates(m), ff.gradient, Options{StepBohr: 5e-3, Progress: &b}); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(b.String(), "hessian: gradient 3 of 3 done") || strings.Count(b.String(), "\n") != 3 {
		t.Errorf("progress %q", b.String())
	}
	_, err := FromEnergies(opt.Coordinates(m), func(y []float64) (float64, error) { return 0, errFake }, Options{StepBohr: 1e-2})
	if err == nil || !strings.Contains(err.Error(), "displaced calculation 1 of 3: no energy") {
		t.Errorf("error %v", err)
	}
	if _, err := FromGradients(opt.Coordinates(m), ff.gradient, Options{}); err == nil {
		t.Error("zero step accepted")
	}
}

type fakeErr struct{}

func (fakeErr) Error() string { return "no energy" }

var errFake error = fakeErr{}
