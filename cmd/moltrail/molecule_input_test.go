package main

import (
	"path/filepath"
	"strings"
	"testing"
)

const hydroxideMol = `hydroxide

  written by hand
  2  1  0  0  0  0  0  0  0  0999 V2000
    0.0000    0.0000    0.0000 O   0  5
    0.0000    0.0000    0.9700 H   0  0
  1  2  1  0
M  END
`

// A molfile's formal charges give the charge (unless --charge is given);
// the dipole of the ion comes with a warning naming the origin; close
// atoms run only when allowed, and the record says so.
func TestRunMolfileIonAndCloseAtoms(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	arch := filepath.Join(dir, "arch")
	mol := writeFile(t, dir, "oh.mol", hydroxideMol)
	r := moltrail(t, nil, "run", "--archive", arch, "--basis", "sto-3g", "--json", "--origin", "atom:O1", mol)
	if r.code != 0 {
		t.Fatalf("exit %d: %s", r.code, r.stderr)
	}
	rec := decodeRecord(t, r.stdout)
	if rec.Input.Molecule.Charge != -1 || rec.Input.Origin.Kind != "atom" || rec.Input.Origin.Atom != 0 {
		t.Errorf("charge %d origin %+v", rec.Input.Molecule.Charge, rec.Input.Origin)
	}
	for _, want := range []string{"oh.mol: total charge -1 from the molfile's formal charges",
		"warning: the molecule has charge -1, so its dipole depends on the origin (here the nucleus of atom O1)"} {
		if !strings.Contains(r.stderr, want) {
			t.Errorf("stderr lacks %q:\n%s", want, r.stderr)
		}
	}
	r = moltrail(t, nil, "run", "--archive", arch, "--basis", "sto-3g", "--json", "--charge", "1", "--multiplicity", "3", mol)
	if r.code != 0 || decodeRecord(t, r.stdout).Input.Molecule.Charge != 1 {
		t.Errorf("--charge over the molfile's: exit %d %s", r.code, r.stderr)
	}
	close := writeFile(t, dir, "close.xyz", "2\nsquashed\nH 0 0 0\nH 0 0 0.2\n")
	r = moltrail(t, nil, "run", "--archive", arch, "--basis", "sto-3g", close)
	if r.code != 2 || !strings.Contains(r.stderr, "--force-close-atoms computes anyway") {
		t.Errorf("close atoms: exit %d %s", r.code, r.stderr)
	}
	r = moltrail(t, nil, "run", "--archive", arch, "--basis", "sto-3g", "--force-close-atoms", "--json", close)
	if r.code != 0 {
		t.Fatalf("forced: exit %d %s", r.code, r.stderr)
	}
	rec = decodeRecord(t, r.stdout)
	if n := rec.Results.Notes; len(n) == 0 || !strings.Contains(n[len(n)-1], "computed only because close atoms were explicitly allowed") {
		t.Errorf("notes %q", n)
	}
}
