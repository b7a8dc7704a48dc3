package main

import (
	"encoding/json"
	"fmt"
	"math"
	"path/filepath"
	"strings"
	"testing"

	"moltrail/archive"
)

func TestReproduceTraceDiff(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	arch := filepath.Join(dir, "arch")
	water := writeFile(t, dir, "water.xyz", waterXYZ)
	run := func(args ...string) *archive.Record {
		t.Helper()
		r := moltrail(t, nil, append([]string{"run", "--archive", arch, "--json"}, args...)...)
		if r.code != 0 {
			t.Fatalf("run %v: %s", args, r.stderr)
		}
		return decodeRecord(t, r.stdout)
	}
	a := run("--basis", "sto-3g", water)
	b := run("--basis", "3-21g", water)
	c := run("--basis", "sto-3g", "--energy-tol", "1e-8", water)

	// A record reproduces, and the rerun is stored linked to it.
	r := moltrail(t, nil, "reproduce", "--archive", arch, "--json", a.ID[:10])
	var rep archive.Reproduction
	if err := json.Unmarshal([]byte(r.stdout), &rep); err != nil || r.code != 0 || rep.Verdict != archive.Reproduced || len(rep.Checks) == 0 {
		t.Fatalf("reproduce: exit %d %v %+v %s", r.code, err, rep, r.stderr)
	}
	shown := moltrail(t, nil, "show", "--archive", arch, "--json", rep.New)
	if !strings.Contains(shown.stdout, `{"relation":"reproduces","id":"`+a.ID+`"}`) {
		t.Fatalf("rerun not linked to the original: %s", shown.stdout)
	}

	// A record whose pinned basis hash no longer matches the library.
	alt := *a
	alt.Input.Basis.SHA256 = strings.Repeat("0", 64)
	alt.Lineage = nil
	if err := alt.Seal(); err != nil {
		t.Fatal(err)
	}
	enc, _ := alt.Encode()
	f := writeFile(t, dir, "old.jsonl", string(enc)+"\n")
	if r := moltrail(t, nil, "import", "--archive", arch, f); r.code != 0 {
		t.Fatalf("import: %s", r.stderr)
	}
	r = moltrail(t, nil, "reproduce", "--archive", arch, alt.ID)
	if r.code != 1 || !strings.Contains(r.stdout, "CANNOT BE REPRODUCED") || !strings.Contains(r.stdout, "basis data changed") {
		t.Fatalf("basis change not reported: exit %d\n%s\n%s", r.code, r.stdout, r.stderr)
	}
	all := moltrail(t, nil, "reproduce", "--archive", arch, "--all", "--basis", "sto-3g", "--json")
	var reps []archive.Reproduction
	if err := json.Unmarshal([]byte(all.stdout), &reps); err != nil || all.code != 1 || len(reps) != 4 {
		t.Fatalf("reproduce --all: exit %d, %d results, %v", all.code, len(reps), err)
	}

	// Trace a dipole from its 2-decimal print and a bond length from pm.
	d := *a.Results.DipoleDebye
	mu := math.Sqrt(d[0]*d[0] + d[1]*d[1] + d[2]*d[2])
	tr := moltrail(t, nil, "trace", "--archive", arch, fmt.Sprintf("%.2f", mu), "--unit", "D", "--json")
	if tr.code != 0 || !strings.Contains(tr.stdout, `"quantity": "dipole_debye magnitude"`) || !strings.Contains(tr.stdout, a.ID) {
		t.Fatalf("trace dipole %.2f D: %s %s", mu, tr.stdout, tr.stderr)
	}
	var rOH float64
	for _, bd := range a.Results.Structure.Bonds {
		rOH = bd.Angstrom
	}
	tr = moltrail(t, nil, "trace", "--archive", arch, fmt.Sprintf("%.1f", rOH*100), "--unit", "pm")
	if tr.code != 0 || !strings.Contains(tr.stdout, "r(O1–H") || !strings.Contains(tr.stdout, a.ID[:12]) {
		t.Fatalf("trace bond %.1f pm: %s %s", rOH*100, tr.stdout, tr.stderr)
	}
	if tr := moltrail(t, nil, "trace", "--archive", arch, "1.5", "--unit", "furlong"); tr.code != 2 {
		t.Fatalf("unknown unit: exit %d", tr.code)
	}

	// diff shows a basis change and a threshold change.
	df := moltrail(t, nil, "diff", "--archive", arch, "--json", a.ID, b.ID)
	var dd archive.RecordDiff
	if err := json.Unmarshal([]byte(df.stdout), &dd); err != nil || df.code != 0 {
		t.Fatalf("diff: %v %s", err, df.stderr)
	}
	if !hasField(dd.Input, "basis.name") || len(dd.Results) == 0 {
		t.Fatalf("diff A B lacks the basis change or result changes: %+v", dd.Input)
	}
	df = moltrail(t, nil, "diff", "--archive", arch, "--json", a.ID, c.ID)
	json.Unmarshal([]byte(df.stdout), &dd)
	if !hasField(dd.Input, "scf.energy_tol_hartree") || hasField(dd.Input, "basis.name") {
		t.Fatalf("diff A C: %+v", dd.Input)
	}
	human := moltrail(t, nil, "diff", "--archive", arch, a.ID[:8], c.ID[:8])
	if !strings.Contains(human.stdout, "scf.energy_tol_hartree") || !strings.Contains(human.stdout, "1e-08") {
		t.Fatalf("human diff: %s", human.stdout)
	}
}

func hasField(fs []archive.FieldDiff, name string) bool {
	for _, f := range fs {
		if f.Field == name {
			return true
		}
	}
	return false
}
