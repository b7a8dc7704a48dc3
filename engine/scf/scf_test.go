package scf

import (
	"math"
	"os"
	"strings"
	"testing"

	"moltrail/engine/basis"
	"moltrail/engine/molecule"
)

// build places a basis (library name, or a file under testdata/) on atoms
// given in bohr.
func build(t testing.TB, set string, angular basis.Angular, charge, mult int, atoms ...molecule.Atom) (*molecule.Molecule, *basis.Molecular) {
	t.Helper()
	var s *basis.Set
	var err error
	if strings.HasSuffix(set, ".json") {
		b, rerr := os.ReadFile("testdata/" + set)
		if rerr != nil {
			t.Fatal(rerr)
		}
		s, err = basis.ParseBytes(b, set)
	} else {
		s, err = basis.Builtin(set)
	}
	if err != nil {
		t.Fatal(err)
	}
	m := &molecule.Molecule{Name: "test", Atoms: atoms, Charge: charge, Multiplicity: mult}
	mb, err := basis.Build(s, m, angular)
	if err != nil {
		t.Fatal(err)
	}
	return m, mb
}

func water(t testing.TB, set string) (*molecule.Molecule, *basis.Molecular) {
	// Geometry in bohr of the water worked example below.
	return build(t, set, "", 0, 1,
		molecule.MustAtom("O", 0, -0.143225816552, 0),
		molecule.MustAtom("H", 1.638036840407, 1.136548822547, 0),
		molecule.MustAtom("H", -1.638036840407, 1.136548822547, 0))
}

func mustRun(t testing.TB, m *molecule.Molecule, mb *basis.Molecular, opt Options) *Result {
	t.Helper()
	r, err := Run(m, mb, opt)
	if err != nil {
		t.Fatal(err)
	}
	if !r.Converged {
		t.Fatalf("%s did not converge in %d iterations (last %+v)", opt.Reference, len(r.Iterations), r.Iterations[len(r.Iterations)-1])
	}
	return r
}

// TestTextbookEnergies checks small closed-shell molecules against
// published worked examples.
func TestTextbookEnergies(t *testing.T) {
	cases := []struct {
		name   string
		mol    func(testing.TB) (*molecule.Molecule, *basis.Molecular)
		want   float64
		tol    float64
		source string
	}{
		{"H2 STO-3G R=1.4", func(tb testing.TB) (*molecule.Molecule, *basis.Molecular) {
			return build(tb, "sto-3g", "", 0, 1, molecule.MustAtom("H", 0, 0, 0), molecule.MustAtom("H", 0, 0, 1.4))
		}, -1.1167, 1e-4,
			// Szabo & Ostlund, Modern Quantum Chemistry, ch. 3 (from memory).
			"Szabo & Ostlund ch. 3"},
		{"HeH+ zeta-scaled STO-3G R=1.4632", func(tb testing.TB) (*molecule.Molecule, *basis.Molecular) {
			return build(tb, "heh_sto3g_zeta.json", "", 1, 1, molecule.MustAtom("He", 0, 0, 0), molecule.MustAtom("H", 0, 0, 1.4632))
		}, -2.86066, 1e-5,
			// Szabo & Ostlund, Modern Quantum Chemistry, ch. 3, HeH+ (from memory).
			"Szabo & Ostlund ch. 3"},
		{"H2O STO-3G", func(tb testing.TB) (*molecule.Molecule, *basis.Molecular) { return water(tb, "sto-3g") },
			-74.942079928192, 1e-8,
			// A widely used published programming-project worked example (from memory).
			"programming-project worked example"},
	}
	for _, c := range cases {
		for _, guess := range []string{"sad", "core"} {
			t.Run(c.name+"/"+guess, func(t *testing.T) {
				m, mb := c.mol(t)
				r := mustRun(t, m, mb, Options{Reference: "rhf", Guess: guess})
				t.Logf("E = %.12f Eh after %d iterations", r.Energy, len(r.Iterations))
				if d := r.Energy - c.want; math.Abs(d) > c.tol {
					t.Errorf("E = %.10f, %s gives %.10f (difference %.2e, tolerance %.0e)", r.Energy, c.source, c.want, d, c.tol)
				}
				if s := r.OneElectron + r.TwoElectron + r.XC + r.NuclearRepulsion; s != r.Energy {
					t.Errorf("energy parts sum to %.15f, total %.15f", s, r.Energy)
				}
			})
		}
	}
}

