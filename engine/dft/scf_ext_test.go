package dft_test

import (
	"math"
	"testing"

	"moltrail/engine/basis"
	"moltrail/engine/dft"
	"moltrail/engine/molecule"
	"moltrail/engine/scf"
)

type ksRun struct {
	energy, electrons float64
	points            int
}

func runKS(t *testing.T, m *molecule.Molecule, basisName, angular, def, level string) ksRun {
	t.Helper()
	set, err := basis.Builtin(basisName)
	if err != nil {
		t.Fatal(err)
	}
	mb, err := basis.Build(set, m, basis.Angular(angular))
	if err != nil {
		t.Fatal(err)
	}
	spec, err := dft.Level(level)
	if err != nil {
		t.Fatal(err)
	}
	xc, err := dft.NewXC(m, mb, def, spec, 2)
	if err != nil {
		t.Fatal(err)
	}
	ref := "rks"
	if m.Multiplicity != 1 {
		ref = "uks"
	}
	r, err := scf.Run(m, mb, scf.Options{Reference: ref, XC: xc, Threads: 2})
	if err != nil {
		t.Fatal(err)
	}
	if !r.Converged {
		t.Fatalf("%s %s/%s on %s: SCF did not converge", m.Name, def, basisName, level)
	}
	return ksRun{r.Energy, xc.IntegratedElectrons(), xc.Grid().NPoints()}
}

func mol(name string, mult int, atoms ...molecule.Atom) *molecule.Molecule {
	return &molecule.Molecule{Name: name, Multiplicity: mult, Atoms: atoms}
}

// geometries in bohr: testdata/psi4/scf_energies.json (water) and
// testdata/psi4/dft_energies.json (ammonia)
func waterMol() *molecule.Molecule {
	return mol("water", 1,
		molecule.MustAtom("O", 0, -0.143225816552, 0),
		molecule.MustAtom("H", 1.638036840407, 1.136548822547, 0),
		molecule.MustAtom("H", -1.638036840407, 1.136548822547, 0))
}

// Integrated electron count within 1e-6 of the true count on the default
// grid, and the default grid's energy within 1e-5 Eh of the finest grid's
// (common practice, no source: the grid's own convergence).
func TestDefaultGridAgainstFinest(t *testing.T) {
	for _, tc := range []struct {
		m        *molecule.Molecule
		basis    string
		def      string
		nelec    float64
		angular  string
		unpaired bool
	}{
		{waterMol(), "cc-pvdz", "b3lyp(vwn-rpa)", 10, "", false},
	} {
		def := runKS(t, tc.m, tc.basis, tc.angular, tc.def, "")
		fin := runKS(t, tc.m, tc.basis, tc.angular, tc.def, "reference")
		t.Logf("%s %s/%s: default %.10f (%d points, N−n %.1e), reference %.10f (%d points, N−n %.1e)", tc.m.Name, tc.def, tc.basis,
			def.energy, def.points, def.electrons-tc.nelec, fin.energy, fin.points, fin.electrons-tc.nelec)
		if math.Abs(def.electrons-tc.nelec) > 1e-6 {
			t.Errorf("%s: default grid integrates %.9f electrons, want %g ± 1e-6", tc.m.Name, def.electrons, tc.nelec)
		}
		if math.Abs(def.energy-fin.energy) > 1e-5 {
			t.Errorf("%s: default grid %.9f vs finest %.9f: differ by %.1e Eh", tc.m.Name, def.energy, fin.energy, def.energy-fin.energy)
		}
	}
}
