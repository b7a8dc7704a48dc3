package main

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"moltrail/archive"
	"moltrail/compare"
	"moltrail/engine"
	"moltrail/engine/molecule"
)

// cmpRecord builds a sealed record for a molecule given in bohr with an
// SCF dipole (au, about the coordinate origin).
func cmpRecord(t *testing.T, name string, atoms [][4]any, basis, status, start string, dipoleAU []float64) *archive.Record {
	t.Helper()
	m := &molecule.Molecule{Name: name}
	for _, a := range atoms {
		m.Atoms = append(m.Atoms, molecule.MustAtom(a[0].(string), a[1].(float64), a[2].(float64), a[3].(float64)))
	}
	job, err := engine.NewJob(engine.Request{Molecule: m, Method: "hf", Basis: basis, Origin: &engine.OriginSpec{Kind: "coordinate-origin"}})
	if err != nil {
		t.Fatal(err)
	}
	r := &archive.Record{Status: status, Input: *job, Code: archive.CurrentCode(), Run: archive.Run{StartUTC: start}}
	r.Results.Status = status
	for _, a := range job.Molecule.Atoms {
		r.Results.GeometryAngstrom = append(r.Results.GeometryAngstrom, engine.GeomAtom{Symbol: a.Symbol,
			XYZ: [3]float64{a.Bohr[0] * molecule.BohrAngstrom, a.Bohr[1] * molecule.BohrAngstrom, a.Bohr[2] * molecule.BohrAngstrom}})
	}
	if dipoleAU != nil {
		d := [3]float64{dipoleAU[0] * molecule.DebyePerAU, dipoleAU[1] * molecule.DebyePerAU, dipoleAU[2] * molecule.DebyePerAU}
		r.Results.DipoleDebye = &d
	}
	if err := r.Seal(); err != nil {
		t.Fatal(err)
	}
	return r
}

func TestCompareCommand(t *testing.T) {
	dir := t.TempDir()
	arch := filepath.Join(dir, "arch")
	st, err := archive.Open(arch, archive.OpenOptions{})
	if err != nil {
		t.Fatal(err)
	}
	// CO at HF/aug-cc-pVDZ: geometry and μz = −0.10217729546805288 au from
	// psi4 1.3.2, testdata/psi4/scf_energies.json case co_rhf_augccpvdz.
	co := cmpRecord(t, "carbon monoxide", [][4]any{{"C", 0.0, 0.0, 0.0}, {"O", 0.0, 0.0, 2.1321779874}}, "aug-cc-pVDZ", engine.StatusConverged,
		"2025-01-01T10:00:00Z", []float64{0, 0, -0.10217729546805288})
	bad := cmpRecord(t, "water", [][4]any{{"O", 0.0, 0.0, 0.0}, {"H", 0.0, 1.43, -1.1}, {"H", 0.0, -1.43, -1.1}}, "cc-pVDZ", engine.StatusNotConverged,
		"2025-01-02T10:00:00Z", nil)
	for _, r := range []*archive.Record{co, bad} {
		if _, err := st.Put(r); err != nil {
			t.Fatal(err)
		}
	}
	st.Close()

	// The records are single points at the input geometry: by the set's
	// rule (each level's optimised structure) nothing is compared, and
	// the reason says so.
	var out, errb bytes.Buffer
	if code := dispatch([]string{"compare", "--archive", arch, "--refs", "moments-exp", "--json"}, &out, &errb); code != exitOK {
		t.Fatalf("exit %d: %s", code, errb.String())
	}
	var strict compare.Table
	if err := json.Unmarshal(out.Bytes(), &strict); err != nil || len(strict.Deviations) != 0 || len(strict.Unmatched) == 0 || !strings.Contains(strict.Unmatched[0].Reason, "input geometry not used") {
		t.Fatalf("by the optimised-structure rule the single points should be unmatched with the reason: %v %+v", err, strict.Unmatched)
	}
	out.Reset()
	if code := dispatch([]string{"compare", "--archive", arch, "--refs", "moments-exp", "--property-geometry", "input", "--json"}, &out, &errb); code != exitOK {
		t.Fatalf("exit %d: %s", code, errb.String())
	}
	var tab compare.Table
	if err := json.Unmarshal(out.Bytes(), &tab); err != nil {
		t.Fatalf("--json output is not one JSON value: %v", err)
	}
	var flip bool
	for _, d := range tab.Deviations {
		if d.EntryID == "co.mu-axis" {
			for _, c := range d.Cautions {
				flip = flip || c == compare.CodeFlip
			}
		}
	}
	if !flip {
		t.Errorf("CO dipole should be flagged %s: %+v", compare.CodeFlip, tab.Deviations)
	}
	if len(tab.Excluded) != 1 || tab.Excluded[0].RecordID != bad.ID {
		t.Errorf("the not-converged water record should be listed as excluded: %+v", tab.Excluded)
	}

	out.Reset()
	if code := dispatch([]string{"compare", "--archive", arch, "--refs", "builtin", "--property-geometry", "input", "--csv"}, &out, &errb); code != exitOK {
		t.Fatalf("--csv exit %d: %s", code, errb.String())
	}
	rows, err := csv.NewReader(&out).ReadAll()
	if err != nil || len(rows) < 2 || rows[0][0] != "entry_id" {
		t.Fatalf("--csv: %v %v", rows, err)
	}

	out.Reset()
	if code := dispatch([]string{"compare", "--archive", arch, "--refs", "builtin", "--property-geometry", "input"}, &out, &errb); code != exitOK || !strings.Contains(out.String(), "sign-flip") {
		t.Fatalf("terminal output (exit %d) lacks the CO caution:\n%s", code, out.String())
	}

	// A reference file with an unknown unit: exit 2, the entry named.
	refs := filepath.Join(dir, "bad.json")
	os.WriteFile(refs, []byte(`{"format": "moltrail-refset/1", "name": "b", "description": "", "source": "s", "entries": [
	 {"id": "x1", "molecule": {"name": "water", "formula": "H2O"}, "quantity": {"kind": "dipole_magnitude"}, "value": 1.85, "unit": "statC", "uncertainty": 0, "kind": "experiment", "source": "s"}]}`), 0o644)
	errb.Reset()
	if code := dispatch([]string{"compare", "--archive", arch, "--refs", refs}, &out, &errb); code != exitUsage || !strings.Contains(errb.String(), `entry "x1"`) {
		t.Errorf("bad reference file: exit %d, stderr %q", code, errb.String())
	}
	out.Reset()
	if code := dispatch([]string{"compare", "--archive", arch}, &out, &errb); code != exitOK || !strings.Contains(out.String(), "sign-flip") {
		t.Errorf("without --refs compare should use the built-in sets: exit %d\n%s", code, out.String())
	}
}
