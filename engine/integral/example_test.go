package integral_test

import (
	"fmt"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/basis"
	"moltrail/engine/integral"
	"moltrail/engine/molecule"
)

// H2 in STO-3G at 1.4 bohr: one-electron integrals, one ERI block and a
// Coulomb/exchange build for a density.
func Example() {
	mol := &molecule.Molecule{Atoms: []molecule.Atom{
		molecule.MustAtom("H", 0, 0, 0), molecule.MustAtom("H", 0, 0, 1.4),
	}, Multiplicity: 1}
	set, _ := basis.Builtin("sto-3g")
	mb, _ := basis.Build(set, mol, "")
	S := integral.Overlap(mb)
	H := integral.Kinetic(mb)
	H.AddSym(H, integral.NuclearMolecule(mb, mol))
	eri, _ := integral.NewERI(mb, integral.Options{Threads: 1})
	g := make([]float64, 1)
	eri.Shell(0, 0, 1, 1, g)
	// density of the bonding orbital (1+2)/sqrt(2(1+S12)), one electron pair
	c := 1 / (2 * (1 + S.At(0, 1)))
	D := mat.NewSymDense(2, []float64{c, c, c, c})
	J, K := eri.JK([]*mat.SymDense{D}, true)
	fmt.Printf("S12 %.4f  H11 %.4f  (11|22) %.4f\n", S.At(0, 1), H.At(0, 0), g[0])
	fmt.Printf("J11 %.4f  K11 %.4f\n", J[0].At(0, 0), K[0].At(0, 0))
	// J11 = c[(11|11) + 2(11|21) + (11|22)], K11 = c[(11|11) + 2(11|12) + (12|12)]
	// with the Szabo–Ostlund integrals (Modern Quantum Chemistry, §3.5.2;
	// from memory): 0.6727 and 0.5906.

	// Output:
	// S12 0.6593  H11 -1.1204  (11|22) 0.5697
	// J11 0.6727  K11 0.5906
}
