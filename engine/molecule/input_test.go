package molecule

import (
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

func read(t *testing.T, text, source string) *Input {
	t.Helper()
	in, err := Read(strings.NewReader(text), source)
	if err != nil {
		t.Fatalf("%s: %v", source, err)
	}
	return in
}

func hasNote(in *Input, part string) bool {
	for _, n := range in.Notes {
		if strings.Contains(n, part) {
			return true
		}
	}
	return false
}

func TestExtendedXYZ(t *testing.T) {
	text := `3
Properties=species:S:1:pos:R:3:forces:R:3 energy=-76.02 name="water monomer" pbc="F F F"
O 0.0 0.0 0.1173 0.1 0.2 0.3
H 0.0 0.7572 -0.4692 0 0 0
H 0.0 -0.7572 -0.4692 0 0 0
`
	in := read(t, text, "w.extxyz")
	if in.Format != InputExtendedXYZ || in.Mol.Name != "water monomer" || len(in.Mol.Atoms) != 3 || in.ChargeGiven {
		t.Fatalf("read %+v name %q", in, in.Mol.Name)
	}
	if math.Abs(in.Mol.Atoms[1].PosBohr[1]-0.7572*AngstromBohr) > 1e-15 {
		t.Errorf("positions taken from the wrong columns: %v", in.Mol.Atoms[1].PosBohr)
	}
	if !hasNote(in, "comment-line keys not used: energy") || hasNote(in, "periodic") {
		t.Errorf("notes %q", in.Notes)
	}
	// Columns in another order, atomic numbers, a lattice, a periodic flag.
	text = `2
Lattice="10 0 0 0 10 0 0 0 10" Properties=pos:R:3:Z:I:1 pbc="T T T" charge=-1
0 0 0 8
0 0 0.97 1
`
	in = read(t, text, "oh.xyz")
	if in.Mol.Formula() != "HO" || in.Mol.Atoms[0].Symbol != "O" || in.Mol.Charge != -1 || !in.ChargeGiven || in.Mol.Name != "" {
		t.Fatalf("read %+v", in.Mol)
	}
	if !hasNote(in, "Lattice") || !hasNote(in, "periodic") {
		t.Errorf("notes %q", in.Notes)
	}
	if _, err := Read(strings.NewReader("1\nProperties=species:S:1:pos:R:3:q:R:1\nH 0 0 0\n"), "x.xyz"); err == nil || !strings.Contains(err.Error(), "x.xyz:3: the Properties key describes 5 columns, found 4") {
		t.Errorf("short line: %v", err)
	}
	if _, err := Read(strings.NewReader("1\nProperties=pos:R:3\nH 0 0 0\n"), "x.xyz"); err == nil || !strings.Contains(err.Error(), "x.xyz:2: Properties=pos:R:3: it needs a species") {
		t.Errorf("no species column: %v", err)
	}
}

func TestXYZCommentKeysAndExtraColumns(t *testing.T) {
	text := "2\nOH radical charge=0 multiplicity=2\nO 0 0 0 -0.5 extra\nH 0 0 0.97 0.5\n"
	in := read(t, text, "oh.xyz")
	if in.Format != InputXYZ || in.Mol.Name != "OH radical" || in.Mol.Multiplicity != 2 || !in.MultiplicityGiven || !in.ChargeGiven {
		t.Fatalf("read %+v", in)
	}
	if !hasNote(in, "columns after x y z (lines 3–4) were ignored") {
		t.Errorf("notes %q", in.Notes)
	}
	// A plain comment keeps its exact text as the name.
	in = read(t, "1\n  H atom,  E = -0.5  \nH 0 0 0\n", "h.xyz")
	if in.Mol.Name != "H atom,  E = -0.5" || len(in.Notes) != 0 {
		t.Errorf("name %q notes %q", in.Mol.Name, in.Notes)
	}
	if _, err := Read(strings.NewReader("1\ncharge=one\nH 0 0 0\n"), "h.xyz"); err == nil || !strings.Contains(err.Error(), "h.xyz:2: the comment line's charge=one is not an integer") {
		t.Errorf("bad charge: %v", err)
	}
}

const formaldehydeMol = `formaldehyde
  moltrail          3D

  4  3  0  0  0  0  0  0  0  0999 V2000
    0.0000    0.0000    0.0000 C   0  0  0  0  0  0  0  0  0  0  0  0
    0.0000    0.0000    1.2050 O   0  0  0  0  0  0  0  0  0  0  0  0
    0.0000    0.9430   -0.5870 H   0  0  0  0  0  0  0  0  0  0  0  0
    0.0000   -0.9430   -0.5870 H   0  0  0  0  0  0  0  0  0  0  0  0
  1  2  2  0
  1  3  1  0
  1  4  1  0
M  END
`

func TestMolfile(t *testing.T) {
	in := read(t, formaldehydeMol, "f.mol")
	if in.Format != InputMolfile || in.Mol.Name != "formaldehyde" || in.Mol.Formula() != "CH2O" || in.Mol.Charge != 0 || !in.ChargeGiven || len(in.Notes) != 0 {
		t.Fatalf("read %+v notes %q", in.Mol, in.Notes)
	}
	if math.Abs(in.Mol.Atoms[1].PosBohr[2]-1.205*AngstromBohr) > 1e-15 {
		t.Errorf("O position %v", in.Mol.Atoms[1].PosBohr)
	}
	// Content sniffing finds the layout without the extension.
	if in := read(t, formaldehydeMol, "f.txt"); in.Format != InputMolfile {
		t.Errorf("sniffed %s", in.Format)
	}
	// Charge codes in the atom block (3 = +1) …
	hydronium := `H3O+

  made by hand
  4  3  0  0  0  0  0  0  0  0999 V2000
    0.0000    0.0000    0.1000 O   0  3  0  0  0  0
    0.0000    0.9400   -0.2000 H   0  0
    0.8141   -0.4700   -0.2000 H   0  0
   -0.8141   -0.4700   -0.2000 H   0  0
  1  2  1  0
  1  3  1  0
  1  4  1  0
M  END
`
	in = read(t, hydronium, "h3o.mol")
	if in.Mol.Charge != 1 || !hasNote(in, "total charge +1") {
		t.Errorf("charge %d notes %q", in.Mol.Charge, in.Notes)
	}
	// … are replaced by the properties block's CHG entries.
	in = read(t, strings.Replace(hydronium, "M  END", "M  CHG  1   1   2\nM  ISO  1   2   2\nM  END", 1), "h3o.mol")
	if in.Mol.Charge != 2 || !hasNote(in, "isotope marks were ignored") {
		t.Errorf("charge %d notes %q", in.Mol.Charge, in.Notes)
	}
}

func TestSDFFirstRecord(t *testing.T) {
	second := strings.Replace(formaldehydeMol, "formaldehyde", "second", 1)
	text := formaldehydeMol + "> <source>\nhand-made\n\n$$$$\n" + second + "$$$$\n" + second + "$$$$\n"
	in := read(t, text, "set.sdf")
	if in.Format != InputSDF || in.Mol.Name != "formaldehyde" || !hasNote(in, "the SD file holds 3 records; the first (\"formaldehyde\") was read") {
		t.Fatalf("format %s name %q notes %q", in.Format, in.Mol.Name, in.Notes)
	}
	in = read(t, formaldehydeMol+"$$$$\n", "one.sdf")
	if in.Format != InputSDF || len(in.Notes) != 0 {
		t.Errorf("single record: %s %q", in.Format, in.Notes)
	}
}

func TestReadRefusals(t *testing.T) {
	zmat := "O\nH 1 0.96\nH 1 0.96 2 104.5\n"
	cases := []struct{ name, text, source, want string }{
		{"z-matrix", zmat, "w.zmat", "w.zmat looks like a Z-matrix (internal coordinates), which moltrail does not read: moltrail reads XYZ and extended XYZ (.xyz, .extxyz) and MDL molfile/SDF V2000 (.mol, .sdf) files"},
		{"other", "ATOM      1  O   HOH A   1       0.000   0.000   0.000\n", "w.pdb", "w.pdb is not a molecule file moltrail can read: moltrail reads XYZ"},
		{"empty", "", "w.dat", "w.dat is not a molecule file moltrail can read"},
		{"binary", "3\n\x00\x01\x02", "w.xyz", "w.xyz:2: the file holds binary data"},
		{"v3000", "x\n\n\n  0  0  0     0  0            999 V3000\n", "w.mol", "w.mol:4: this is a V3000 molfile"},
		{"2d", strings.Replace(formaldehydeMol, "3D", "2D", 1), "f.mol", "f.mol:2: the header marks the coordinates as 2D"},
		{"molfile atoms", strings.Replace(formaldehydeMol, "  4  3  0", "  5  3  0", 1), "f.mol", "f.mol:9: expected an atom line"},
		{"molfile symbol", strings.Replace(formaldehydeMol, " O   0", " Q   0", 1), "f.mol", "f.mol:6: unknown element symbol \"Q\""},
		{"molfile count", strings.Replace(formaldehydeMol, "  4  3  0", "  x  3  0", 1), "f.mol", "f.mol:4: expected the counts line"},
		{"molfile duplicate", strings.Replace(formaldehydeMol, "1.2050 O", "0.0000 O", 1), "f.mol", "f.mol:6: atom 2 (O) sits on the position of atom 1 (C, line 5)"},
		{"molfile chg", strings.Replace(formaldehydeMol, "M  END", "M  CHG  1   9   1\nM  END", 1), "f.mol", "f.mol:12: pair 1: expected an atom number from 1 to 4"},
		{"long line", "1\n" + strings.Repeat("x", MaxLineBytes+10) + "\nH 0 0 0\n", "w.xyz", "w.xyz:2: the line is longer than 64 KiB"},
		{"invalid utf-8", "1\n\xff\xfe\nH 0 0 0\n", "w.xyz", "w.xyz:2: the comment line is not valid UTF-8"},
	}
	for _, c := range cases {
		_, err := Read(strings.NewReader(c.text), c.source)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v, want containing %q", c.name, err, c.want)
		}
	}
}

