package main

import (
	"fmt"
	"path/filepath"
	"strings"
	"testing"

	"moltrail/archive"
)

// A fitted run is stored under its own key beside the exact one, and show,
// list, trace and diff say which integrals were fitted and with which set;
// fitting thresholds without --fit are refused.
func TestFittedRunIsShown(t *testing.T) {
	dir := t.TempDir()
	arch := filepath.Join(dir, "arch")
	xyz := writeFile(t, dir, "h2.xyz", h2XYZ)
	exact := call("run", "--archive", arch, "--basis", "cc-pvdz", "--json", xyz)
	fit := call("run", "--archive", arch, "--basis", "cc-pvdz", "--fit", "--json", xyz)
	if exact.code != 0 || fit.code != 0 {
		t.Fatalf("runs: %d %s / %d %s", exact.code, exact.stderr, fit.code, fit.stderr)
	}
	a, b := decodeRecord(t, exact.stdout), decodeRecord(t, fit.stdout)
	if a.InputKey == b.InputKey || a.Results.Fitting != nil || b.Results.Fitting == nil || b.Input.Fitting.SCFSet.Name != "cc-pVDZ-JKFIT" {
		t.Fatalf("exact %s / fitted %s: fitting %+v", a.InputKey[:12], b.InputKey[:12], b.Results.Fitting)
	}
	if err := archive.ValidateRecordJSON([]byte(strings.TrimSpace(fit.stdout))); err != nil {
		t.Fatalf("a fitted record does not match the record schema: %v", err)
	}
	show := call("show", "--archive", arch, b.ID[:12])
	for _, want := range []string{"DF-HF/cc-pVDZ (spherical functions, fitted with cc-pVDZ-JKFIT)", "density-fitted with cc-pVDZ-JKFIT", "auxiliary sha256", b.Input.Fitting.SCFSet.SHA256, "metric eigenvalue cut-off"} {
		if !strings.Contains(show.stdout, want) {
			t.Errorf("show lacks %q:\n%s", want, show.stdout)
		}
	}
	if s := call("show", "--archive", arch, a.ID[:12]); strings.Contains(s.stdout, "fitted") {
		t.Errorf("show of the exact record mentions fitting:\n%s", s.stdout)
	}
	if l := call("list", "--archive", arch); strings.Count(l.stdout, "DF-HF/cc-pVDZ") != 1 {
		t.Errorf("list should mark the one fitted record:\n%s", l.stdout)
	}
	tr := call("trace", "--archive", arch, fmt.Sprintf("%.6f", b.Results.EnergyHartree))
	if !strings.Contains(tr.stdout, "DF-HF/cc-pVDZ fitted with cc-pVDZ-JKFIT") {
		t.Errorf("trace does not say the figure is fitted:\n%s", tr.stdout)
	}
	d := call("diff", "--archive", arch, a.ID[:12], b.ID[:12])
	if !strings.Contains(d.stdout, "density_fitting.scf_auxiliary_basis.name") || !strings.Contains(d.stdout, "cc-pVDZ-JKFIT") {
		t.Errorf("diff does not show the fitting:\n%s", d.stdout)
	}
	r := call("run", "--archive", arch, "--basis", "cc-pvdz", "--fit-schwarz", "1e-10", xyz)
	if r.code != 2 || !strings.Contains(r.stderr, "add --fit or --fit-set") {
		t.Errorf("--fit-schwarz alone: exit %d, %s", r.code, r.stderr)
	}
}
