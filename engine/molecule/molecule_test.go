package molecule

import (
	"math"
	"strings"
	"testing"
)

func TestConstants(t *testing.T) {
	// CODATA 2018: a0 = 0.529177210903 Å; 1 e·a0 = 2.541746473 D and
	// 1 Eh = 2625.4996394799 kJ/mol (CODATA 2018 derived values, from memory).
	cases := []struct {
		name      string
		got, want float64
		rel       float64
	}{
		{"debye per au", DebyePerAU, 2.541746473, 2e-10},
		{"kJ/mol per hartree", KJPerMolPerHartree, 2625.4996394799, 1e-12},
		{"kcal/mol per hartree", KcalPerMolPerHartree, 627.5094740631, 1e-12},
	}
	for _, c := range cases {
		if math.Abs(c.got-c.want)/c.want > c.rel {
			t.Errorf("%s = %.12g, want %.12g", c.name, c.got, c.want)
		}
	}
}

func TestElements(t *testing.T) {
	if len(elements) != 36 {
		t.Fatalf("want H–Kr (36 elements), have %d", len(elements))
	}
	for i, e := range elements {
		if e.Z != i+1 {
			t.Errorf("element %s has Z=%d at position %d", e.Symbol, e.Z, i)
		}
		// Most-abundant-isotope masses lie within 1 u of the mass number nearest 2Z–2.2Z (loose sanity).
		if e.MassDalton < float64(e.Z) || e.MassDalton > 3*float64(e.Z)+1 {
			t.Errorf("element %s mass %g implausible", e.Symbol, e.MassDalton)
		}
	}
	if e, err := Lookup("cl"); err != nil || e.Z != 17 {
		t.Errorf("Lookup(cl) = %v, %v", e, err)
	}
	if _, err := Lookup("Xx"); err == nil {
		t.Error("unknown symbol accepted")
	}
}

const water = `3
water
O 0.000000 0.000000 0.117300
H 0.000000 0.757200 -0.469200
H 0.000000 -0.757200 -0.469200
`

func TestParseXYZ(t *testing.T) {
	m, err := ParseXYZ(strings.NewReader(water), "w.xyz")
	if err != nil {
		t.Fatal(err)
	}
	if m.Name != "water" || len(m.Atoms) != 3 || m.Formula() != "H2O" || m.Electrons() != 10 {
		t.Fatalf("parsed %+v formula %s", m, m.Formula())
	}
	if err := m.Check(); err != nil || m.Multiplicity != 1 {
		t.Fatalf("check: %v mult %d", err, m.Multiplicity)
	}
	if got := m.Atoms[1].PosBohr[1]; math.Abs(got-0.7572/BohrAngstrom) > 1e-14 {
		t.Errorf("Å→bohr: %v", got)
	}
}

func TestParseXYZErrors(t *testing.T) {
	cases := []struct{ name, text, want string }{
		{"count", "x\n\nH 0 0 0\n", "w.xyz:1:"},
		{"too few", "3\nc\nH 0 0 0\nH 0 0 1\n", "w.xyz:5:"},
		{"too many", "1\nc\nH 0 0 0\nH 0 0 1\n", "w.xyz:4:"},
		{"symbol", "1\nc\nQq 0 0 0\n", "w.xyz:3: unknown element"},
		{"number", "1\nc\nH 0 zero 0\n", "w.xyz:3: coordinate y"},
		{"nan", "1\nc\nH 0 NaN 0\n", "w.xyz:3: coordinate y is NaN"},
		{"hex", "1\nc\nH 0 0x1p-2 0\n", "w.xyz:3: coordinate y \"0x1p-2\" is not a number in decimal notation"},
		{"fortran", "1\nc\nH 0 1.0D-01 0\n", "w.xyz:3: coordinate y"},
		{"second frame", "1\nc\nH 0 0 0\n\n1\nd\nH 0 0 1\n", "w.xyz:5: a second structure"},
		{"huge count", "20000\nc\nH 0 0 0\n", "w.xyz:1: the file promises 20000 atoms; moltrail accepts molecules of at most 1000"},
		{"inf", "1\nc\nH 0 0 +Inf\n", "w.xyz:3: coordinate z"},
		{"fields", "1\nc\nH 0 0\n", "w.xyz:3: expected"},
		{"duplicate", "2\nc\nH 0 0 0\nH 0 0 0.0000001\n", "w.xyz:4: atom 2 (H) sits on the position of atom 1"},
		{"empty", "", "w.xyz:1:"},
	}
	for _, c := range cases {
		_, err := ParseXYZ(strings.NewReader(c.text), "w.xyz")
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v, want containing %q", c.name, err, c.want)
		}
	}
}

func TestChargeMultiplicity(t *testing.T) {
	m, _ := ParseXYZ(strings.NewReader(water), "w")
	cases := []struct {
		charge, mult int
		ok           bool
	}{
		{0, 1, true}, {0, 3, true}, {0, 2, false}, {1, 2, true}, {1, 1, false},
		{10, 1, false}, {0, 13, false}, {-1, 0, true}, {0, -1, false},
	}
	for _, c := range cases {
		mm := m.Clone()
		mm.Charge, mm.Multiplicity = c.charge, c.mult
		err := mm.Check()
		if (err == nil) != c.ok {
			t.Errorf("charge %d mult %d: err %v", c.charge, c.mult, err)
		}
	}
	mm := m.Clone()
	mm.Charge, mm.Multiplicity = 1, 2
	if a, b := mm.AlphaBeta(); a != 5 || b != 4 {
		t.Errorf("H2O+ alpha/beta %d %d", a, b)
	}
}

func TestHillFormula(t *testing.T) {
	mk := func(syms ...string) *Molecule {
		m := &Molecule{}
		for i, s := range syms {
			m.Atoms = append(m.Atoms, MustAtom(s, float64(i), 0, 0))
		}
		return m
	}
	cases := []struct {
		m    *Molecule
		want string
	}{
		{mk("O", "H", "H"), "H2O"},
		{mk("H", "C", "Cl", "H", "H"), "CH3Cl"},
		{mk("C", "O"), "CO"},
		{mk("N", "H", "H", "H"), "H3N"},
		{mk("Cl", "Na"), "ClNa"},
		{mk("O", "C", "O"), "CO2"},
	}
	for _, c := range cases {
		if got := c.m.Formula(); got != c.want {
			t.Errorf("Formula = %s, want %s", got, c.want)
		}
	}
}

func TestNuclearRepulsion(t *testing.T) {
	// Water at the bohr geometry of a widely used published programming-project
	// worked example: E_nuc = 8.002367061810450 Eh (from memory).
	m := &Molecule{Atoms: []Atom{
		MustAtom("O", 0, -0.143225816552, 0),
		MustAtom("H", 1.638036840407, 1.136548822547, 0),
		MustAtom("H", -1.638036840407, 1.136548822547, 0),
	}}
	if got := m.NuclearRepulsion(); math.Abs(got-8.002367061810450) > 1e-10 {
		t.Errorf("E_nuc = %.15f", got)
	}
	com := m.CentreOfMass()
	if math.Abs(com[0]) > 1e-15 {
		t.Errorf("COM x %g", com[0])
	}
}
