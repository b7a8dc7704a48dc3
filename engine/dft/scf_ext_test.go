package dft_test

import (
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
