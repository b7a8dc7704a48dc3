package engine

import (
	"math"
	"strings"
	"testing"

	"moltrail/engine/molecule"
)

func TestParseOrigin(t *testing.T) {
	good := map[string]OriginSpec{
		"centre-of-mass":    {Kind: "centre-of-mass"},
		"centre-of-charge":  {Kind: "centre-of-charge"},
		"coordinate-origin": {Kind: "coordinate-origin"},
		"point:0,0,1":       {Kind: "point", Point: [3]float64{0, 0, molecule.AngstromBohr}},
		"atom:2":            {Kind: "atom", Atom: 1},
		"atom:O1":           {Kind: "atom", Atom: 0, symbol: "O"},
	}
	for text, want := range good {
		got, err := ParseOrigin(text)
		if err != nil || *got != want {
			t.Errorf("%s: %+v, %v; want %+v", text, got, err, want)
		}
	}
	bad := map[string]string{
		"point":            "a point needs its coordinates",
		"point:1,2":        "a point needs three coordinates",
		"point:1,2,nan":    "coordinate z \"nan\" is not a number",
		"atom":             "an atom origin needs the atom",
		"atom:0":           "is not an atom number",
		"atom:Qq1":         "unknown element symbol",
		"centre-of-mass:1": "takes no value",
		"middle":           "is not known: give centre-of-mass",
	}
	for text, want := range bad {
		if _, err := ParseOrigin(text); err == nil || !strings.Contains(err.Error(), want) {
			t.Errorf("%s: error %v, want containing %q", text, err, want)
		}
	}
}

// Dipoles of neutral molecules do not depend on the origin, quadrupoles of
// polar ones do, by the textbook shift Θ' = Θ − (3/2)(μd + dμ) + δ μ·d for
// a shift d of the origin (common practice, no source).
func TestAtomAndPointOrigins(t *testing.T) {
	m := waterMolecule()
	run := func(text string) (*Job, *Result) {
		o, err := ParseOrigin(text)
		if err != nil {
			t.Fatal(err)
		}
		j, err := NewJob(Request{Molecule: m, Method: "hf", Basis: "sto-3g", Origin: o})
		if err != nil {
			t.Fatal(err)
		}
		r, err := Run(j, RunOptions{Threads: 1})
		if err != nil {
			t.Fatal(err)
		}
		return j, r
	}
	jo, ro := run("atom:O1")
	if ro.MultipoleOriginBohr != m.Atoms[0].PosBohr || jo.OriginLabel() != "the nucleus of atom O1" {
		t.Fatalf("origin %v (%s), want the O nucleus %v", ro.MultipoleOriginBohr, jo.OriginLabel(), m.Atoms[0].PosBohr)
	}
	o := m.Atoms[0].PosBohr
	_, rp := run("point:0,0,0.1173")
	if d := molecule.Dist(rp.MultipoleOriginBohr, o); d > 1e-15 {
		t.Errorf("point origin %v, want %v", rp.MultipoleOriginBohr, o)
	}
	if *rp.QuadrupoleBuckingham != *ro.QuadrupoleBuckingham {
		t.Errorf("same origin, different quadrupoles: %+v %+v", rp.QuadrupoleBuckingham, ro.QuadrupoleBuckingham)
	}
	_, rc := run("centre-of-mass")
	for k := 0; k < 3; k++ {
		if math.Abs(rc.DipoleDebye[k]-ro.DipoleDebye[k]) > 1e-10 {
			t.Errorf("dipole of a neutral molecule moved with the origin: %v vs %v", rc.DipoleDebye, ro.DipoleDebye)
		}
	}
	if math.Abs(rc.QuadrupoleBuckingham.ZZ-ro.QuadrupoleBuckingham.ZZ) < 1e-3 {
		t.Errorf("quadrupole of water did not change with the origin: %g vs %g", rc.QuadrupoleBuckingham.ZZ, ro.QuadrupoleBuckingham.ZZ)
	}
	for _, text := range []string{"atom:4", "atom:H1"} {
		org, _ := ParseOrigin(text)
		if _, err := NewJob(Request{Molecule: m, Method: "hf", Basis: "sto-3g", Origin: org}); err == nil || !strings.Contains(err.Error(), "does not exist") {
			t.Errorf("%s: %v", text, err)
		}
	}
}

func TestCloseAtomsRefusedUnlessAllowed(t *testing.T) {
	h2 := &molecule.Molecule{Name: "H2", Atoms: []molecule.Atom{molecule.MustAtom("H", 0, 0, 0), molecule.MustAtom("H", 0, 0, 0.01*molecule.AngstromBohr)}}
	_, err := NewJob(Request{Molecule: h2, Method: "hf", Basis: "sto-3g"})
	if err == nil || !strings.Contains(err.Error(), "0.010 Å apart") || !strings.Contains(err.Error(), ErrCloseAtoms.Error()) {
		t.Fatalf("0.01 Å: %v", err)
	}
	j, err := NewJob(Request{Molecule: h2, Method: "hf", Basis: "sto-3g", AllowCloseAtoms: true})
	if err != nil {
		t.Fatal(err)
	}
	r, err := Run(j, RunOptions{Threads: 1})
	if err != nil {
		t.Fatal(err)
	}
	if len(r.Notes) == 0 || !strings.Contains(r.Notes[len(r.Notes)-1], "computed only because close atoms were explicitly allowed") {
		t.Errorf("notes %q", r.Notes)
	}
}
