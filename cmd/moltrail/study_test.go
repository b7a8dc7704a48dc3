package main

import (
	"bufio"
	"encoding/json"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"moltrail/archive"
	"moltrail/compare"
)

// These tests drive `moltrail study` and `moltrail demo` through the built
// binary (see TestMain), with real calculations kept small.

const ammoniaXYZ = "4\nammonia\nN 0.000 0.000 0.113\nH 0.000 0.939 -0.264\nH 0.813 -0.470 -0.264\nH -0.813 -0.470 -0.264\n"

// studyFile writes a study of MP2 single points on water and ammonia at
// the given basis sets (six items for three sets: each a second or less).
func studyFile(t *testing.T, dir string, basisSets ...string) string {
	t.Helper()
	writeFile(t, dir, "water.xyz", waterXYZ)
	writeFile(t, dir, "ammonia.xyz", ammoniaXYZ)
	b, _ := json.Marshal(basisSets)
	return writeFile(t, dir, "study.json", `{
  "format": "moltrail-study/1",
  "name": "resume-check",
  "molecules": [{"file": "water.xyz"}, {"file": "ammonia.xyz"}],
  "levels": [{"methods": ["mp2"], "basis_sets": `+string(b)+`}],
  "tasks": [{"task": "energy"}],
  "tags": {"check": "study"}
}`)
}

type studyOut struct {
	Counts struct {
		Total, Done, Reused, Failed, Pending, Skipped int
		NotConverged                                  int `json:"not_converged"`
		ToCompute                                     int `json:"to_compute"`
	} `json:"counts"`
	Interrupted bool `json:"interrupted"`
	Items       []struct {
		Item, Outcome, Status string
		LevelID               string `json:"level_id"`
		RecordID              string `json:"record_id"`
		InputKey              string `json:"input_key"`
	} `json:"items"`
	Report *struct {
		Out     string `json:"out"`
		Records int    `json:"records"`
	} `json:"report"`
}

func decodeStudy(t *testing.T, s string) studyOut {
	t.Helper()
	var o studyOut
	if err := json.Unmarshal([]byte(s), &o); err != nil {
		t.Fatalf("stdout is not one JSON summary: %v\n%s", err, s)
	}
	return o
}

