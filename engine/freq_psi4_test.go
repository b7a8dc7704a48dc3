package engine

import (
	"encoding/json"
	"math"
	"os"
	"testing"

	"moltrail/engine/basis"
	"moltrail/engine/molecule"
)

type psi4Freq struct {
	Cases []struct {
		Name        string          `json:"name"`
		Method      string          `json:"method"`
		Basis       string          `json:"basis"`
		Puream      bool            `json:"puream"`
		Geometry    [][]interface{} `json:"final_geometry_bohr"`
		Wavenumbers []float64       `json:"harmonic_wavenumbers_per_cm"`
		ZPE         float64         `json:"zero_point_energy_hartree"`
	} `json:"cases"`
}

// Harmonic wavenumbers and zero-point energies against psi4 1.3.2 at psi4's
// own gau_verytight geometries (testdata/psi4/freq.json, generator
// testdata/psi4/gen_freq.py: RHF analytic Hessians; MP2 by differences of
// analytic gradients). Ours: differences of analytic gradients (RHF) and
// second differences of energies (MP2), default steps. Wavenumbers to
// 0.2 cm⁻¹ (measured: within 0.07), ZPE to 5e-7 hartree (0.1 cm⁻¹).
func TestFrequenciesAgainstPsi4(t *testing.T) {
	b, err := os.ReadFile("../testdata/psi4/freq.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref psi4Freq
	if err := json.Unmarshal(b, &ref); err != nil {
		t.Fatal(err)
	}
	if len(ref.Cases) < 2 {
		t.Fatalf("only %d reference cases", len(ref.Cases))
	}
	for _, c := range ref.Cases {
		c := c
		t.Run(c.Name, func(t *testing.T) {
			if testing.Short() && c.Method != "rhf" {
				t.Skip("MP2 frequencies in -short mode")
			}
			m := &molecule.Molecule{Name: c.Name}
			for _, a := range c.Geometry {
				m.Atoms = append(m.Atoms, molecule.MustAtom(a[0].(string), a[1].(float64), a[2].(float64), a[3].(float64)))
			}
			ang := basis.Cartesian
			if c.Puream {
				ang = basis.Spherical
			}
			j, err := NewJob(Request{Molecule: m, Method: c.Method, Basis: c.Basis, Angular: ang, Task: "frequencies"})
			if err != nil {
				t.Fatal(err)
			}
			r, err := Run(j, RunOptions{})
			if err != nil {
				t.Fatal(err)
			}
			v := r.Vibrations
			if r.Status != StatusConverged || v == nil {
				t.Fatalf("status %s (%s), vibrations %v", r.Status, r.Error, v)
			}
			if len(v.WavenumbersPerCm) != len(c.Wavenumbers) {
				t.Fatalf("%d modes, psi4 %d", len(v.WavenumbersPerCm), len(c.Wavenumbers))
			}
			for k, w := range c.Wavenumbers {
				if d := math.Abs(v.WavenumbersPerCm[k] - w); d > 0.2 {
					t.Errorf("mode %d: %.2f cm⁻¹, psi4 %.2f", k, v.WavenumbersPerCm[k], w)
				}
			}
			if d := math.Abs(v.ZeroPointHartree - c.ZPE); d > 5e-7 {
				t.Errorf("ZPE %.7f hartree, psi4 %.7f", v.ZeroPointHartree, c.ZPE)
			}
			if !v.IsMinimum() || v.ImaginaryModes != 0 {
				t.Errorf("psi4's minimum classed %s", v.StationaryPoint)
			}
			t.Logf("%s: %.2f cm⁻¹ (psi4 %.2f), ZPE %.7f (psi4 %.7f), %d calculations", c.Name, v.WavenumbersPerCm, c.Wavenumbers, v.ZeroPointHartree, c.ZPE, v.Calculations)
		})
	}
}

// Kohn–Sham frequencies: the gradient route (analytic DFT gradients with
// the grid-weight terms) and the energy route give the same wavenumbers
// (internal consistency; no outside value).
func TestDFTFrequencyRoutesAgree(t *testing.T) {
	if testing.Short() {
		t.Skip("DFT Hessians in -short mode")
	}
	m := waterMolecule()
	var got [2][]float64
	for i, f := range []FreqSettings{DefaultFreq, DefaultFreqEnergies} {
		f := f
		j, err := NewJob(Request{Molecule: m, Method: "svwn5", Basis: "sto-3g", Grid: "coarse", Task: "frequencies", Freq: &f})
		if err != nil {
			t.Fatal(err)
		}
		r, err := Run(j, RunOptions{})
		if err != nil || r.Vibrations == nil {
			t.Fatalf("%v %s", err, r.Error)
		}
		got[i] = r.Vibrations.WavenumbersPerCm
	}
	for k := range got[0] {
		if d := math.Abs(got[0][k] - got[1][k]); d > 0.5 {
			t.Errorf("mode %d: %.2f cm⁻¹ from gradients, %.2f from energies", k, got[0][k], got[1][k])
		}
	}
	t.Logf("gradients %.2f, energies %.2f", got[0], got[1])
}