// TestUnrestrictedClosedShellMatchesRHF: for a closed shell near
// equilibrium UHF and ROHF must find the RHF solution (common practice, no
// source).
func TestUnrestrictedClosedShellMatchesRHF(t *testing.T) {
	m, mb := water(t, "sto-3g")
	r := mustRun(t, m, mb, Options{Reference: "rhf"})
	for _, ref := range []string{"uhf", "rohf"} {
		u := mustRun(t, m, mb, Options{Reference: ref})
		if math.Abs(u.Energy-r.Energy) > 1e-9 {
			t.Errorf("%s E = %.12f, rhf %.12f", ref, u.Energy, r.Energy)
		}
		if math.Abs(u.S2) > 1e-9 {
			t.Errorf("%s <S²> = %g for a closed shell", ref, u.S2)
		}
	}
}

func TestNonConvergenceIsAResult(t *testing.T) {
	m, mb := water(t, "sto-3g")
	r, err := Run(m, mb, Options{Reference: "rhf", MaxIter: 2})
	if err != nil {
		t.Fatal(err)
	}
	if r.Converged {
		t.Error("reported converged after 2 iterations")
	}
	if len(r.Iterations) != 2 {
		t.Fatalf("%d iterations recorded, want 2", len(r.Iterations))
	}
	for i, it := range r.Iterations {
		if it.Iter != i+1 || it.Energy == 0 {
			t.Errorf("iteration record %d: %+v", i, it)
		}
	}
	if r.Ca == nil || r.Da == nil || len(r.Ea) != r.NMO {
		t.Error("a non-converged result lacks orbitals or densities")
	}
}

func TestImpossibleInputs(t *testing.T) {
	m, mb := water(t, "sto-3g")
	cases := []struct {
		name string
		opt  Options
		mod  func(*molecule.Molecule)
		want string
	}{
		{"no reference", Options{}, nil, "no reference"},
		{"unknown reference", Options{Reference: "mcscf"}, nil, "not one of"},
		{"rks without functional", Options{Reference: "rks"}, nil, "functional"},
		{"rhf open shell", Options{Reference: "rhf"}, func(m *molecule.Molecule) { m.Charge = 1; m.Multiplicity = 2 }, "closed shell"},
		{"bad guess", Options{Reference: "rhf", Guess: "huckel"}, nil, "guess"},
		{"negative tolerance", Options{Reference: "rhf", EnergyTolHartree: -1}, nil, "positive"},
		{"negative shift", Options{Reference: "rhf", LevelShiftHartree: -0.1}, nil, "level shift"},
		{"too many electrons", Options{Reference: "uhf"}, func(m *molecule.Molecule) { m.Charge = -6; m.Multiplicity = 1 }, "orbitals"},
		{"bad multiplicity", Options{Reference: "uhf"}, func(m *molecule.Molecule) { m.Multiplicity = 2 }, "multiplicity"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			mm := m.Clone()
			if c.mod != nil {
				c.mod(mm)
			}
			_, err := Run(mm, mb, c.opt)
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Errorf("error %v, want one mentioning %q", err, c.want)
			}
		})
	}
}

// TestSpinBrokenH2: stretched H2 (R = 4 a0, STO-3G): with HOMO–LUMO
// mixing UHF leaves the restricted solution for a lower energy with
// 0 < ⟨S²⟩ < 1; without it the restricted solution is kept (common
// practice, no source).
func TestSpinBrokenH2(t *testing.T) {
	m, mb := build(t, "sto-3g", "", 0, 1, molecule.MustAtom("H", 0, 0, 0), molecule.MustAtom("H", 0, 0, 4))
	r := mustRun(t, m, mb, Options{Reference: "rhf"})
	for _, guess := range []string{"sad", "core"} {
		u := mustRun(t, m, mb, Options{Reference: "uhf", Guess: guess})
		if math.Abs(u.Energy-r.Energy) > 1e-9 || math.Abs(u.S2) > 1e-9 {
			t.Errorf("%s, no mixing: UHF E = %.10f <S²> = %.3g, RHF %.10f", guess, u.Energy, u.S2, r.Energy)
		}
		b := mustRun(t, m, mb, Options{Reference: "uhf", Guess: guess, GuessMixing: math.Pi / 8})
		if !(b.Energy < r.Energy-1e-3) || !(b.S2 > 0.1 && b.S2 < 1) {
			t.Errorf("%s, mixing: UHF E = %.10f <S²> = %.4f, RHF %.10f", guess, b.Energy, b.S2, r.Energy)
		}
		t.Logf("%s: RHF %.8f, broken-symmetry UHF %.8f, <S²> %.4f", guess, r.Energy, b.Energy, b.S2)
	}
}

