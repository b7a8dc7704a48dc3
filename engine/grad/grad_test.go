package grad

import (
	"math"
	"testing"

	"moltrail/engine/basis"
	"moltrail/engine/dft"
	"moltrail/engine/molecule"
	"moltrail/engine/scf"
)

// tight SCF convergence for finite-difference comparisons
func tightSCF(ref string) scf.Options {
	return scf.Options{Reference: ref, EnergyTolHartree: 1e-12, DensityTol: 1e-10, GradientTol: 1e-9, Threads: 2}
}

func water() *molecule.Molecule {
	return &molecule.Molecule{Name: "water (distorted)", Atoms: []molecule.Atom{
		molecule.MustAtom("O", 0.05, -0.1, 0.02),
		molecule.MustAtom("H", 1.45, 1.1, 0.1),
		molecule.MustAtom("H", -1.6, 0.95, -0.25),
	}, Multiplicity: 1}
}

// amidogen NH2, a doublet radical, distorted
func amidogen() *molecule.Molecule {
	return &molecule.Molecule{Name: "NH2 (distorted)", Atoms: []molecule.Atom{
		molecule.MustAtom("N", 0.0, 0.05, -0.1),
		molecule.MustAtom("H", 1.55, 1.0, 0.05),
		molecule.MustAtom("H", -1.45, 1.2, 0.2),
	}, Multiplicity: 2}
}

func build(t testing.TB, set string, mol *molecule.Molecule, ang basis.Angular) *basis.Molecular {
	t.Helper()
	s, err := basis.Builtin(set)
	if err != nil {
		t.Fatal(err)
	}
	mb, err := basis.Build(s, mol, ang)
	if err != nil {
		t.Fatal(err)
	}
	return mb
}

type gradCase struct {
	name   string
	mol    *molecule.Molecule
	set    string
	ang    basis.Angular
	opts   func(mol *molecule.Molecule, mb *basis.Molecular) (scf.Options, Options)
	coords [][2]int // (atom, direction) checked by finite differences
	tol    float64
	// sumTol bounds |Σ_atoms g| per axis (0: 1e-7); Kohn–Sham gradients
	// without grid-weight derivatives are not exactly translation invariant
	sumTol float64
}

// checkAgainstFD compares the analytic gradient with central differences
// of SCF energies, E(x+h) − E(x−h) over 2h with h = 5e-4 bohr (truncation
// error ~h²/6·E”' ≈ 1e-8 Eh/bohr here; common practice, no source), and
// checks that the components sum to zero along each axis.
func checkAgainstFD(t *testing.T, c gradCase) {
	t.Helper()
	energy := func(mol *molecule.Molecule) (*scf.Result, *basis.Molecular, Options) {
		mb := build(t, c.set, mol, c.ang)
		so, gopt := c.opts(mol, mb)
		r, err := scf.Run(mol, mb, so)
		if err != nil {
			t.Fatal(err)
		}
		if !r.Converged {
			t.Fatalf("%s: SCF did not converge", c.name)
		}
		return r, mb, gopt
	}
	sr, mb, gopt := energy(c.mol)
	g, err := SCF(c.mol, mb, sr, gopt)
	if err != nil {
		t.Fatal(err)
	}
	var sum [3]float64
	for k, v := range g {
		sum[k%3] += v
	}
	sumTol := c.sumTol
	if sumTol == 0 {
		sumTol = 1e-7
	}
	for d, s := range sum {
		if math.Abs(s) > sumTol {
			t.Errorf("%s: gradient components along axis %d sum to %.2e", c.name, d, s)
		}
	}
	const h = 5e-4
	worst := 0.0
	defer func() { t.Logf("%s: largest |analytic − finite difference| %.1e Eh/bohr", c.name, worst) }()
	for _, ad := range c.coords {
		atom, d := ad[0], ad[1]
		e := func(s float64) float64 {
			m := c.mol.Clone()
			m.Atoms[atom].PosBohr[d] += s
			r, _, _ := energy(m)
			return r.Energy
		}
		want := (e(h) - e(-h)) / (2 * h)
		worst = math.Max(worst, math.Abs(g[3*atom+d]-want))
		if got := g[3*atom+d]; math.Abs(got-want) > c.tol {
			t.Errorf("%s: atom %d axis %d: analytic %.9f, finite differences %.9f (difference %.1e)", c.name, atom+1, d, got, want, got-want)
		}
	}
}

func hfOpts(ref string) func(*molecule.Molecule, *basis.Molecular) (scf.Options, Options) {
	return func(*molecule.Molecule, *basis.Molecular) (scf.Options, Options) {
		return tightSCF(ref), Options{Threads: 2}
	}
}

