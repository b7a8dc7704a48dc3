package mp2

import (
	"encoding/json"
	"math"
	"os"
	"testing"

	"moltrail/engine/basis"
	"moltrail/engine/molecule"
	"moltrail/engine/scf"
)

// psi4Geom is one ["Sym", x, y, z] entry (bohr).
type psi4Geom []any

type psi4Case struct {
	Name       string     `json:"name"`
	Geometry   []psi4Geom `json:"geometry_bohr"`
	Charge     int        `json:"charge"`
	Mult       int        `json:"multiplicity"`
	Basis      string     `json:"basis"`
	Puream     bool       `json:"puream"`
	Reference  string     `json:"reference"`
	FreezeCore bool       `json:"freeze_core"`
	NFrozen    int        `json:"n_frozen_core_orbitals"`
	SCF        float64    `json:"scf_energy_hartree"`
	Corr       float64    `json:"mp2_correlation_energy_hartree"`
	SameSpin   float64    `json:"mp2_same_spin_correlation_hartree"`
	Opposite   float64    `json:"mp2_opposite_spin_correlation_hartree"`
	SCSCorr    float64    `json:"scs_mp2_correlation_energy_hartree"`
	MP2Total   float64    `json:"mp2_total_energy_hartree"`
	Relaxed    []float64  `json:"mp2_relaxed_dipole_richardson_au"`
	RelaxedErr []float64  `json:"mp2_relaxed_dipole_fd_error_estimate_au"`
	SCFProps   struct {
		Dipole []float64 `json:"dipole_au"`
	} `json:"scf"`
}

type psi4File struct {
	Cases       []psi4Case `json:"cases"`
	DipoleCases []psi4Case `json:"dipole_cases"`
}

func loadPsi4(t *testing.T) psi4File {
	t.Helper()
	b, err := os.ReadFile("../../testdata/psi4/mp2.json")
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
	var atoms []molecule.Atom
	for _, g := range c.Geometry {
		atoms = append(atoms, molecule.MustAtom(g[0].(string), g[1].(float64), g[2].(float64), g[3].(float64)))
	}
	return build(t, c.Basis, c.Puream, c.Charge, c.Mult, atoms...)
}

// TestPsi4Energies: RMP2/UMP2 (conventional integrals, optional frozen core)
// against psi4 1.3.2, testdata/psi4/mp2.json "cases": energies to 1e-8 Eh.
func TestPsi4Energies(t *testing.T) {
	f := loadPsi4(t)
	for _, c := range f.Cases {
		t.Run(c.Name, func(t *testing.T) {
			m, mb := c.system(t)
			sr := runSCF(t, m, mb, scf.Options{Reference: c.Reference})
			r, err := Run(m, mb, sr, Options{FrozenCore: c.FreezeCore})
			if err != nil {
				t.Fatal(err)
			}
			if r.FrozenOrbitals != c.NFrozen {
				t.Errorf("frozen orbitals %d, psi4 %d", r.FrozenOrbitals, c.NFrozen)
			}
			for _, q := range []struct {
				what      string
				got, want float64
			}{
				{"SCF", sr.Energy, c.SCF},
				{"correlation", r.CorrelationHartree, c.Corr},
				{"same-spin", r.SameSpinHartree, c.SameSpin},
				{"opposite-spin", r.OppositeSpinHartree, c.Opposite},
				{"SCS-MP2 correlation", r.SCSCorrelationHartree(), c.SCSCorr},
				{"MP2 total", sr.Energy + r.CorrelationHartree, c.MP2Total},
			} {
				if math.Abs(q.got-q.want) > 1e-8 {
					t.Errorf("%s: got %.10f, psi4 %.10f (diff %.1e)", q.what, q.got, q.want, q.got-q.want)
				}
			}
		})
	}
}

// TestPsi4RelaxedDipoles: analytic relaxed MP2 dipoles against psi4 1.3.2
// finite-field derivatives of its conventional MP2 energies
// (testdata/psi4/mp2.json "dipole_cases", Richardson values): 2e-3 D
// wanted; the finite-field error estimate there is ~1e-6 au.
func TestPsi4RelaxedDipoles(t *testing.T) {
	f := loadPsi4(t)
	for _, c := range f.DipoleCases {
		t.Run(c.Name, func(t *testing.T) {
			m, mb := c.system(t)
			sr := runSCF(t, m, mb, scf.Options{Reference: c.Reference})
			r, err := Run(m, mb, sr, Options{FrozenCore: c.FreezeCore, Relaxed: true})
			if err != nil {
				t.Fatal(err)
			}
			if math.Abs(sr.Energy+r.CorrelationHartree-c.MP2Total) > 1e-8 {
				t.Errorf("MP2 total %.10f, psi4 %.10f", sr.Energy+r.CorrelationHartree, c.MP2Total)
			}
			got := relaxedDipole(m, mb, r, [3]float64{})
			for k := 0; k < 3; k++ {
				diffD := (got[k] - c.Relaxed[k]) * molecule.DebyePerAU
				if math.Abs(diffD) > 2e-3 {
					t.Errorf("dipole %c: %.6f au, psi4 %.6f au (%.1e D)", "xyz"[k], got[k], c.Relaxed[k], diffD)
				}
			}
			t.Logf("relaxed dipole %.7f au, psi4 finite field %.7f (±%.1e); %d Z-vector iterations", got, c.Relaxed, c.RelaxedErr, r.ZVectorIterations)
			if c.Name == "co_augccpvdz" {
				// Fact of the trade (common practice, no source): for CO with a
				// diffuse basis the HF and MP2 dipoles point in opposite directions.
				hf := dipoleOf(m, mb, sr.Da, sr.Db, [3]float64{})
				if !(hf[2]*got[2] < 0) {
					t.Errorf("CO: HF dipole z %.5f and MP2 dipole z %.5f do not have opposite signs", hf[2], got[2])
				}
				if math.Abs(hf[2]-c.SCFProps.Dipole[2])*molecule.DebyePerAU > 1e-4 {
					t.Errorf("CO: HF dipole z %.6f, psi4 %.6f", hf[2], c.SCFProps.Dipole[2])
				}
			}
		})
	}
}
