package engine

import (
	"math"
	"testing"

	"moltrail/engine/molecule"
)

// Water at the bohr geometry of a widely used published programming-project
// worked example (STO-3G): E(RHF) = −74.942079928192 Eh and
// E(MP2 corr) = −0.049149636120 Eh (from memory).
func workedWater() *molecule.Molecule {
	return &molecule.Molecule{Name: "water", Atoms: []molecule.Atom{
		molecule.MustAtom("O", 0, -0.143225816552, 0),
		molecule.MustAtom("H", 1.638036840407, 1.136548822547, 0),
		molecule.MustAtom("H", -1.638036840407, 1.136548822547, 0),
	}}
}

func TestRunWorkedWater(t *testing.T) {
	for _, c := range []struct {
		method      string
		energy, tol float64
	}{
		{"hf", -74.942079928192, 1e-8},
		{"mp2", -74.942079928192 - 0.049149636120, 1e-8},
	} {
		j, err := NewJob(Request{Molecule: workedWater(), Method: c.method, Basis: "sto-3g"})
		if err != nil {
			t.Fatal(err)
		}
		r, err := Run(j, RunOptions{})
		if err != nil {
			t.Fatal(err)
		}
		if r.Status != StatusConverged || math.Abs(r.EnergyHartree-c.energy) > c.tol {
			t.Errorf("%s: status %s E = %.12f, want %.12f", c.method, r.Status, r.EnergyHartree, c.energy)
		}
		if r.DipoleDebye == nil || r.SCFDipoleDebye == nil || r.QuadrupoleBuckingham == nil || len(r.GeometryAngstrom) != 3 {
			t.Fatalf("%s: missing contract results %+v", c.method, r)
		}
		if len(r.Structure.Bonds) != 2 || len(r.Structure.Angles) != 1 {
			t.Errorf("%s: structure %+v", c.method, r.Structure)
		}
		if c.method == "mp2" && (r.LevelProperties == nil || r.LevelProperties.Density != "mp2-relaxed") {
			t.Errorf("mp2 should carry relaxed properties")
		}
	}
}

// TestCorrelatedMomentsOnlyFromTheirDensity: an MP2 record without
// relaxed properties has no dipole_debye or quadrupole_buckingham (the
// contract's "dipole at the requested level"); the SCF dipole stays under
// scf_dipole_debye.
func TestCorrelatedMomentsOnlyFromTheirDensity(t *testing.T) {
	j, err := NewJob(Request{Molecule: workedWater(), Method: "mp2", Basis: "sto-3g", RelaxedProps: "none"})
	if err != nil {
		t.Fatal(err)
	}
	r, err := Run(j, RunOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if r.Status != StatusConverged || r.DipoleDebye != nil || r.QuadrupoleBuckingham != nil || r.LevelProperties != nil {
		t.Errorf("mp2 without relaxed properties: status %s, dipole %v, quadrupole %v, level properties %v", r.Status, r.DipoleDebye, r.QuadrupoleBuckingham, r.LevelProperties)
	}
	if r.SCFDipoleDebye == nil || r.SCFProperties == nil {
		t.Errorf("the SCF moments should stay under scf_dipole_debye and scf_properties")
	}
}

func TestRunNotConverged(t *testing.T) {
	s := DefaultSCF
	s.MaxIter = 2
	j, _ := NewJob(Request{Molecule: workedWater(), Method: "hf", Basis: "sto-3g", SCF: &s})
	r, err := Run(j, RunOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if r.Status != StatusNotConverged || len(r.SCFIterations) != 2 || r.Error == "" {
		t.Errorf("status %s, %d iterations, error %q", r.Status, len(r.SCFIterations), r.Error)
	}
}

func TestRunOptimizeHF(t *testing.T) {
	if testing.Short() {
		t.Skip("optimisation in -short mode")
	}
	m := workedWater()
	m.Atoms[1].PosBohr[0] += 0.1
	j, err := NewJob(Request{Molecule: m, Method: "hf", Basis: "sto-3g", Task: "optimize"})
	if err != nil {
		t.Fatal(err)
	}
	r, err := Run(j, RunOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if r.Status != StatusConverged || len(r.Trajectory) < 2 {
		t.Fatalf("status %s (%s), %d steps", r.Status, r.Error, len(r.Trajectory))
	}
	last := r.Trajectory[len(r.Trajectory)-1]
	if last.MaxForce > j.Opt.MaxForce {
		t.Errorf("final max force %g", last.MaxForce)
	}
	// RHF/STO-3G water optimum: r(OH) ≈ 0.989 Å, ∠HOH ≈ 100.0° (common practice, from memory).
	if b := r.Structure.Bonds[0].Angstrom; math.Abs(b-0.989) > 0.003 {
		t.Errorf("r(OH) = %.4f Å", b)
	}
	if a := r.Structure.Angles[0].Degrees; math.Abs(a-100.0) > 0.5 {
		t.Errorf("angle = %.2f°", a)
	}
}

func TestRunDFT(t *testing.T) {
	// B3LYP records the functional definition and the integrated electron count.
	j, err := NewJob(Request{Molecule: workedWater(), Method: "b3lyp", Basis: "sto-3g"})
	if err != nil {
		t.Fatal(err)
	}
	if j.Functional != "b3lyp(vwn-rpa)" || j.Grid == nil || j.Reference != "rks" {
		t.Fatalf("job %+v", j)
	}
	r, err := Run(j, RunOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if r.Status != StatusConverged || r.XCHartree == nil || r.IntegratedElectrons == nil {
		t.Fatalf("status %s %v", r.Status, r.Error)
	}
	if math.Abs(*r.IntegratedElectrons-10) > 1e-4 {
		t.Errorf("integrated electrons %v", *r.IntegratedElectrons)
	}
	j5, _ := NewJob(Request{Molecule: workedWater(), Method: "b3lyp5", Basis: "sto-3g"})
	r5, err := Run(j5, RunOptions{})
	if err != nil {
		t.Fatal(err)
	}
	// The two B3LYP definitions differ by roughly 1e-2 Eh for a first-row
	// molecule (common practice, no source).
	if d := math.Abs(r5.EnergyHartree - r.EnergyHartree); d < 1e-3 || d > 0.1 {
		t.Errorf("B3LYP vs B3LYP5 differ by %g Eh", d)
	}
}