func TestHartreeFockGradients(t *testing.T) {
	cases := []gradCase{
		{"RHF/cc-pVTZ water (s, p, d, f)", water(), "cc-pvtz", basis.Spherical, hfOpts("rhf"), [][2]int{{0, 0}, {0, 2}, {1, 1}, {2, 0}}, 1e-6, 0},
		{"RHF/6-31G* Cartesian water", water(), "6-31g*", basis.Cartesian, hfOpts("rhf"), [][2]int{{0, 1}, {1, 0}, {2, 2}}, 1e-6, 0},
		{"UHF/cc-pVDZ NH2 radical", amidogen(), "cc-pvdz", basis.Spherical, hfOpts("uhf"), [][2]int{{0, 0}, {0, 1}, {1, 2}, {2, 1}}, 1e-6, 0},
		{"ROHF/cc-pVDZ NH2 radical", amidogen(), "cc-pvdz", basis.Spherical, hfOpts("rohf"), [][2]int{{0, 0}, {0, 1}, {1, 2}, {2, 1}}, 1e-6, 0},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) { checkAgainstFD(t, c) })
	}
}

func ksOpts(ref, functional, level string) func(*molecule.Molecule, *basis.Molecular) (scf.Options, Options) {
	return func(mol *molecule.Molecule, mb *basis.Molecular) (scf.Options, Options) {
		spec, err := dft.Level(level)
		if err != nil {
			panic(err)
		}
		xc, err := dft.NewXC(mol, mb, functional, spec, 2)
		if err != nil {
			panic(err)
		}
		so := tightSCF(ref)
		so.XC = xc
		return so, Options{Threads: 2, XC: xc}
	}
}

// Kohn–Sham gradients include the grid-weight derivatives, so they are the
// exact derivative of the quadrature and agree with finite differences on
// the coarse grid too (without them the difference there is ~1e-5 Eh/bohr).
func TestKohnShamGradients(t *testing.T) {
	cases := []gradCase{
		{"RKS/SVWN5/cc-pVDZ water", water(), "cc-pvdz", basis.Spherical, ksOpts("rks", "slater+vwn5", "coarse"), [][2]int{{0, 0}, {1, 1}, {2, 2}}, 1e-6, 0},
		{"RKS/PBE/6-31G* Cartesian water", water(), "6-31g*", basis.Cartesian, ksOpts("rks", "pbe-x+pbe-c", "coarse"), [][2]int{{0, 1}, {1, 0}}, 1e-6, 0},
		{"RKS/B3LYP/cc-pVDZ water", water(), "cc-pvdz", basis.Spherical, ksOpts("rks", "b3lyp(vwn-rpa)", "coarse"), [][2]int{{0, 2}, {2, 0}}, 1e-6, 0},
		{"UKS/BLYP/cc-pVDZ NH2 radical", amidogen(), "cc-pvdz", basis.Spherical, ksOpts("uks", "b88+lyp", "coarse"), [][2]int{{0, 0}, {1, 2}}, 1e-6, 0},
		{"UKS/PBE0/6-31G NH2 radical", amidogen(), "6-31g", basis.Spherical, ksOpts("uks", "pbe0", "coarse"), [][2]int{{2, 1}}, 1e-6, 0},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) { checkAgainstFD(t, c) })
	}
}

// The same bits whatever the thread count.
func TestGradientThreadDeterminism(t *testing.T) {
	mol := water()
	mb := build(t, "6-31g*", mol, basis.Cartesian)
	sr, err := scf.Run(mol, mb, tightSCF("rhf"))
	if err != nil {
		t.Fatal(err)
	}
	g1, err := SCF(mol, mb, sr, Options{Threads: 1})
	if err != nil {
		t.Fatal(err)
	}
	g3, err := SCF(mol, mb, sr, Options{Threads: 3})
	if err != nil {
		t.Fatal(err)
	}
	for k := range g1 {
		if g1[k] != g3[k] {
			t.Fatalf("component %d: %.17g with one thread, %.17g with three", k, g1[k], g3[k])
		}
	}
}

// Results that have no gradient are refused with an error.
func TestGradientRefusals(t *testing.T) {
	mol := water()
	mb := build(t, "sto-3g", mol, basis.Spherical)
	sr, err := scf.Run(mol, mb, scf.Options{Reference: "rhf"})
	if err != nil {
		t.Fatal(err)
	}
	bad := *sr
	bad.Converged = false
	if _, err := SCF(mol, mb, &bad, Options{}); err == nil {
		t.Error("a non-converged SCF was accepted")
	}
	ks := *sr
	ks.Reference = "rks"
	if _, err := SCF(mol, mb, &ks, Options{}); err == nil {
		t.Error("a Kohn–Sham result without its functional was accepted")
	}
	moved := mol.Clone()
	moved.Atoms[0].PosBohr[0] += 0.1
	if _, err := SCF(moved, mb, sr, Options{}); err == nil {
		t.Error("a basis placed on another geometry was accepted")
	}
}
