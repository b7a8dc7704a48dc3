package engine

import (
	"encoding/json"
	"math"
	"os"
	"testing"

	"moltrail/engine/basis"
	"moltrail/engine/molecule"
)

type psi4Opt struct {
	Cases []struct {
		Name          string          `json:"name"`
		Method        string          `json:"method"`
		Basis         string          `json:"basis"`
		Puream        bool            `json:"puream"`
		Charge        int             `json:"charge"`
		Multiplicity  int             `json:"multiplicity"`
		Start         [][]interface{} `json:"start_geometry_bohr"`
		FinalEnergy   float64         `json:"final_energy_hartree"`
		InternalCoord struct {
			Bonds []struct {
				Atoms     []int   `json:"atoms"`
				ValueBohr float64 `json:"value_bohr"`
			} `json:"bonds_angstrom"`
			Angles []struct {
				Atoms []int   `json:"atoms"`
				Value float64 `json:"value"`
			} `json:"angles_degree"`
		} `json:"internal_coordinates"`
	} `json:"cases"`
}

// Optimised geometries against psi4 1.3.2's tight optimisations
// (testdata/psi4/opt_geometries.json, gau_verytight, conventional
// integrals): bond lengths to 2e-4 Å, angles to 0.05°. Lengths are compared
// in bohr so that no Å/bohr constant enters.
func TestOptimizedGeometriesAgainstPsi4(t *testing.T) {
	b, err := os.ReadFile("../testdata/psi4/opt_geometries.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref psi4Opt
	if err := json.Unmarshal(b, &ref); err != nil {
		t.Fatal(err)
	}
	if len(ref.Cases) < 5 {
		t.Fatalf("only %d reference optimisations", len(ref.Cases))
	}
	for _, c := range ref.Cases {
		c := c
		t.Run(c.Name, func(t *testing.T) {
			if testing.Short() && c.Method != "rhf" {
				t.Skip("correlated and DFT optimisations in -short mode")
			}
			m := &molecule.Molecule{Name: c.Name, Charge: c.Charge, Multiplicity: c.Multiplicity}
			for _, a := range c.Start {
				m.Atoms = append(m.Atoms, molecule.MustAtom(a[0].(string), a[1].(float64), a[2].(float64), a[3].(float64)))
			}
			ang := "cartesian"
			if c.Puream {
				ang = "spherical"
			}
			method := c.Method
			j, err := NewJob(Request{Molecule: m, Method: method, Basis: c.Basis, Angular: basis.Angular(ang), Task: "optimize"})
			if err != nil {
				t.Fatal(err)
			}
			r, err := Run(j, RunOptions{})
			if err != nil {
				t.Fatal(err)
			}
			if r.Status != StatusConverged {
				t.Fatalf("status %s: %s", r.Status, r.Error)
			}
			final := &molecule.Molecule{}
			for _, g := range r.GeometryAngstrom {
				final.Atoms = append(final.Atoms, molecule.MustAtom(g.Symbol, g.XYZ[0]/molecule.BohrAngstrom, g.XYZ[1]/molecule.BohrAngstrom, g.XYZ[2]/molecule.BohrAngstrom))
			}
			for _, bd := range c.InternalCoord.Bonds {
				got := final.Distance(bd.Atoms[0], bd.Atoms[1])
				if d := math.Abs(got-bd.ValueBohr) * molecule.BohrAngstrom; d > 2e-4 {
					t.Errorf("r(%d–%d) = %.5f bohr, psi4 %.5f bohr (|Δ| %.1e Å)", bd.Atoms[0], bd.Atoms[1], got, bd.ValueBohr, d)
				}
			}
			for _, an := range c.InternalCoord.Angles {
				got := final.AngleDegrees(an.Atoms[0], an.Atoms[1], an.Atoms[2])
				if d := math.Abs(got - an.Value); d > 0.05 {
					t.Errorf("angle %v = %.3f°, psi4 %.3f°", an.Atoms, got, an.Value)
				}
			}
			t.Logf("%s: %d steps, E = %.8f (psi4 %.8f)", c.Name, len(r.Trajectory), r.EnergyHartree, c.FinalEnergy)
		})
	}
}
