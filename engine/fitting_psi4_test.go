package engine

import (
	"encoding/json"
	"math"
	"os"
	"strings"
	"testing"

	"moltrail/engine/basis"
	"moltrail/engine/molecule"
)

// psi4DF is testdata/psi4/df_energies.json (generator
// testdata/psi4/gen_df.py): psi4 1.3.2 density-fitted SCF and KS energies
// with the auxiliary set named explicitly, and the exact energy of each
// case.
type psi4DF struct {
	Cases []struct {
		Name       string          `json:"name"`
		Geometry   [][]interface{} `json:"geometry_bohr"`
		Charge     int             `json:"charge"`
		Mult       int             `json:"multiplicity"`
		Basis      string          `json:"basis"`
		Puream     bool            `json:"puream"`
		Reference  string          `json:"reference"`
		Functional *string         `json:"functional"`
		Aux        string          `json:"aux_basis"`
		AuxPuream  bool            `json:"aux_puream"`
		NAux       int             `json:"n_aux_functions"`
		Energy     float64         `json:"energy_total_hartree"`
		Exact      float64         `json:"energy_total_exact_hartree"`
	} `json:"cases"`
}

func loadPsi4DF(t *testing.T) psi4DF {
	t.Helper()
	b, err := os.ReadFile("../testdata/psi4/df_energies.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref psi4DF
	if err := json.Unmarshal(b, &ref); err != nil {
		t.Fatal(err)
	}
	return ref
}

// tightSCF converges energies far below the 2e-7 Eh of the comparison.
var tightSCF = SCFSettings{EnergyTolHartree: 1e-11, DensityTol: 1e-9, GradientTol: 1e-8, MaxIter: 200, Guess: "sad", DIISSize: 8, SchwarzThreshold: 1e-14}

// Fitted energies against psi4's density-fitted ones with the same
// auxiliary sets (psi4 1.3.2, testdata/psi4/df_energies.json): 2e-7 Eh.
// The KS cases use a grid finer than our finest level (150 radial points,
// angular order 65) against psi4's unpruned 250 × 5810 grid; the exact KS
// energies on the two grids agree to better than 1e-7 Eh. The fitting error, fitted − exact (psi4's exact
// energy of the same case), is of the size reported for JKFIT sets, about
// 1e-5 Eh per atom (Weigend, Phys. Chem. Chem. Phys. 4, 4285 (2002); from
// memory): for the cc-pVXZ-JKFIT and def2 sets it must lie between 1e-8
// and 5e-5 Eh per atom. The augmented set is held only to psi4's own
// fitting error (the energies agree to 2e-7 Eh): psi4 finds 1.1e-4 Eh per
// atom for CO with aug-cc-pVDZ-JKFIT, larger than the figure remembered
// for the other sets.
func TestFittedEnergiesAgainstPsi4(t *testing.T) {
	ref := loadPsi4DF(t)
	if len(ref.Cases) < 8 {
		t.Fatalf("only %d reference cases", len(ref.Cases))
	}
	for _, c := range ref.Cases {
		c := c
		t.Run(c.Name, func(t *testing.T) {
			ks := c.Functional != nil
			if testing.Short() && (ks || len(c.Geometry) > 4) {
				t.Skip("KS and benzene cases in -short mode")
			}
			m := &molecule.Molecule{Name: c.Name, Charge: c.Charge, Multiplicity: c.Mult}
			for _, a := range c.Geometry {
				m.Atoms = append(m.Atoms, molecule.MustAtom(a[0].(string), a[1].(float64), a[2].(float64), a[3].(float64)))
			}
			ang := basis.Cartesian
			if c.Puream {
				ang = basis.Spherical
			}
			method := c.Reference
			grid := ""
			if ks {
				method, grid = *c.Functional, "reference"
			}
			scf := tightSCF
			job, err := NewJob(Request{Molecule: m, Method: method, Basis: c.Basis, Angular: ang, SCF: &scf, Grid: grid,
				Fitting: &FittingRequest{SCFSet: c.Aux}})
			if err != nil {
				t.Fatal(err)
			}
			if ks {
				// finer than the reference level: its grid error for CO/cc-pVTZ
				// (2e-7 Eh) would hide the comparison
				job.Grid.RadialPoints, job.Grid.AngularOrder = 150, 65
			}
			if job.Fitting.SCFSet.Angular != ang || c.AuxPuream != c.Puream {
				t.Fatalf("auxiliary functions %s, psi4 puream %v", job.Fitting.SCFSet.Angular, c.AuxPuream)
			}
			res, err := Run(job, RunOptions{Threads: 2})
			if err != nil {
				t.Fatal(err)
			}
			if res.Status != StatusConverged {
				t.Fatalf("status %s: %s", res.Status, res.Error)
			}
			if res.Fitting == nil || res.Fitting.AuxFunctions != c.NAux {
				t.Fatalf("fitting info %+v, psi4 has %d auxiliary functions", res.Fitting, c.NAux)
			}
			d := res.EnergyHartree - c.Energy
			perAtom := (res.EnergyHartree - c.Exact) / float64(len(m.Atoms))
			t.Logf("ours %.10f psi4 %.10f: %+.1e; fitting error %+.2e Eh per atom (psi4 %+.2e)", res.EnergyHartree, c.Energy, d, perAtom, (c.Energy-c.Exact)/float64(len(m.Atoms)))
			if math.Abs(d) > 2e-7 {
				t.Errorf("fitted energy %.10f, psi4 %.10f: differ by %.1e Eh", res.EnergyHartree, c.Energy, d)
			}
			if a := math.Abs(perAtom); !strings.HasPrefix(c.Aux, "aug-") && (a < 1e-8 || a > 5e-5) {
				t.Errorf("fitting error %.2e Eh per atom is outside the 1e-8–5e-5 expected of a JKFIT set", perAtom)
			}
		})
	}
}
