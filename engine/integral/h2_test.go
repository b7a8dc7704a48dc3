package integral

import (
	"math"
	"testing"

	"moltrail/engine/basis"
	"moltrail/engine/molecule"
)

func buildBasis(t testing.TB, name string, angular basis.Angular, atoms ...molecule.Atom) (*basis.Molecular, *molecule.Molecule) {
	t.Helper()
	mol := &molecule.Molecule{Atoms: atoms, Multiplicity: 1}
	set, err := basis.Builtin(name)
	if err != nil {
		t.Fatal(err)
	}
	mb, err := basis.Build(set, mol, angular)
	if err != nil {
		t.Fatal(err)
	}
	return mb, mol
}

// H2, STO-3G, R = 1.4 a0: Szabo and Ostlund, Modern Quantum Chemistry,
// section 3.5.2 (from memory; 4 decimals as printed there).
func TestH2STO3GSzaboOstlund(t *testing.T) {
	mb, mol := buildBasis(t, "sto-3g", "", molecule.MustAtom("H", 0, 0, 0), molecule.MustAtom("H", 0, 0, 1.4))
	S := Overlap(mb)
	T := Kinetic(mb)
	V := NuclearMolecule(mb, mol)
	V1 := Nuclear(mb, []PointCharge{{Charge: 1, Pos: mol.Atoms[0].PosBohr}})
	eri, err := NewERI(mb, Options{})
	if err != nil {
		t.Fatal(err)
	}
	g := func(i, j, k, l int) float64 {
		out := make([]float64, 1)
		eri.Shell(i, j, k, l, out)
		return out[0]
	}
	cases := []struct {
		name      string
		got, want float64
	}{
		{"S12", S.At(0, 1), 0.6593},
		{"S11", S.At(0, 0), 1},
		{"T11", T.At(0, 0), 0.7600},
		{"T12", T.At(0, 1), 0.2365},
		{"V1_11", V1.At(0, 0), -1.2266},
		{"V1_12", V1.At(0, 1), -0.5974},
		{"V1_22", V1.At(1, 1), -0.6538},
		{"H11", T.At(0, 0) + V.At(0, 0), -1.1204},
		{"H12", T.At(0, 1) + V.At(0, 1), -0.9584},
		{"(11|11)", g(0, 0, 0, 0), 0.7746},
		{"(11|22)", g(0, 0, 1, 1), 0.5697},
		{"(21|11)", g(1, 0, 0, 0), 0.4441},
		{"(21|21)", g(1, 0, 1, 0), 0.2970},
	}
	for _, c := range cases {
		if math.Abs(c.got-c.want) > 1.5e-4 {
			t.Errorf("%s = %.6f, want %.4f", c.name, c.got, c.want)
		}
	}
}