// TestLevelShiftSameSolution: a level shift changes the path, not the
// converged energy (common practice, no source).
func TestLevelShiftSameSolution(t *testing.T) {
	m, mb := build(t, "sto-3g", "", 0, 2, molecule.MustAtom("He", 0, 0, 0), molecule.MustAtom("H", 0, 0, 1.5))
	for _, ref := range []string{"uhf", "rohf"} {
		a := mustRun(t, m, mb, Options{Reference: ref})
		b := mustRun(t, m, mb, Options{Reference: ref, LevelShiftHartree: 0.5})
		if math.Abs(a.Energy-b.Energy) > 1e-9 {
			t.Errorf("%s: E = %.12f without shift, %.12f with", ref, a.Energy, b.Energy)
		}
		t.Logf("%s: %.10f (%d iterations), shifted %d iterations, <S²> %.6f", ref, a.Energy, len(a.Iterations), len(b.Iterations), a.S2)
	}
}

// TestLinearDependence: two helium atoms 1e-4 a0 apart in 6-31G make the
// overlap nearly singular; the near-dependent combinations are removed and
// the run still converges (common practice, no source).
func TestLinearDependence(t *testing.T) {
	m, mb := build(t, "6-31g", "", 0, 1, molecule.MustAtom("He", 0, 0, 0), molecule.MustAtom("He", 0, 0, 1e-4))
	for _, guess := range []string{"sad", "core"} {
		r := mustRun(t, m, mb, Options{Reference: "rhf", Guess: guess})
		if r.DroppedFunctions == 0 || r.NMO != mb.NBasis-r.DroppedFunctions {
			t.Errorf("%s: dropped %d, NMO %d of %d functions", guess, r.DroppedFunctions, r.NMO, mb.NBasis)
		}
		if _, c := r.Ca.Dims(); c != r.NMO || len(r.Ea) != r.NMO {
			t.Errorf("%s: %d orbital columns, %d energies, NMO %d", guess, c, len(r.Ea), r.NMO)
		}
		t.Logf("%s: E = %.8f, dropped %d, %d iterations", guess, r.Energy, r.DroppedFunctions, len(r.Iterations))
	}
}

// TestTransitionMetalGuess: quartet FeH (6-31G, R = 2.9 a0) from the atomic
// guess. Filling the atomic orbitals by energy alone gave iron a 4p⁶4s²
// density from which UHF stalled; with the 3d⁶4s² configuration both UHF
// and ROHF converge, and UHF lies below ROHF (variational freedom; common
// practice, no source).
func TestTransitionMetalGuess(t *testing.T) {
	m, mb := build(t, "6-31g", "", 0, 4, molecule.MustAtom("Fe", 0, 0, 0), molecule.MustAtom("H", 0, 0, 2.9))
	u := mustRun(t, m, mb, Options{Reference: "uhf", MaxIter: 60})
	r := mustRun(t, m, mb, Options{Reference: "rohf", MaxIter: 60})
	if !(u.Energy < r.Energy) || !(u.S2 >= 3.75) {
		t.Errorf("UHF E = %.8f (<S²> %.4f), ROHF E = %.8f", u.Energy, u.S2, r.Energy)
	}
	t.Logf("UHF %.8f in %d iterations, <S²> %.4f; ROHF %.8f in %d", u.Energy, len(u.Iterations), u.S2, r.Energy, len(r.Iterations))
}
