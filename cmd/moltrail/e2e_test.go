package main

import (
	"bytes"
	"encoding/json"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	badger "github.com/dgraph-io/badger/v4"

	"moltrail/archive"
)

// These tests drive the program as a separate process, as a user or a
// script would: the test binary itself, started with MOLTRAIL_AS_MAIN=1,
// is moltrail (its TestMain hands over to main), so no second build is
// needed and every process runs the code under test.

var binary string

const asMainEnv = "MOLTRAIL_AS_MAIN"

func TestMain(m *testing.M) {
	if os.Getenv(asMainEnv) == "1" {
		main()
		return
	}
	exe, err := os.Executable()
	if err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
	binary = exe
	// Every child started from here (with os.Environ() or no Env at all)
	// runs as moltrail.
	os.Setenv(asMainEnv, "1")
	os.Exit(m.Run())
}

type result struct {
	stdout, stderr string
	code           int
}

func moltrail(t *testing.T, env []string, args ...string) result {
	t.Helper()
	cmd := exec.Command(binary, args...)
	cmd.Env = append(os.Environ(), env...)
	var so, se bytes.Buffer
	cmd.Stdout, cmd.Stderr = &so, &se
	err := cmd.Run()
	code := 0
	if ee, ok := err.(*exec.ExitError); ok {
		code = ee.ExitCode()
	} else if err != nil {
		t.Fatal(err)
	}
	return result{so.String(), se.String(), code}
}

const waterXYZ = "3\nwater\nO 0.000000 0.000000 0.117300\nH 0.000000 0.757200 -0.469200\nH 0.000000 -0.757200 -0.469200\n"
const h2XYZ = "2\nhydrogen\nH 0 0 0\nH 0 0 0.74\n"

