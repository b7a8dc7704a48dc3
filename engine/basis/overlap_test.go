package basis_test

import (
	"math"
	"testing"

	"moltrail/engine/basis"
	"moltrail/engine/integral"
	"moltrail/engine/molecule"
)

// Every contracted function of the library's sets is normalised, in both
// representations: the overlap diagonal is 1 to 1e-12.
func TestOverlapDiagonalIsOne(t *testing.T) {
	mol := &molecule.Molecule{Atoms: []molecule.Atom{
		molecule.MustAtom("H", 0, 0, 0), molecule.MustAtom("C", 3, 0, 0), molecule.MustAtom("O", 0, 3, 0),
		molecule.MustAtom("N", 0, 0, 3), molecule.MustAtom("S", 3, 3, 3), molecule.MustAtom("Br", -3, 3, -3),
	}, Multiplicity: 2}
	for _, name := range []string{"sto-3g", "6-31g*", "6-311++g(d,p)", "cc-pvdz", "cc-pvtz", "cc-pvqz", "aug-cc-pvtz", "def2-tzvp"} {
		set, err := basis.Builtin(name)
		if err != nil {
			t.Fatal(err)
		}
		m := mol.Clone()
		var atoms []molecule.Atom
		for _, a := range m.Atoms {
			if _, ok := set.Elements[a.Symbol]; ok {
				atoms = append(atoms, a)
			}
		}
		m.Atoms = atoms
		for _, ang := range []basis.Angular{basis.Spherical, basis.Cartesian} {
			mb, err := basis.Build(set, m, ang)
			if err != nil {
				t.Fatalf("%s %s: %v", name, ang, err)
			}
			S := integral.Overlap(mb)
			worst := 0.0
			for i := 0; i < mb.NBasis; i++ {
				worst = math.Max(worst, math.Abs(S.At(i, i)-1))
			}
			if worst > 1e-12 {
				t.Errorf("%s %s (%d functions): overlap diagonal deviates from 1 by %.3g", name, ang, mb.NBasis, worst)
			}
		}
	}
}
