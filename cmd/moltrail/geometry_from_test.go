package main

import (
	"path/filepath"
	"testing"

	"moltrail/archive"
)

// A later job starts from an archived final geometry and says so in its lineage.
func TestRunGeometryFrom(t *testing.T) {
	dir := t.TempDir()
	arch := filepath.Join(dir, "arch")
	xyz := writeFile(t, dir, "h2.xyz", h2XYZ)
	r := call("run", "--archive", arch, "--basis", "sto-3g", "--task", "optimize", "--json", xyz)
	if r.code != 0 {
		t.Fatalf("optimise: exit %d: %s", r.code, r.stderr)
	}
	src := decodeRecord(t, r.stdout)
	r = call("run", "--archive", arch, "--basis", "cc-pvdz", "--geometry-from", src.ID[:10], "--json")
	if r.code != 0 {
		t.Fatalf("run --geometry-from: exit %d: %s", r.code, r.stderr)
	}
	rec := decodeRecord(t, r.stdout)
	if len(rec.Lineage) != 1 || rec.Lineage[0].Relation != archive.GeometryFrom || rec.Lineage[0].ID != src.ID {
		t.Errorf("lineage %+v, want geometry-from %s", rec.Lineage, src.ID)
	}
	if rec.Input.Molecule.Name != src.Input.Molecule.Name || len(rec.Results.GeometryAngstrom) != 2 {
		t.Errorf("molecule %q, %d atoms", rec.Input.Molecule.Name, len(rec.Results.GeometryAngstrom))
	}
	d0 := src.Results.Structure.Bonds[0].Angstrom
	d1 := rec.Results.Structure.Bonds[0].Angstrom
	if d := d0 - d1; d > 1e-12 || d < -1e-12 {
		t.Errorf("geometry changed: %v vs %v Å", d0, d1)
	}
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"run", "--archive", arch, "--geometry-from", src.ID[:10], xyz}, "not both"},
		{[]string{"run", "--archive", arch, "--geometry-from", "0000ffff"}, "0000ffff"},
	} {
		checkRefusal(t, call(c.args...), exitUsage, c.want)
	}
}
