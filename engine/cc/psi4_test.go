package cc

import (
	"encoding/json"
	"math"
	"os"
	"testing"

	"moltrail/engine/basis"
	"moltrail/engine/molecule"
	"moltrail/engine/scf"
)

type psi4Case struct {
	Name       string  `json:"name"`
	Geometry   [][]any `json:"geometry_bohr"`
	Basis      string  `json:"basis"`
	Puream     bool    `json:"puream"`
	FreezeCore bool    `json:"freeze_core"`
	NFrozen    int     `json:"n_frozen_core_orbitals"`
	SCF        float64 `json:"scf_energy_hartree"`
	MP2        float64 `json:"mp2_correlation_energy_hartree"`
	CCSD       float64 `json:"ccsd_correlation_energy_hartree"`
	Triples    float64 `json:"triples_correction_hartree"`
	StepAU     float64 `json:"step_au"`
	Field      []struct {
		Lambda []float64 `json:"perturb_dipole"`
		Energy float64   `json:"ccsd_t_total_energy_hartree"`
	} `json:"field_energies"`
	TwoPoint  float64 `json:"ccsd_t_dipole_z_two_point_au"`
	FourPoint float64 `json:"ccsd_t_dipole_z_four_point_au"`
}

type psi4File struct {
	Cases      []psi4Case `json:"cases"`
	FieldCases []psi4Case `json:"field_cases"`
}

func loadPsi4(t testing.TB) psi4File {
	t.Helper()
	b, err := os.ReadFile("../../testdata/psi4/cc.json")
	if err != nil {
		t.Fatal(err)
	}
	var f psi4File
	if err := json.Unmarshal(b, &f); err != nil {
		t.Fatal(err)
	}
	return f
}

func (c psi4Case) system(t testing.TB) (*molecule.Molecule, *basis.Molecular) {
	t.Helper()
	var atoms []molecule.Atom
	for _, g := range c.Geometry {
		atoms = append(atoms, molecule.MustAtom(g[0].(string), g[1].(float64), g[2].(float64), g[3].(float64)))
	}
	m := &molecule.Molecule{Name: c.Name, Atoms: atoms, Multiplicity: 1}
	s, err := basis.Builtin(c.Basis)
	if err != nil {
		t.Fatal(err)
	}
	ang := basis.Cartesian
	if c.Puream {
		ang = basis.Spherical
	}
	mb, err := basis.Build(s, m, ang)
	if err != nil {
		t.Fatal(err)
	}
	return m, mb
}

func rhf(t testing.TB, m *molecule.Molecule, mb *basis.Molecular) *scf.Result {
	t.Helper()
	r, err := scf.Run(m, mb, scf.Options{Reference: "rhf", EnergyTolHartree: 1e-12, DensityTol: 1e-10, GradientTol: 1e-9})
	if err != nil {
		t.Fatal(err)
	}
	if !r.Converged {
		t.Fatal("RHF did not converge")
	}
	return r
}

// Closed-shell CCSD and (T) against psi4 1.3.2 (CCENERGY, conventional
// integrals, r_convergence 1e-10): testdata/psi4/cc.json from gen_cc.py.
func TestPsi4CCSDT(t *testing.T) {
	f := loadPsi4(t)
	for _, c := range f.Cases {
		t.Run(c.Name, func(t *testing.T) {
			m, mb := c.system(t)
			ref := rhf(t, m, mb)
			if d := ref.Energy - c.SCF; math.Abs(d) > 1e-9 {
				t.Fatalf("SCF energy %.12f, psi4 %.12f", ref.Energy, c.SCF)
			}
			frozen := 0
			if c.FreezeCore {
				frozen = m.CoreOrbitals()
			}
			if frozen != c.NFrozen {
				t.Fatalf("frozen %d, psi4 froze %d", frozen, c.NFrozen)
			}
			act, err := FromRHF(ref, frozen, 2)
			if err != nil {
				t.Fatal(err)
			}
			r, err := Run(act.Source, act.Energies, act.Occupied, Options{Triples: true, EnergyTolHartree: 1e-11, AmplitudeTol: 1e-9, DIISSize: 8})
			if err != nil {
				t.Fatal(err)
			}
			if !r.Converged {
				t.Fatalf("CCSD did not converge in %d iterations", len(r.Iterations))
			}
			t.Logf("%d iterations: MP2 %.12f (psi4 %.12f) CCSD %.12f (psi4 %.12f) (T) %.12f (psi4 %.12f)", len(r.Iterations),
				r.MP2CorrelationHartree, c.MP2, r.CCSDCorrelationHartree, c.CCSD, r.TriplesHartree, c.Triples)
			if d := r.MP2CorrelationHartree - c.MP2; math.Abs(d) > 1e-8 {
				t.Errorf("MP2 correlation off by %.2e", d)
			}
			if d := r.CCSDCorrelationHartree - c.CCSD; math.Abs(d) > 1e-8 {
				t.Errorf("CCSD correlation off by %.2e", d)
			}
			if d := r.TriplesHartree - c.Triples; math.Abs(d) > 1e-8 {
				t.Errorf("(T) off by %.2e", d)
			}
		})
	}
}