func writeFile(t *testing.T, dir, name, text string) string {
	t.Helper()
	p := filepath.Join(dir, name)
	if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

func decodeRecord(t *testing.T, s string) *archive.Record {
	t.Helper()
	r, err := archive.Decode([]byte(strings.TrimSpace(s)))
	if err != nil {
		t.Fatalf("stdout is not one record: %v\n%s", err, s)
	}
	return r
}

func TestRunStoresReusesAndForces(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	arch := filepath.Join(dir, "arch")
	xyz := writeFile(t, dir, "h2.xyz", h2XYZ)
	r1 := moltrail(t, nil, "run", "--archive", arch, "--method", "hf", "--basis", "sto-3g", "--tag", "paper=one", "--json", xyz)
	if r1.code != 0 {
		t.Fatalf("run: exit %d\n%s", r1.code, r1.stderr)
	}
	rec := decodeRecord(t, r1.stdout)
	if rec.Status != "converged" || rec.Tags["paper"] != "one" || rec.Input.Molecule.Name != "hydrogen" {
		t.Fatalf("unexpected record: status %s tags %v", rec.Status, rec.Tags)
	}
	if err := rec.Check(); err != nil {
		t.Fatal(err)
	}
	if err := archive.ValidateRecordJSON([]byte(strings.TrimSpace(r1.stdout))); err != nil {
		t.Fatalf("run --json output does not match the record schema: %v", err)
	}
	// Same input, same build: the stored record comes back, nothing is computed.
	r2 := moltrail(t, nil, "run", "--archive", arch, "--basis", "STO-3G", "--json", xyz)
	if r2.code != 0 || strings.TrimSpace(r2.stdout) != strings.TrimSpace(r1.stdout) || !strings.Contains(r2.stderr, "nothing was computed") {
		t.Fatalf("second run did not return the stored record: exit %d\n%s", r2.code, r2.stderr)
	}
	// --force computes again and links the new record to the old.
	r3 := moltrail(t, nil, "run", "--archive", arch, "--basis", "sto-3g", "--force", "--json", xyz)
	if r3.code != 0 {
		t.Fatalf("forced run: exit %d\n%s", r3.code, r3.stderr)
	}
	rec3 := decodeRecord(t, r3.stdout)
	if rec3.ID == rec.ID || rec3.InputKey != rec.InputKey || len(rec3.Lineage) != 1 || rec3.Lineage[0].Relation != "recomputes" || rec3.Lineage[0].ID != rec.ID {
		t.Fatalf("forced run not linked: %+v", rec3.Lineage)
	}
	// Determinism: the recomputation gives the same bits.
	if rec3.Results.EnergyHartree != rec.Results.EnergyHartree {
		t.Errorf("recomputed energy %v differs from %v", rec3.Results.EnergyHartree, rec.Results.EnergyHartree)
	}
	// A different threshold is a different input.
	r4 := moltrail(t, nil, "run", "--archive", arch, "--basis", "sto-3g", "--energy-tol", "1e-9", "--json", xyz)
	if r4.code != 0 || decodeRecord(t, r4.stdout).InputKey == rec.InputKey {
		t.Fatalf("threshold change did not change the input key (exit %d)", r4.code)
	}
	show := moltrail(t, nil, "show", "--archive", arch, "--json", rec.ID[:8])
	if show.code != 0 || strings.TrimSpace(show.stdout) != strings.TrimSpace(r1.stdout) {
		t.Fatalf("show --json differs from the stored record: %s", show.stderr)
	}
	human := moltrail(t, nil, "show", rec.ID[:8], "--archive", arch)
	for _, want := range []string{rec.ID, "hartree", "STO-3G", "UTC", "paper=one"} {
		if !strings.Contains(human.stdout, want) {
			t.Errorf("show lacks %q:\n%s", want, human.stdout)
		}
	}
	list := moltrail(t, nil, "list", "--archive", arch, "--json")
	var sums []archive.Summary
	if err := json.Unmarshal([]byte(list.stdout), &sums); err != nil || len(sums) != 3 {
		t.Fatalf("list --json: %v, %d records\n%s", err, len(sums), list.stdout)
	}
	tagged := moltrail(t, nil, "list", "--archive", arch, "--tag", "paper=one", "--json")
	json.Unmarshal([]byte(tagged.stdout), &sums)
	if len(sums) != 1 || sums[0].ID != rec.ID {
		t.Fatalf("list --tag: %+v", sums)
	}
}

func TestArchiveFromEnvironment(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	arch := filepath.Join(dir, "from-env")
	xyz := writeFile(t, dir, "h2.xyz", h2XYZ)
	r := moltrail(t, []string{"MOLTRAIL_ARCHIVE=" + arch}, "run", "--basis", "sto-3g", xyz)
	if r.code != 0 {
		t.Fatalf("exit %d: %s", r.code, r.stderr)
	}
	if _, err := os.Stat(filepath.Join(arch, "MANIFEST")); err != nil {
		t.Fatalf("archive not created at $MOLTRAIL_ARCHIVE: %v", err)
	}
	cmd := exec.Command(binary, "list", "--json")
	cmd.Dir = dir
	cmd.Env = append(os.Environ(), "MOLTRAIL_ARCHIVE=")
	out, _ := cmd.CombinedOutput()
	if !strings.Contains(string(out), "no archive at moltrail-archive") {
		t.Fatalf("default ./moltrail-archive not used: %s", out)
	}
}

func TestBadInput(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	arch := filepath.Join(dir, "arch")
	bad := writeFile(t, dir, "bad.xyz", "3\nwater\nO 0 0 0\nH 0 0.7 x\n")
	cases := []struct {
		args []string
		want string
	}{
		{[]string{"run", "--archive", arch, bad}, "bad.xyz:4"},
		{[]string{"run", "--archive", arch, "--method", "cisd", writeFile(t, dir, "h.xyz", h2XYZ)}, "cisd"},
		{[]string{"run", "--archive", arch, "--basis", "no-such-basis", filepath.Join(dir, "h.xyz")}, "no-such-basis"},
		{[]string{"run", "--archive", arch, "--multiplicity", "2", filepath.Join(dir, "h.xyz")}, "multiplicity 2"},
		{[]string{"show", "--archive", arch, "abcd"}, "no archive"},
		{[]string{"list", "--archive", arch, "--status", "ok"}, "--status"},
		{[]string{"list", "--archive", arch, "--since", "last tuesday"}, "--since"},
		{[]string{"frobnicate"}, "not a command"},
	}
	for _, c := range cases {
		r := moltrail(t, nil, c.args...)
		if r.code != 2 || !strings.Contains(r.stderr, c.want) || r.stdout != "" {
			t.Errorf("%v: exit %d, stderr %q (want exit 2 mentioning %q, empty stdout)", c.args, r.code, r.stderr, c.want)
		}
		if n := strings.Count(strings.TrimSpace(r.stderr), "\n"); n > 0 {
			t.Errorf("%v: error is %d lines, want one: %q", c.args, n+1, r.stderr)
		}
	}
	if _, err := os.Stat(arch); err == nil {
		t.Error("bad input created an archive")
	}
}

// makeArchive stores a few records through the binary and returns their ids.
func makeArchive(t *testing.T, arch, dir string) []string {
	t.Helper()
	h2 := writeFile(t, dir, "h2.xyz", h2XYZ)
	water := writeFile(t, dir, "water.xyz", waterXYZ)
	var ids []string
	for _, a := range [][]string{
		{"--basis", "sto-3g", h2},
		{"--basis", "sto-3g", "--tag", "set=a", water},
		{"--basis", "3-21g", "--tag", "set=a", water},
		{"--basis", "sto-3g", "--method", "uhf", h2},
	} {
		r := moltrail(t, nil, append([]string{"run", "--archive", arch, "--json"}, a...)...)
		if r.code != 0 {
			t.Fatalf("run %v: exit %d\n%s", a, r.code, r.stderr)
		}
		ids = append(ids, decodeRecord(t, r.stdout).ID)
	}
	return ids
}

func TestExportImportVerifyRoundTrip(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	src, dst := filepath.Join(dir, "src"), filepath.Join(dir, "dst")
	ids := makeArchive(t, src, dir)
	out := filepath.Join(dir, "all.jsonl")
	if r := moltrail(t, nil, "export", "--archive", src, "--out", out); r.code != 0 {
		t.Fatalf("export: %s", r.stderr)
	}
	part := filepath.Join(dir, "part.jsonl")
	if r := moltrail(t, nil, "export", "--archive", src, "--tag", "set=a", "--formula", "H2O", "--out", part, "--json"); r.code != 0 || !strings.Contains(r.stdout, `"records": 2`) {
		t.Fatalf("filtered export: %s %s", r.stdout, r.stderr)
	}
	r := moltrail(t, nil, "import", "--archive", dst, "--json", out)
	var rep archive.ImportReport
	if err := json.Unmarshal([]byte(r.stdout), &rep); err != nil || r.code != 0 || rep.Imported != 4 {
		t.Fatalf("import: exit %d %+v %v %s", r.code, rep, err, r.stderr)
	}
	r = moltrail(t, nil, "import", "--archive", dst, out)
	if r.code != 0 || !strings.Contains(r.stdout, "0 imported, 4 already present") {
		t.Fatalf("re-import: %s", r.stdout)
	}
	for _, id := range ids {
		a := moltrail(t, nil, "show", "--archive", src, "--json", id)
		b := moltrail(t, nil, "show", "--archive", dst, "--json", id)
		if a.stdout == "" || a.stdout != b.stdout {
			t.Fatalf("record %s not byte-identical after export/import", id[:12])
		}
	}
	if v := moltrail(t, nil, "verify", "--archive", dst); v.code != 0 || !strings.Contains(v.stdout, "4 record(s)") {
		t.Fatalf("verify: exit %d %s %s", v.code, v.stdout, v.stderr)
	}

	// Tampered line: refused and named; nothing imported (and no archive
	// created) unless --partial asks for the rest.
	lines := strings.Split(strings.TrimSpace(readFile(t, out)), "\n")
	lines[2] = strings.Replace(lines[2], `"threads":`, `"threads":1`, 1)
	tam := writeFile(t, dir, "tampered.jsonl", strings.Join(lines, "\n")+"\n")
	fresh := filepath.Join(dir, "fresh")
	r = moltrail(t, nil, "import", "--archive", fresh, tam)
	if _, err := os.Stat(fresh); r.code != 2 || !strings.Contains(r.stderr, "tampered.jsonl:3") || !strings.Contains(r.stderr, "nothing was imported") || err == nil {
		t.Fatalf("tampered import: exit %d (archive created: %v)\n%s\n%s", r.code, err == nil, r.stdout, r.stderr)
	}
	r = moltrail(t, nil, "import", "--archive", fresh, "--partial", tam)
	if r.code != 1 || !strings.Contains(r.stderr, "tampered.jsonl:3") || !strings.Contains(r.stdout, "3 imported") || !strings.Contains(r.stdout, "1 refused") {
		t.Fatalf("tampered import --partial: exit %d\n%s\n%s", r.code, r.stdout, r.stderr)
	}

	// Malformed, truncated, wrong schema: clear error, archive unchanged.
	before := moltrail(t, nil, "export", "--archive", dst, "--out", "-").stdout
	whole := readFile(t, out)
	for name, text := range map[string]string{
		"truncated.jsonl": whole[:len(whole)-40],
		"garbage.jsonl":   lines[0] + "\n]]]\n",
		"schema.jsonl":    strings.Replace(lines[0], `"status":"converged"`, `"status":"fine"`, 1) + "\n",
	} {
		p := writeFile(t, dir, name, text)
		r := moltrail(t, nil, "import", "--archive", dst, p)
		if r.code != 2 || !strings.Contains(r.stderr, name+":") || !strings.Contains(r.stderr, "nothing was imported") {
			t.Errorf("%s: exit %d, %q", name, r.code, r.stderr)
		}
	}
	if after := moltrail(t, nil, "export", "--archive", dst, "--out", "-").stdout; after != before {
		t.Fatal("a refused file changed the archive")
	}
}

func readFile(t *testing.T, p string) string {
	t.Helper()
	b, err := os.ReadFile(p)
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}

func TestVerifyNamesTamperedRecord(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	arch := filepath.Join(dir, "arch")
	ids := makeArchive(t, arch, dir)
	db, err := badger.Open(badger.DefaultOptions(arch).WithLogger(nil))
	if err != nil {
		t.Fatal(err)
	}
	victim := ids[2]
	err = db.Update(func(txn *badger.Txn) error {
		it, err := txn.Get([]byte("r/" + victim))
		if err != nil {
			return err
		}
		v, _ := it.ValueCopy(nil)
		i := bytes.Index(v, []byte(`"wall_seconds":`)) + len(`"wall_seconds":`)
		v[i+2] ^= 0x01 // one digit of the wall time
		return txn.Set([]byte("r/"+victim), v)
	})
	db.Close()
	if err != nil {
		t.Fatal(err)
	}
	r := moltrail(t, nil, "verify", "--archive", arch)
	if r.code != 1 || !strings.Contains(r.stdout, victim) || strings.Count(r.stdout, "MISMATCH") != 1 {
		t.Fatalf("verify did not name the tampered record: exit %d\n%s", r.code, r.stdout)
	}
	j := moltrail(t, nil, "verify", "--archive", arch, "--json")
	var rep archive.VerifyReport
	if err := json.Unmarshal([]byte(j.stdout), &rep); err != nil || len(rep.Problems) != 1 || rep.Problems[0].ID != victim {
		t.Fatalf("verify --json: %v %+v", err, rep)
	}
}

func TestNoteKeepsRecord(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	arch := filepath.Join(dir, "arch")
	ids := makeArchive(t, arch, dir)
	before := moltrail(t, nil, "show", "--archive", arch, "--json", ids[0]).stdout
	if r := moltrail(t, nil, "note", "--archive", arch, ids[0][:10], "basis", "too", "small"); r.code != 0 {
		t.Fatalf("note: %s", r.stderr)
	}
	if after := moltrail(t, nil, "show", "--archive", arch, "--json", ids[0]).stdout; after != before {
		t.Fatal("a note changed the record")
	}
	if h := moltrail(t, nil, "show", "--archive", arch, ids[0]).stdout; !strings.Contains(h, "basis too small") {
		t.Fatal("show does not list the note")
	}
	if v := moltrail(t, nil, "verify", "--archive", arch); v.code != 0 || !strings.Contains(v.stdout, "1 note(s)") {
		t.Fatalf("verify with a note: %s", v.stdout)
	}
}

// TestSecondWriterWaits: while one process holds the archive for writing
// (its commit held open by the test hook), a second writer gives up after
// its stated wait with a clear message, and a reader with a longer wait
// gets through once the first process is done.
func TestSecondWriterWaits(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	arch := filepath.Join(dir, "arch")
	makeArchive(t, arch, dir)
	water := filepath.Join(dir, "water.xyz")
	slow := exec.Command(binary, "run", "--archive", arch, "--basis", "sto-3g", "--force", water)
	slow.Env = append(os.Environ(), "MOLTRAIL_TEST_HOLD_COMMIT=3s")
	if err := slow.Start(); err != nil {
		t.Fatal(err)
	}
	waitForLock(t, arch)
	r := moltrail(t, nil, "note", "--archive", arch, "--wait", "500ms", "0000", "x")
	if r.code != 1 || !strings.Contains(r.stderr, "in use by another") || !strings.Contains(r.stderr, "500ms") {
		t.Errorf("second writer: exit %d %q", r.code, r.stderr)
	}
	l := moltrail(t, nil, "list", "--archive", arch, "--wait", "20s", "--json")
	if l.code != 0 || !strings.Contains(l.stderr, "waiting up to 20s") {
		t.Errorf("reader did not wait for the writer: exit %d %q", l.code, l.stderr)
	}
	if err := slow.Wait(); err != nil {
		t.Fatalf("slow writer: %v", err)
	}
	var sums []archive.Summary
	json.Unmarshal([]byte(moltrail(t, nil, "list", "--archive", arch, "--json").stdout), &sums)
	if len(sums) != 5 {
		t.Fatalf("%d records after the concurrent run, want 5", len(sums))
	}
}

// waitForLock waits until a writer holds the archive (its pid file exists).
func waitForLock(t *testing.T, arch string) {
	t.Helper()
	for i := 0; i < 200; i++ {
		if _, err := os.Stat(filepath.Join(arch, "LOCK")); err == nil {
			return
		}
		time.Sleep(20 * time.Millisecond)
	}
	t.Fatal("writer never took the archive")
}

// TestCrashSafety kills writers with SIGKILL in the middle of writing:
// (1) a run whose commit is held open by the test hook, (2) large imports
// killed after a range of delays, i.e. while badger is appending to its
// log. Afterwards the archive opens read-only, verify passes, every
// earlier record is intact, and any record present is whole.
func TestCrashSafety(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	arch := filepath.Join(dir, "arch")
	ids := makeArchive(t, arch, dir)
	export := func() string { return moltrail(t, nil, "export", "--archive", arch, "--out", "-").stdout }
	baseline := export()
	earlier := map[string]string{}
	for _, id := range ids {
		earlier[id] = moltrail(t, nil, "show", "--archive", arch, "--json", id).stdout
	}
	check := func(stage string) {
		t.Helper()
		v := moltrail(t, nil, "verify", "--archive", arch)
		if v.code != 0 {
			t.Fatalf("%s: verify after SIGKILL: exit %d\n%s\n%s", stage, v.code, v.stdout, v.stderr)
		}
		for id, want := range earlier {
			if got := moltrail(t, nil, "show", "--archive", arch, "--json", id).stdout; got != want {
				t.Fatalf("%s: earlier record %s changed or vanished", stage, id[:12])
			}
		}
	}

	// (1) run killed between staging and commit.
	slow := exec.Command(binary, "run", "--archive", arch, "--basis", "sto-3g", "--force", filepath.Join(dir, "water.xyz"))
	slow.Env = append(os.Environ(), "MOLTRAIL_TEST_HOLD_COMMIT=30s")
	if err := slow.Start(); err != nil {
		t.Fatal(err)
	}
	waitForLock(t, arch)
	time.Sleep(300 * time.Millisecond) // the computation is milliseconds; the write is now held
	slow.Process.Signal(syscall.SIGKILL)
	slow.Wait()
	check("run killed mid-write")
	if export() != baseline {
		t.Fatal("an uncommitted record appeared after the kill")
	}

	// (2) imports killed in their write phase: the test hook holds each
	// commit open for a while; the kill comes after the import reports
	// k transactions written, i.e. while the next one is staged.
	// Four to five write transactions (badger takes about 460 of these
	// records in one): the second kill still lands before the last.
	n := 2000
	big := writeFile(t, dir, "big.jsonl", synthRecords(t, n))
	prev := len(ids)
	for k := 1; k <= 2; k++ {
		seen := killMidWrite(t, exec.Command(binary, "import", "--archive", arch, big), "records written", k)
		check(fmt.Sprintf("import killed after %d transaction(s)", k))
		var sums []archive.Summary
		json.Unmarshal([]byte(moltrail(t, nil, "list", "--archive", arch, "--json").stdout), &sums)
		t.Logf("import killed after %d committed transaction(s): %d records present (%q)", k, len(sums), strings.TrimSpace(seen))
		if len(sums) <= prev || len(sums) >= len(ids)+n {
			t.Fatalf("the kill did not land in the write phase: %d records (before %d, whole file %d)", len(sums), prev, n)
		}
		prev = len(sums)
	}
	l := moltrail(t, nil, "list", "--archive", arch, "--json")
	var sums []archive.Summary
	if err := json.Unmarshal([]byte(l.stdout), &sums); err != nil || l.code != 0 {
		t.Fatalf("list after kills: %v %s", err, l.stderr)
	}
	t.Logf("%d records present after the killed imports (4 earlier + whole imported ones)", len(sums))
}

// synthRecords makes n distinct sealed records by re-sealing a stored one
// with a different tag each (test data for the archive, not computations).
func synthRecords(t *testing.T, n int) string {
	t.Helper()
	dir := t.TempDir()
	arch := filepath.Join(dir, "a")
	xyz := writeFile(t, dir, "h2.xyz", h2XYZ)
	r := moltrail(t, nil, "run", "--archive", arch, "--basis", "sto-3g", "--json", xyz)
	base := decodeRecord(t, r.stdout)
	var b strings.Builder
	for i := 0; i < n; i++ {
		c := *base
		c.Tags = map[string]string{"copy": fmt.Sprint(i)}
		c.Lineage = nil
		if err := c.Seal(); err != nil {
			t.Fatal(err)
		}
		enc, _ := c.Encode()
		b.Write(enc)
		b.WriteByte('\n')
	}
	return b.String()
}

func TestBasisListing(t *testing.T) {
	t.Parallel()
	r := moltrail(t, nil, "basis")
	if r.code != 0 || !strings.Contains(r.stdout, "STO-3G") || !strings.Contains(r.stdout, "6-31G(d)") {
		t.Fatalf("basis: %s", r.stdout)
	}
	j := moltrail(t, nil, "basis", "--json", "--refs")
	var es []basisEntry
	if err := json.Unmarshal([]byte(j.stdout), &es); err != nil || len(es) < 5 || len(es[0].References) == 0 {
		t.Fatalf("basis --json --refs: %v", err)
	}
	one := moltrail(t, nil, "basis", "6-31g(d)")
	if one.code != 0 || !strings.Contains(one.stdout, "references") {
		t.Fatalf("basis NAME: %s", one.stdout)
	}
}