// endless yields one atom line after a count of 1, then lines of blanks forever.
type endless struct{ head string }

func (e *endless) Read(p []byte) (int, error) {
	if e.head != "" {
		n := copy(p, e.head)
		e.head = e.head[n:]
		return n, nil
	}
	for i := range p {
		p[i] = ' '
		if i%4096 == 4095 {
			p[i] = '\n'
		}
	}
	return len(p), nil
}

func TestBoundedReads(t *testing.T) {
	_, err := Read(&endless{head: "1\nc\nH 0 0 0\n"}, "endless.xyz")
	if err == nil || !strings.Contains(err.Error(), "endless.xyz is larger than 16 MiB; molecule files may hold at most 16 MiB") {
		t.Errorf("endless input: %v", err)
	}
	if _, err := os.Stat("/dev/zero"); err == nil {
		t0 := time.Now()
		_, err := ReadFile("/dev/zero")
		if err == nil || !strings.Contains(err.Error(), "/dev/zero:1: the file holds binary data") {
			t.Errorf("/dev/zero: %v", err)
		}
		if d := time.Since(t0); d > 10*time.Second {
			t.Logf("reading /dev/zero took %v", d)
		}
	}
	dir := t.TempDir()
	big := filepath.Join(dir, "big.xyz")
	f, err := os.Create(big)
	if err != nil {
		t.Fatal(err)
	}
	if err := f.Truncate(MaxFileBytes + 1); err != nil {
		t.Fatal(err)
	}
	f.Close()
	if _, err := ReadFile(big); err == nil || !strings.Contains(err.Error(), "holds 16777217 bytes; molecule files may hold at most 16 MiB") {
		t.Errorf("big file: %v", err)
	}
	if _, err := ReadFile(dir); err == nil || !strings.Contains(err.Error(), "is a directory") {
		t.Errorf("directory: %v", err)
	}
	if _, err := ReadFile(filepath.Join(dir, "none.xyz")); err == nil || !strings.Contains(err.Error(), "none.xyz: no such file") {
		t.Errorf("missing file: %v", err)
	}
}

