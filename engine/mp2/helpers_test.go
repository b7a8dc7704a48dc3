package mp2

import (
	"testing"

	"moltrail/engine/basis"
	"moltrail/engine/molecule"
	"moltrail/engine/scf"
)

func build(t testing.TB, set string, puream bool, charge, mult int, atoms ...molecule.Atom) (*molecule.Molecule, *basis.Molecular) {
	t.Helper()
	s, err := basis.Builtin(set)
	if err != nil {
		t.Fatal(err)
	}
	m := &molecule.Molecule{Name: "test", Atoms: atoms, Charge: charge, Multiplicity: mult}
	ang := basis.Cartesian
	if puream {
		ang = basis.Spherical
	}
	mb, err := basis.Build(s, m, ang)
	if err != nil {
		t.Fatal(err)
	}
	return m, mb
}

func waterSTO3G(t testing.TB) (*molecule.Molecule, *basis.Molecular) {
	return build(t, "sto-3g", true, 0, 1,
		molecule.MustAtom("O", 0, -0.143225816552, 0),
		molecule.MustAtom("H", 1.638036840407, 1.136548822547, 0),
		molecule.MustAtom("H", -1.638036840407, 1.136548822547, 0))
}

func runSCF(t testing.TB, m *molecule.Molecule, mb *basis.Molecular, opt scf.Options) *scf.Result {
	t.Helper()
	if opt.EnergyTolHartree == 0 {
		opt.EnergyTolHartree, opt.DensityTol, opt.GradientTol = 1e-12, 1e-10, 1e-9
	}
	r, err := scf.Run(m, mb, opt)
	if err != nil {
		t.Fatal(err)
	}
	if !r.Converged {
		t.Fatalf("%s did not converge", opt.Reference)
	}
	return r
}
