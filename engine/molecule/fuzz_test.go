package molecule

import (
	"math"
	"strings"
	"testing"
	"unicode/utf8"
)

// checkRead holds for anything a reader accepts: a molecule within the
// limits, finite coordinates, no two atoms on one position, text that is
// valid UTF-8; and the XYZ text written back reads as the same atoms.
func checkRead(t *testing.T, in *Input, err error, data []byte) {
	t.Helper()
	if err != nil {
		if msg := err.Error(); msg == "" || strings.Contains(msg, "\n") {
			t.Fatalf("error is not one line: %q", msg)
		}
		return
	}
	if len(data) > MaxFileBytes {
		t.Fatalf("accepted %d bytes", len(data))
	}
	m := in.Mol
	if len(m.Atoms) < 1 || len(m.Atoms) > MaxAtoms {
		t.Fatalf("accepted %d atoms", len(m.Atoms))
	}
	if !utf8.ValidString(m.Name) || strings.ContainsAny(m.Name, "\r\n") {
		t.Fatalf("name %q", m.Name)
	}
	for i, a := range m.Atoms {
		if _, err := Lookup(a.Symbol); err != nil {
			t.Fatalf("atom %d symbol %q", i, a.Symbol)
		}
		for _, v := range a.PosBohr {
			if math.IsNaN(v) || math.IsInf(v, 0) || math.Abs(v) > MaxCoordinateAngstrom*AngstromBohr {
				t.Fatalf("atom %d position %v", i, a.PosBohr)
			}
		}
		for j := 0; j < i; j++ {
			if m.Distance(i, j)*BohrAngstrom < DuplicateToleranceAngstrom {
				t.Fatalf("atoms %d and %d share a position", j, i)
			}
		}
	}
	back, err := Read(strings.NewReader(FormatXYZ(&Molecule{Atoms: m.Atoms})), "back.xyz")
	if err != nil {
		t.Fatalf("written back: %v", err)
	}
	for i, a := range back.Mol.Atoms {
		if a.Symbol != m.Atoms[i].Symbol || Dist(a.PosBohr, m.Atoms[i].PosBohr)*BohrAngstrom > 1e-9*math.Max(1, Dist(m.Atoms[i].PosBohr, [3]float64{})) {
			t.Fatalf("atom %d written back as %v, was %v", i, a, m.Atoms[i])
		}
	}
}

func FuzzReadXYZ(f *testing.F) {
	f.Add([]byte(water))
	f.Add([]byte("2\nOH charge=0 multiplicity=2\nO 0 0 0 extra\nH 0 0 0.97\n"))
	f.Add([]byte("1\n\n8 0 0 0\n\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		in, err := Read(strings.NewReader(string(data)), "fuzz.xyz")
		checkRead(t, in, err, data)
	})
}

func FuzzReadExtendedXYZ(f *testing.F) {
	f.Add([]byte("2\nProperties=species:S:1:pos:R:3:forces:R:3 energy=-1.1 pbc=\"F F F\"\nH 0 0 0 0 0 0\nH 0 0 0.74 0 0 0\n"))
	f.Add([]byte("2\nLattice=\"9 0 0 0 9 0 0 0 9\" Properties=pos:R:3:Z:I:1 name=\"OH-\" charge=-1\n0 0 0 8\n0 0 0.97 1\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		in, err := Read(strings.NewReader(string(data)), "fuzz.extxyz")
		checkRead(t, in, err, data)
	})
}

func FuzzReadMolfile(f *testing.F) {
	f.Add([]byte(formaldehydeMol))
	f.Add([]byte(formaldehydeMol + "> <id>\n1\n\n$$$$\n" + formaldehydeMol + "$$$$\n"))
	f.Add([]byte(strings.Replace(formaldehydeMol, "M  END", "M  CHG  2   1   1   2  -1\nM  RAD  1   1   2\nM  END", 1)))
	f.Fuzz(func(t *testing.T, data []byte) {
		in, err := Read(strings.NewReader(string(data)), "fuzz.sdf")
		checkRead(t, in, err, data)
		// The content alone (no extension) must not crash the format detection.
		in, err = Read(strings.NewReader(string(data)), "fuzz")
		checkRead(t, in, err, data)
	})
}
