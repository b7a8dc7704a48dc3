package basis

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"moltrail/engine/molecule"
)

func TestLookupAliases(t *testing.T) {
	cases := []struct{ ask, want string }{
		{"cc-pvdz", "cc-pVDZ"}, {"CC-PVDZ", "cc-pVDZ"}, {"6-31G(d)", "6-31G*"}, {"6-31g*", "6-31G*"},
		{"6-31G(d,p)", "6-31G**"}, {"6-311++g(d,p)", "6-311++G**"}, {"sto-3g", "STO-3G"}, {"def2-svp-jkfit", "def2-universal-JKFIT"},
	}
	for _, c := range cases {
		s, err := Builtin(c.ask)
		if err != nil {
			t.Errorf("%s: %v", c.ask, err)
			continue
		}
		if s.Name != c.want {
			t.Errorf("%s resolved to %s, want %s", c.ask, s.Name, c.want)
		}
		if len(s.SHA256) != 64 || len(s.References) == 0 {
			t.Errorf("%s: hash %q, %d references", c.ask, s.SHA256, len(s.References))
		}
	}
	if _, err := Builtin("cc-pV7Z"); err == nil || !strings.Contains(err.Error(), `"cc-pV7Z"`) {
		t.Errorf("unknown basis error: %v", err)
	}
}

func TestEveryEmbeddedSetParses(t *testing.T) {
	for _, info := range Library() {
		s, err := Builtin(info.Name)
		if err != nil {
			t.Errorf("%s: %v", info.Name, err)
			continue
		}
		if len(s.Elements) != len(info.Elements) {
			t.Errorf("%s: %d elements, index says %d", info.Name, len(s.Elements), len(info.Elements))
		}
	}
}

func TestMissingElement(t *testing.T) {
	s, _ := Builtin("6-311++G**")
	m := &molecule.Molecule{Atoms: []molecule.Atom{molecule.MustAtom("Kr", 0, 0, 0)}}
	_, err := Build(s, m, "")
	if err == nil || !strings.Contains(err.Error(), "6-311++G**") || !strings.Contains(err.Error(), "Kr") {
		t.Errorf("error %v should name the basis and the element", err)
	}
}

func TestBuildCounts(t *testing.T) {
	water := &molecule.Molecule{Atoms: []molecule.Atom{
		molecule.MustAtom("O", 0, 0, 0), molecule.MustAtom("H", 0, 1.4, 1.1), molecule.MustAtom("H", 0, -1.4, 1.1)}}
	// Function counts of water: cc-pVDZ 24 (spherical), 6-31G* 19 (Cartesian d: 6 components),
	// cc-pVTZ 58 — common practice, no source.
	cases := []struct {
		name string
		ang  Angular
		want int
	}{{"cc-pVDZ", "", 24}, {"6-31G*", "", 19}, {"6-31G*", Spherical, 18}, {"cc-pVDZ", Cartesian, 25}, {"cc-pVTZ", "", 58}}
	for _, c := range cases {
		s, _ := Builtin(c.name)
		mb, err := Build(s, water, c.ang)
		if err != nil {
			t.Fatal(err)
		}
		if mb.NBasis != c.want {
			t.Errorf("%s %s: %d functions, want %d", c.name, c.ang, mb.NBasis, c.want)
		}
	}
}

func TestUserFile(t *testing.T) {
	dir := t.TempDir()
	good := `{"name":"my-min","aliases":[],"role":"orbital","angular":"cartesian","source":"test","references":["none"],
	"elements":{"H":[{"l":0,"exponents":[1.0],"coefficients":[1.0]}]}}`
	p := filepath.Join(dir, "min.json")
	os.WriteFile(p, []byte(good), 0o644)
	s, err := Load(p)
	if err != nil || s.Name != "my-min" || len(s.SHA256) != 64 {
		t.Fatalf("user file: %v %+v", err, s)
	}
	bad := []struct{ text, want string }{
		{`{"name":"x","angular":"polar","elements":{"H":[]}}`, `"angular" is "polar"`},
		{`{"name":"x","angular":"cartesian","elements":{"Xq":[]}}`, "elements.Xq"},
		{`{"name":"x","angular":"cartesian","elements":{"H":[{"l":0,"exponents":[-1],"coefficients":[1]}]}}`, "elements.H[0]: exponent 0"},
		{`{"name":"x","angular":"cartesian","elements":{"H":[{"l":7,"exponents":[1],"coefficients":[1]}]}}`, "l=7"},
		{`{"name":"x",`, "cut short"},
	}
	for i, b := range bad {
		q := filepath.Join(dir, "bad.json")
		os.WriteFile(q, []byte(b.text), 0o644)
		_, err := Load(q)
		if err == nil || !strings.Contains(err.Error(), b.want) {
			t.Errorf("bad %d: %v, want %q", i, err, b.want)
		}
	}
}

func TestUserFileTypeErrors(t *testing.T) {
	dir := t.TempDir()
	cases := []struct{ text, want string }{
		{`5`, "holds a JSON number where the basis layout needs an object"},
		{`{"name":"x","angular":"cartesian","elements":{"H":[{"l":"s","exponents":[1],"coefficients":[1]}]}}`, `"elements.l" holds a JSON string`},
		{`{"name":"x","angular":"cartesian","elements":{`, "cut short"},
	}
	for i, c := range cases {
		p := filepath.Join(dir, "b.json")
		os.WriteFile(p, []byte(c.text), 0o644)
		_, err := Load(p)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("case %d: %v, want %q", i, err, c.want)
		}
	}
}
