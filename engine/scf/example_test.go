package scf_test

import (
	"fmt"

	"moltrail/engine/basis"
	"moltrail/engine/molecule"
	"moltrail/engine/scf"
)

// H2 in STO-3G at R = 1.4 a0: the closed-shell RHF energy.
func ExampleRun() {
	mol := &molecule.Molecule{Name: "H2", Multiplicity: 1, Atoms: []molecule.Atom{
		molecule.MustAtom("H", 0, 0, 0), molecule.MustAtom("H", 0, 0, 1.4)}}
	set, err := basis.Builtin("sto-3g")
	if err != nil {
		panic(err)
	}
	mb, err := basis.Build(set, mol, "")
	if err != nil {
		panic(err)
	}
	res, err := scf.Run(mol, mb, scf.Options{Reference: "rhf"})
	if err != nil {
		panic(err)
	}
	fmt.Printf("converged %v, E = %.6f Eh, HOMO %.4f Eh\n", res.Converged, res.Energy, res.Ea[0])
	// Output: converged true, E = -1.116714 Eh, HOMO -0.5782 Eh
}