// A 20,000-atom XYZ is refused at its count line, before any atom is read.
func TestAtomLimit(t *testing.T) {
	r, w := io.Pipe()
	go func() {
		w.Write([]byte("20000\nbig\n"))
		for i := 0; i < 20000; i++ {
			if _, err := w.Write([]byte("C 0 0 0\n")); err != nil {
				return
			}
		}
		w.Close()
	}()
	_, err := Read(r, "big.xyz")
	r.Close()
	if err == nil || !strings.Contains(err.Error(), "big.xyz:1: the file promises 20000 atoms; moltrail accepts molecules of at most 1000 atoms") {
		t.Errorf("20000 atoms: %v", err)
	}
	m := &Molecule{}
	for i := 0; i <= MaxAtoms; i++ {
		m.Atoms = append(m.Atoms, MustAtom("H", float64(i)*2, 0, 0))
	}
	if err := m.Check(); err == nil || !strings.Contains(err.Error(), "has 1001 atoms; moltrail accepts molecules of at most 1000 atoms") {
		t.Errorf("Check: %v", err)
	}
}

func TestCloseContacts(t *testing.T) {
	h2 := func(rAngstrom float64) *Molecule {
		return &Molecule{Atoms: []Atom{MustAtom("H", 0, 0, 0), MustAtom("H", 0, 0, rAngstrom*AngstromBohr)}}
	}
	// H–H: half of 2 × 0.31 Å is 0.31 Å, above the 0.3 Å floor.
	if err := h2(0.74).CheckContacts(); err != nil {
		t.Errorf("H2 at 0.74 Å: %v", err)
	}
	err := h2(0.01).CheckContacts()
	if err == nil || !strings.Contains(err.Error(), "atoms H1 and H2 are 0.010 Å apart, closer than the physical minimum of 0.310 Å (0.5 × the sum of their covalent radii, at least 0.3 Å)") {
		t.Errorf("H2 at 0.01 Å: %v", err)
	}
	if n := h2(0.2).CloseContactNote(); !strings.Contains(n, "computed only because close atoms were explicitly allowed") {
		t.Errorf("note %q", n)
	}
	// He–He: 0.5 × 0.56 Å = 0.28 Å, so the 0.3 Å floor applies.
	he := &Molecule{Atoms: []Atom{MustAtom("He", 0, 0, 0), MustAtom("He", 0, 0, 0.29*AngstromBohr)}}
	if cc := he.CloseContacts(); len(cc) != 1 || cc[0].Limit != CloseFloorAngstrom {
		t.Errorf("He2 at 0.29 Å: %+v", cc)
	}
	// Water, benzene-like C–H and an I–I-free heavy pair stay clear.
	w, _ := ParseXYZ(strings.NewReader(water), "w")
	if err := w.CheckContacts(); err != nil {
		t.Errorf("water: %v", err)
	}
}

func TestReadFileBytes(t *testing.T) {
	if _, err := os.Stat("/dev/zero"); err == nil {
		if _, err := ReadFileBytes("/dev/zero"); err == nil || !strings.Contains(err.Error(), "/dev/zero holds binary data") {
			t.Errorf("/dev/zero: %v", err)
		}
	}
	p := filepath.Join(t.TempDir(), "w.xyz")
	if err := os.WriteFile(p, []byte(water), 0o644); err != nil {
		t.Fatal(err)
	}
	if b, err := ReadFileBytes(p); err != nil || string(b) != water {
		t.Errorf("read %q, %v", b, err)
	}
}