// perKey counts the archive's records per input key.
func perKey(t *testing.T, arch string) map[string]int {
	t.Helper()
	st, err := archive.Open(arch, archive.OpenOptions{ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	sums, err := st.List(archive.Filter{})
	if err != nil {
		t.Fatal(err)
	}
	out := map[string]int{}
	for _, s := range sums {
		out[s.InputKey]++
	}
	return out
}

// startStudy starts the binary and returns it with a scanner over its
// stderr lines.
func startStudy(t *testing.T, args ...string) (*exec.Cmd, *bufio.Scanner, *strings.Builder) {
	t.Helper()
	cmd := exec.Command(binary, args...)
	var so strings.Builder
	cmd.Stdout = &so
	pipe, err := cmd.StderrPipe()
	if err != nil {
		t.Fatal(err)
	}
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	return cmd, bufio.NewScanner(pipe), &so
}

// waitForLine reads stderr until a line contains want.
func waitForLine(t *testing.T, sc *bufio.Scanner, want string) string {
	t.Helper()
	for sc.Scan() {
		if strings.Contains(sc.Text(), want) {
			return sc.Text()
		}
	}
	t.Fatalf("stderr ended without a line containing %q", want)
	return ""
}

func TestStudyKilledResumesComputingEachItemOnce(t *testing.T) {
	dir := t.TempDir()
	arch := filepath.Join(dir, "arch")
	sf := studyFile(t, dir, "6-31G*", "cc-pVDZ", "6-311G**")
	cmd, sc, _ := startStudy(t, "study", "--archive", arch, "--jobs", "1", sf)
	// The first finished item is stored before its line is printed.
	waitForLine(t, sc, "done")
	if err := cmd.Process.Signal(syscall.SIGKILL); err != nil {
		t.Fatal(err)
	}
	go func() {
		for sc.Scan() {
		}
	}()
	cmd.Wait()
	stored := perKey(t, arch)
	if len(stored) == 0 || len(stored) >= 6 {
		t.Fatalf("after the kill the archive holds %d of 6 items; the check needs a partial study", len(stored))
	}
	r := moltrail(t, nil, "study", "--archive", arch, "--jobs", "2", "--json", sf)
	if r.code != exitOK {
		t.Fatalf("resumed study: exit %d\n%s", r.code, r.stderr)
	}
	o := decodeStudy(t, r.stdout)
	if o.Counts.Reused != len(stored) || o.Counts.Done != 6-len(stored) {
		t.Fatalf("resumed study: %+v, %d stored before", o.Counts, len(stored))
	}
	keys := perKey(t, arch)
	if len(keys) != 6 {
		t.Fatalf("%d input keys stored, want 6", len(keys))
	}
	for k, n := range keys {
		if n != 1 {
			t.Errorf("input key %s stored %d times", k[:12], n)
		}
	}
}

func TestStudyCtrlCStoresRunningItemThenResumes(t *testing.T) {
	dir := t.TempDir()
	arch := filepath.Join(dir, "arch")
	sf := studyFile(t, dir, "6-31G*", "cc-pVDZ", "6-311G**")
	cmd, sc, so := startStudy(t, "study", "--archive", arch, "--jobs", "1", "--json", sf)
	waitForLine(t, sc, "done")
	if err := cmd.Process.Signal(os.Interrupt); err != nil {
		t.Fatal(err)
	}
	rest := []string{}
	for sc.Scan() {
		rest = append(rest, sc.Text())
	}
	err := cmd.Wait()
	if ee, ok := err.(*exec.ExitError); !ok || ee.ExitCode() != exitFailed {
		t.Fatalf("interrupted study: %v, want exit status 1\n%s", err, strings.Join(rest, "\n"))
	}
	if !strings.Contains(strings.Join(rest, "\n"), "run the same command again") {
		t.Errorf("no resume hint on stderr:\n%s", strings.Join(rest, "\n"))
	}
	o := decodeStudy(t, so.String())
	if !o.Interrupted || o.Counts.Pending == 0 || o.Counts.Done == 0 {
		t.Fatalf("interrupted summary %+v", o.Counts)
	}
	if n := len(perKey(t, arch)); n != o.Counts.Done {
		t.Fatalf("the summary says %d done, the archive holds %d", o.Counts.Done, n)
	}
	r := moltrail(t, nil, "study", "--archive", arch, "--json", sf)
	o2 := decodeStudy(t, r.stdout)
	if r.code != exitOK || o2.Counts.Reused != o.Counts.Done || o2.Counts.Done != o.Counts.Pending {
		t.Fatalf("resumed: exit %d, %+v after %+v\n%s", r.code, o2.Counts, o.Counts, r.stderr)
	}
	for k, n := range perKey(t, arch) {
		if n != 1 {
			t.Errorf("input key %s stored %d times", k[:12], n)
		}
	}
}

func TestStudyAddedLevelRunsOnlyNewItems(t *testing.T) {
	dir := t.TempDir()
	arch := filepath.Join(dir, "arch")
	sf := studyFile(t, dir, "6-31G*")
	r := moltrail(t, nil, "study", "--archive", arch, "--json", sf)
	if o := decodeStudy(t, r.stdout); r.code != exitOK || o.Counts.Done != 2 {
		t.Fatalf("first run: exit %d %+v\n%s", r.code, o.Counts, r.stderr)
	}
	sf = studyFile(t, dir, "6-31G*", "cc-pVDZ")
	dry := moltrail(t, nil, "study", "--archive", arch, "--dry-run", "--json", sf)
	if o := decodeStudy(t, dry.stdout); dry.code != exitOK || o.Counts.ToCompute != 2 || o.Counts.Reused != 2 {
		t.Fatalf("dry run: exit %d %+v", dry.code, o.Counts)
	}
	r = moltrail(t, nil, "study", "--archive", arch, "--json", sf)
	o := decodeStudy(t, r.stdout)
	if r.code != exitOK || o.Counts.Done != 2 || o.Counts.Reused != 2 {
		t.Fatalf("with a level added: exit %d %+v", r.code, o.Counts)
	}
	for _, it := range o.Items {
		if it.Outcome == "computed" && it.LevelID != "mp2/cc-pVDZ" {
			t.Errorf("%s computed again", it.Item)
		}
	}
	if n := len(perKey(t, arch)); n != 4 {
		t.Fatalf("%d records, want 4", n)
	}
	// The text summary goes to stdout, the per-item lines to stderr.
	r = moltrail(t, nil, "study", "--archive", arch, sf)
	if !strings.Contains(r.stdout, "4 items: 0 done, 4 reused, 0 failed, 0 not converged") || strings.Contains(r.stdout, "moltrail study:") {
		t.Errorf("text summary:\n%s\nstderr:\n%s", r.stdout, r.stderr)
	}
}

func TestStudyBadInput(t *testing.T) {
	dir := t.TempDir()
	bad := writeFile(t, dir, "bad.json", `{"format": "moltrail-study/1", "name": "x", "molecules": [{"file": "missing.xyz"}], "levels": [{"method": "hf", "basis": "sto-3g"}], "tasks": [{"task": "energy"}]}`)
	for _, args := range [][]string{
		{"study", bad},
		{"study"},
		{"study", "--jobs", "0", bad},
		{"study", filepath.Join(dir, "nothing.json")},
	} {
		r := moltrail(t, nil, append(args, "--archive", filepath.Join(dir, "arch"))...)
		if r.code != exitUsage || strings.Count(strings.TrimSpace(r.stderr), "\n") > 0 || r.stdout != "" {
			t.Errorf("%v: exit %d, stdout %q, stderr %q", args, r.code, r.stdout, r.stderr)
		}
	}
	r := moltrail(t, nil, "study", bad)
	if !strings.Contains(r.stderr, "bad.json") || !strings.Contains(r.stderr, "missing.xyz") {
		t.Errorf("error does not name the file and the molecule: %q", r.stderr)
	}
	h := moltrail(t, nil, "study", "--help")
	if h.code != exitOK || !strings.Contains(h.stdout+h.stderr, "max(1, cores/N)") {
		t.Errorf("--help does not say how cores are shared: exit %d\n%s%s", h.code, h.stdout, h.stderr)
	}
}

func TestStudyReportCoversOnlyTheStudy(t *testing.T) {
	dir := t.TempDir()
	arch := filepath.Join(dir, "arch")
	// A record outside the study, of a molecule the reference sets know.
	w := writeFile(t, dir, "w.xyz", waterXYZ)
	if r := moltrail(t, nil, "run", "--archive", arch, "--basis", "sto-3g", w); r.code != exitOK {
		t.Fatalf("run: %s", r.stderr)
	}
	writeFile(t, dir, "hf.xyz", "2\nhydrogen fluoride\nH 0 0 0\nF 0 0 0.92\n")
	sf := writeFile(t, dir, "s.json", `{"format": "moltrail-study/1", "name": "report-check",
	  "molecules": [{"file": "hf.xyz"}, {"file": "w.xyz"}],
	  "levels": [{"method": "hf", "basis": "3-21G", "optimization": {"gradient_method": "analytic"}}],
	  "tasks": [{"task": "optimize"}], "reference_set": "structures-exp",
	  "report": {"title": "Check", "output": "from-file.pdf"}}`)
	out := filepath.Join(dir, "si.pdf")
	r := moltrail(t, nil, "study", "--archive", arch, "--report", out, "--json", sf)
	if r.code != exitOK {
		t.Fatalf("study --report: exit %d\n%s", r.code, r.stderr)
	}
	o := decodeStudy(t, r.stdout)
	if o.Report == nil || o.Report.Records != 2 || o.Report.Out != out {
		t.Fatalf("report summary %+v", o.Report)
	}
	b, err := os.ReadFile(out)
	if err != nil || !strings.HasPrefix(string(b), "%PDF") {
		t.Fatalf("no PDF at %s: %v", out, err)
	}
	// Without --report the study's own report.output (beside the file) is written.
	r = moltrail(t, nil, "study", "--archive", arch, sf)
	if _, err := os.Stat(filepath.Join(dir, "from-file.pdf")); r.code != exitOK || err != nil {
		t.Fatalf("report.output not written: exit %d, %v\n%s", r.code, err, r.stderr)
	}
}

// bondMSE returns the bond-length MSE (pm) per level label from the records
// of an archive, compared with the built-in experimental structures.
func bondMSE(t *testing.T, arch string) map[string]float64 {
	t.Helper()
	st, err := archive.Open(arch, archive.OpenOptions{ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	sums, err := st.List(archive.Filter{})
	if err != nil {
		t.Fatal(err)
	}
	var recs []*archive.Record
	for _, s := range sums {
		r, _, err := st.Get(s.ID)
		if err != nil {
			t.Fatal(err)
		}
		recs = append(recs, r)
	}
	set, err := compare.Builtin("structures-exp")
	if err != nil {
		t.Fatal(err)
	}
	tab, err := compare.Compare(set, recs, compare.Options{})
	if err != nil {
		t.Fatal(err)
	}
	out := map[string]float64{}
	for _, s := range tab.Stats {
		if s.Kind == compare.KindBondLength {
			if s.Unit != "pm" {
				t.Fatalf("bond lengths in %s", s.Unit)
			}
			out[s.Level] = s.MSE
		}
	}
	return out
}

// checkOrdering asserts the textbook picture (common practice, no
// source): with the larger basis set, Hartree–Fock bond lengths are too
// short by a few pm, MP2 and the hybrid functional come closer.
func checkOrdering(t *testing.T, mse map[string]float64, basis string) {
	t.Helper()
	hf, okH := mse["HF/"+basis]
	mp2, okM := mse["MP2(fc)/"+basis]
	b3, okB := mse["B3LYP/"+basis]
	if !okH || !okM || !okB {
		t.Fatalf("levels missing from the comparison: %v", mse)
	}
	if hf > -1 || hf < -6 {
		t.Errorf("HF/%s bond lengths: MSE %+.2f pm, expected a few pm too short", basis, hf)
	}
	if math.Abs(mp2) >= math.Abs(hf) || math.Abs(b3) >= math.Abs(hf) {
		t.Errorf("with %s: |MSE| HF %.2f, MP2 %.2f, B3LYP %.2f pm: MP2 and B3LYP should come closer than HF", basis, hf, mp2, b3)
	}
}

// TestDemo runs the built-in scenario through the binary: the full one
// (48 optimisations, two to three minutes on two cores), or the quick one
// (nine) under -short; then checks the ordering of the bond-length errors
// from the archive it produced, and that a second run computes nothing.
func TestDemo(t *testing.T) {
	args, basisSets := []string{"demo"}, []string{"6-311G**"}
	if testing.Short() {
		args = append(args, "--quick")
	}
	dir := t.TempDir()
	arch := filepath.Join(dir, "arch")
	pdf := filepath.Join(dir, "demo.pdf")
	args = append(args, "--archive", arch, "--out", pdf)
	t0 := time.Now()
	r := moltrail(t, nil, args...)
	if r.code != exitOK {
		t.Fatalf("%v: exit %d\n%s\n%s", args, r.code, r.stdout, r.stderr)
	}
	t.Logf("%v: first run %s", args, time.Since(t0).Round(time.Second))
	for _, want := range []string{"Halden group", "bond lengths (pm)", "MSE", "SD", "Cautions raised", "HF/6-311G**", "MP2(fc)/6-311G**", "B3LYP/6-311G**", "document: " + pdf} {
		if !strings.Contains(r.stdout, want) {
			t.Errorf("terminal summary lacks %q:\n%s", want, r.stdout)
		}
	}
	if b, err := os.ReadFile(pdf); err != nil || !strings.HasPrefix(string(b), "%PDF") {
		t.Fatalf("no PDF: %v", err)
	}
	mse := bondMSE(t, arch)
	for _, b := range basisSets {
		checkOrdering(t, mse, b)
	}
	// A second run reuses everything.
	t0 = time.Now()
	r2 := moltrail(t, nil, append(args, "--json")...)
	var o struct {
		Counts struct{ Total, Done, Reused int } `json:"counts"`
		Stats  []compare.Stats                   `json:"statistics"`
	}
	if err := json.Unmarshal([]byte(r2.stdout), &o); err != nil || r2.code != exitOK {
		t.Fatalf("second run: exit %d, %v\n%s", r2.code, err, r2.stderr)
	}
	if o.Counts.Done != 0 || o.Counts.Reused != o.Counts.Total || len(o.Stats) == 0 {
		t.Fatalf("second run computed again: %+v", o.Counts)
	}
	t.Logf("second run: %s", time.Since(t0).Round(time.Millisecond))
}
