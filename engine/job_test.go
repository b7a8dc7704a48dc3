package engine

import (
	"strings"
	"testing"

	"moltrail/engine/molecule"
)

func waterMolecule() *molecule.Molecule {
	m, err := molecule.ParseXYZ(strings.NewReader("3\nwater\nO 0 0 0.1173\nH 0 0.7572 -0.4692\nH 0 -0.7572 -0.4692\n"), "water.xyz")
	if err != nil {
		panic(err)
	}
	return m
}

func TestInputKeyCoversSettings(t *testing.T) {
	base := Request{Molecule: waterMolecule(), Method: "hf", Basis: "cc-pVDZ"}
	j0, err := NewJob(base)
	if err != nil {
		t.Fatal(err)
	}
	k0, _ := j0.InputKey()
	if len(k0) != 64 {
		t.Fatalf("key %q", k0)
	}
	// The same request gives the same key; an alias gives the same key.
	alias := base
	alias.Basis = "CC-PVDZ"
	if j, _ := NewJob(alias); mustKey(t, j) != k0 {
		t.Error("alias changed the input key")
	}
	variants := map[string]func(r *Request){
		"basis":     func(r *Request) { r.Basis = "6-31G*" },
		"angular":   func(r *Request) { r.Angular = "cartesian" },
		"method":    func(r *Request) { r.Method = "mp2" },
		"threshold": func(r *Request) { s := DefaultSCF; s.EnergyTolHartree = 1e-9; r.SCF = &s },
		"guess":     func(r *Request) { s := DefaultSCF; s.Guess = "core"; r.SCF = &s },
		"origin":    func(r *Request) { r.Origin = &OriginSpec{Kind: "coordinate-origin"} },
		"geometry": func(r *Request) {
			m := waterMolecule()
			m.Atoms[0].PosBohr[2] += 1e-9
			r.Molecule = m
		},
	}
	for name, mod := range variants {
		r := base
		mod(&r)
		j, err := NewJob(r)
		if err != nil {
			t.Errorf("%s: %v", name, err)
			continue
		}
		if mustKey(t, j) == k0 {
			t.Errorf("changing %s did not change the input key", name)
		}
	}
}

func mustKey(t *testing.T, j *Job) string {
	t.Helper()
	k, err := j.InputKey()
	if err != nil {
		t.Fatal(err)
	}
	return k
}

func TestNewJobErrors(t *testing.T) {
	cases := []struct {
		r    Request
		want string
	}{
		{Request{Molecule: waterMolecule(), Method: "cisd", Basis: "sto-3g"}, `method "cisd"`},
		{Request{Molecule: waterMolecule(), Method: "hf", Basis: "nope"}, `basis "nope"`},
		{Request{Molecule: waterMolecule(), Method: "hf", Basis: "cc-pvdz-jkfit"}, "fitting set"},
		{Request{Molecule: waterMolecule(), Method: "hf", Basis: "sto-3g", Task: "dance"}, `task "dance"`},
		{Request{Molecule: waterMolecule(), Method: "hf", Basis: "sto-3g", FrozenCore: true}, "frozen core"},
	}
	for _, c := range cases {
		_, err := NewJob(c.r)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("error %v, want containing %q", err, c.want)
		}
	}
	m := waterMolecule()
	m.Multiplicity = 2
	if _, err := NewJob(Request{Molecule: m, Method: "hf", Basis: "sto-3g"}); err == nil || !strings.Contains(err.Error(), "multiplicity 2") {
		t.Errorf("impossible multiplicity: %v", err)
	}
	m = waterMolecule()
	m.Multiplicity = 3
	j, err := NewJob(Request{Molecule: m, Method: "hf", Basis: "sto-3g"})
	if err != nil || j.Reference != "uhf" {
		t.Errorf("triplet water hf: %v reference %v", err, j)
	}
}
