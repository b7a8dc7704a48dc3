package main

import (
	"encoding/json"
	"fmt"
	"path/filepath"
	"strings"
	"testing"
)

// A basis-set extrapolation of two coupled-cluster records is stored as a
// derived record that verifies, traces back to its inputs and reproduces
// by re-running them.
func TestDeriveCBSEndToEnd(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	arch := filepath.Join(dir, "arch")
	xyz := writeFile(t, dir, "h2.xyz", h2XYZ)
	var ids []string
	for _, b := range []string{"cc-pVDZ", "cc-pVTZ"} {
		r := moltrail(t, nil, "run", "--archive", arch, "--method", "ccsd(t)", "--basis", b, "--json", xyz)
		if r.code != 0 {
			t.Fatalf("run %s: %d %s", b, r.code, r.stderr)
		}
		var rec struct {
			ID string `json:"id"`
		}
		if err := json.Unmarshal([]byte(r.stdout), &rec); err != nil {
			t.Fatal(err)
		}
		ids = append(ids, rec.ID[:10])
	}
	r := moltrail(t, nil, "derive", "--archive", arch, "--json", "--tag", "set=cbs", "cbs", ids[1], ids[0])
	if r.code != 0 {
		t.Fatalf("derive: %d %s", r.code, r.stderr)
	}
	var d struct {
		ID      string `json:"id"`
		Results struct {
			Energy float64 `json:"energy_hartree"`
		} `json:"results"`
		Derivation struct {
			Recipe string `json:"recipe"`
		} `json:"derivation"`
	}
	if err := json.Unmarshal([]byte(r.stdout), &d); err != nil || d.Derivation.Recipe != "cbs-energy" {
		t.Fatalf("derived record: %v %s", err, r.stdout)
	}
	if r := moltrail(t, nil, "verify", "--archive", arch); r.code != 0 {
		t.Errorf("verify: %d %s %s", r.code, r.stdout, r.stderr)
	}
	r = moltrail(t, nil, "trace", "--archive", arch, fmt.Sprintf("%.6f", d.Results.Energy))
	if r.code != 0 || !strings.Contains(r.stdout, "is derived (cbs-energy): X=2 "+ids[0]) {
		t.Errorf("trace: %d %s", r.code, r.stdout)
	}
	r = moltrail(t, nil, "reproduce", "--archive", arch, "--json", d.ID[:12])
	var rep struct {
		Verdict string            `json:"verdict"`
		Inputs  []json.RawMessage `json:"inputs"`
	}
	if r.code != 0 || json.Unmarshal([]byte(r.stdout), &rep) != nil || rep.Verdict != "reproduced" || len(rep.Inputs) != 2 {
		t.Errorf("reproduce: %d %s %s", r.code, r.stdout, r.stderr)
	}
	// A reference set from the derived record; compare cites it and its inputs.
	refs := filepath.Join(dir, "refs.json")
	r = moltrail(t, nil, "refset", "--archive", arch, "--out", refs, "--name", "h2 cbs", "--record", d.ID[:12])
	if r.code != 0 || !strings.Contains(r.stdout, d.ID) {
		t.Fatalf("refset: %d %s %s", r.code, r.stdout, r.stderr)
	}
	r = moltrail(t, nil, "compare", "--archive", arch, "--refs", refs, "--json")
	var tab struct {
		ReferenceRecords []string `json:"reference_records"`
	}
	if r.code != 0 || json.Unmarshal([]byte(r.stdout), &tab) != nil || len(tab.ReferenceRecords) != 1 || tab.ReferenceRecords[0] != d.ID {
		t.Errorf("compare: %d %s %s", r.code, r.stdout, r.stderr)
	}
	if r := moltrail(t, nil, "refset", "--archive", arch, "--out", refs, "--name", "x", "--record", ids[0]); r.code != 2 || !strings.Contains(r.stderr, "state one") {
		t.Errorf("record without uncertainty: %d %s", r.code, r.stderr)
	}
	if r := moltrail(t, nil, "derive", "--archive", arch, "cbs", ids[0]); r.code != 2 || !strings.Contains(r.stderr, "two or three") {
		t.Errorf("one record: %d %s", r.code, r.stderr)
	}
}
