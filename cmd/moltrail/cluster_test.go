package main

import (
	"bytes"
	"encoding/json"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"sort"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"

	badger "github.com/dgraph-io/badger/v4"

	"moltrail/archive"
)

// clusterStudy writes a study of 8 quick items: HF/STO-3G optimisations of
// H2, HeH+, LiH and water, and MP2/STO-3G single points on each optimised
// geometry (4 groups of 2 dependent items).
func clusterStudy(t *testing.T, dir string) string {
	t.Helper()
	return writeFile(t, dir, "cluster-check.json", `{
  "format": "moltrail-study/1",
  "name": "cluster-check",
  "molecules": [
    {"xyz": "2\nhydrogen\nH 0 0 0\nH 0 0 0.74\n"},
    {"xyz": "2\nhydrohelium cation\nHe 0 0 0\nH 0 0 0.77\n", "charge": 1},
    {"xyz": "2\nlithium hydride\nLi 0 0 0\nH 0 0 1.60\n"},
    {"xyz": "3\nwater\nO 0.000 0.000 0.117\nH 0.000 0.757 -0.467\nH 0.000 -0.757 -0.467\n"}
  ],
  "levels": [{"methods": ["hf", "mp2"], "basis_sets": ["sto-3g"]}],
  "tasks": [
    {"task": "optimize", "levels": ["hf/sto-3g"]},
    {"task": "energy", "levels": ["mp2/sto-3g"], "geometry_from": "hf/sto-3g"}
  ],
  "tags": {"check": "cluster"}
}`)
}

// records reads every record of an archive.
func records(t *testing.T, arch string) []*archive.Record {
	t.Helper()
	st, err := archive.Open(arch, archive.OpenOptions{ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	var buf bytes.Buffer
	if _, err := st.Export(&buf, archive.Filter{}); err != nil {
		t.Fatal(err)
	}
	recs, _, err := archive.ReadRecords(&buf, arch)
	if err != nil {
		t.Fatal(err)
	}
	return recs
}

// sameAsOneRun checks that an archive holds exactly what the one-process
// run holds: the same input keys, the same numbers to the bit, the same
// kinds of lineage, and that verify finds nothing wrong.
func sameAsOneRun(t *testing.T, got, want string) []*archive.Record {
	t.Helper()
	byKey := func(arch string) map[string]*archive.Record {
		m := map[string]*archive.Record{}
		for _, r := range records(t, arch) {
			if m[r.InputKey] != nil {
				t.Fatalf("%s holds input %s twice", arch, r.InputKey[:12])
			}
			m[r.InputKey] = r
		}
		return m
	}
	g, w := byKey(got), byKey(want)
	if len(g) != len(w) || len(w) != 8 {
		t.Fatalf("%d input keys in %s, %d in the one-process run (want 8)", len(g), got, len(w))
	}
	var out []*archive.Record
	for k, wr := range w {
		gr := g[k]
		if gr == nil {
			t.Fatalf("input %s (%s) is missing", k[:12], wr.Input.Molecule.Name)
		}
		a, _ := json.Marshal(gr.Results)
		b, _ := json.Marshal(wr.Results)
		if !bytes.Equal(a, b) {
			t.Errorf("%s %s: results differ from the one-process run", wr.Input.Molecule.Name, wr.Input.Method)
		}
		if len(gr.Lineage) != len(wr.Lineage) || (len(gr.Lineage) == 1 && gr.Lineage[0].Relation != wr.Lineage[0].Relation) {
			t.Errorf("%s %s: lineage %v, one-process run %v", wr.Input.Molecule.Name, wr.Input.Method, gr.Lineage, wr.Lineage)
		}
		for _, l := range gr.Lineage {
			if gr2 := findID(g, l.ID); gr2 == nil {
				t.Errorf("%s: lineage points to %s, which the archive lacks", gr.ID[:12], l.ID[:12])
			}
		}
		out = append(out, gr)
	}
	if v := moltrail(t, nil, "verify", "--archive", got); v.code != 0 {
		t.Fatalf("verify %s: exit %d\n%s%s", got, v.code, v.stdout, v.stderr)
	}
	return out
}

// killMidWrite starts cmd with each commit held open for a while (the
// test hook), reads its stderr until want has appeared n times (n
// transactions committed), and kills it with SIGKILL while the next one
// is staged. It returns what stderr said.
func killMidWrite(t *testing.T, cmd *exec.Cmd, want string, n int) string {
	t.Helper()
	cmd.Env = append(os.Environ(), "MOLTRAIL_TEST_HOLD_COMMIT=400ms")
	pipe, _ := cmd.StderrPipe()
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	buf := make([]byte, 4096)
	seen := ""
	for strings.Count(seen, want) < n {
		k, err := pipe.Read(buf)
		if err != nil {
			break
		}
		seen += string(buf[:k])
	}
	time.Sleep(100 * time.Millisecond)
	cmd.Process.Signal(syscall.SIGKILL)
	cmd.Wait()
	return seen
}

func findID(m map[string]*archive.Record, id string) *archive.Record {
	for _, r := range m {
		if r.ID == id {
			return r
		}
	}
	return nil
}

type mergeOut struct {
	Records int               `json:"records_read"`
	Added   int               `json:"added"`
	Present int               `json:"already_present"`
	Refused []archive.Refusal `json:"refused"`
}

func decodeMerge(t *testing.T, r result) mergeOut {
	t.Helper()
	var m mergeOut
	if err := json.Unmarshal([]byte(r.stdout), &m); err != nil {
		t.Fatalf("merge --json: %v\n%s\n%s", err, r.stdout, r.stderr)
	}
	return m
}

// TestShardedStudyMergesToOneRun runs a study as 4 shards into 4 archives,
// merges them and compares the result with a one-process run; then merges
// again (nothing added), and refuses a conflicting record.
func TestShardedStudyMergesToOneRun(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	sf := clusterStudy(t, dir)
	one := filepath.Join(dir, "one")
	if r := moltrail(t, nil, "study", "--archive", one, sf); r.code != 0 {
		t.Fatalf("one-process study: exit %d\n%s", r.code, r.stderr)
	}
	shards := filepath.Join(dir, "shards")
	items := 0
	for k := 1; k <= 4; k++ {
		r := moltrail(t, nil, "study", "--shard", fmt.Sprintf("%d/4", k), "--archive", filepath.Join(shards, fmt.Sprint(k)), "--json", sf)
		if r.code != 0 {
			t.Fatalf("shard %d: exit %d\n%s", k, r.code, r.stderr)
		}
		o := decodeStudy(t, r.stdout)
		if o.Counts.Done != 2 {
			t.Fatalf("shard %d computed %d items, want 2 (an optimisation and its single point)", k, o.Counts.Done)
		}
		items += o.Counts.Total
	}
	if items != 8 {
		t.Fatalf("the shards hold %d items, the study 8", items)
	}
	merged := filepath.Join(dir, "merged")
	m := decodeMerge(t, moltrail(t, nil, "merge", "--archive", merged, "--json", shards))
	if m.Records != 8 || m.Added != 8 || len(m.Refused) != 0 {
		t.Fatalf("merge: %+v", m)
	}
	sameAsOneRun(t, merged, one)
	again := moltrail(t, nil, "merge", "--archive", merged, shards)
	if again.code != 0 || !strings.Contains(again.stdout, "0 added, 8 already present, 0 refused") {
		t.Fatalf("second merge: exit %d\n%s", again.code, again.stdout)
	}
	// The study finds all of it in the merged archive.
	d := decodeStudy(t, moltrail(t, nil, "study", "--dry-run", "--json", "--archive", merged, sf).stdout)
	if d.Counts.Reused != 8 {
		t.Fatalf("dry run on the merged archive: %+v", d.Counts)
	}

	// A record stored in the target with other bytes under its id is
	// refused and named; the target keeps its own copy.
	victim := records(t, filepath.Join(shards, "1"))[0]
	forged := filepath.Join(dir, "forged")
	if r := moltrail(t, nil, "merge", "--archive", forged, filepath.Join(shards, "2")); r.code != 0 {
		t.Fatalf("merge into a new archive: %s", r.stderr)
	}
	db, err := badger.Open(badger.DefaultOptions(forged).WithLogger(nil))
	if err != nil {
		t.Fatal(err)
	}
	other, _ := victim.Encode()
	other = bytes.Replace(other, []byte(`"check":"cluster"`), []byte(`"check":"forged!"`), 1)
	if err := db.Update(func(txn *badger.Txn) error { return txn.Set([]byte("r/"+victim.ID), other) }); err != nil {
		t.Fatal(err)
	}
	db.Close()
	c := moltrail(t, nil, "merge", "--archive", forged, "--json", filepath.Join(shards, "1"))
	cm := decodeMerge(t, c)
	if c.code != exitFailed || len(cm.Refused) != 1 || cm.Refused[0].ID != victim.ID || cm.Added != 1 ||
		!strings.Contains(c.stderr, victim.ID[:12]) || !strings.Contains(c.stderr, "different record under this id") {
		t.Fatalf("conflicting record: exit %d %+v\n%s", c.code, cm, c.stderr)
	}

	// Bad usage.
	if r := moltrail(t, nil, "merge", "--archive", merged); r.code != exitUsage {
		t.Errorf("merge without sources: exit %d", r.code)
	}
	if r := moltrail(t, nil, "merge", "--archive", merged, sf); r.code != exitUsage || !strings.Contains(r.stderr, "not an archive") {
		t.Errorf("merge of a file: exit %d %s", r.code, r.stderr)
	}
	if r := moltrail(t, nil, "study", "--shard", "5/4", sf); r.code != exitUsage || !strings.Contains(r.stderr, "--shard") {
		t.Errorf("--shard 5/4: exit %d %s", r.code, r.stderr)
	}
}

// TestMergeKilledMidwayResumes kills a merge with SIGKILL after its first
// committed transaction: the target verifies, holds whole records only,
// and the same merge run again completes it.
func TestMergeKilledMidwayResumes(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	src := filepath.Join(dir, "src")
	n := 1000 // three write transactions of the merge
	big := writeFile(t, dir, "big.jsonl", synthRecords(t, n))
	if r := moltrail(t, nil, "import", "--archive", src, big); r.code != 0 {
		t.Fatalf("import: %s", r.stderr)
	}
	target := filepath.Join(dir, "target")
	seen := killMidWrite(t, exec.Command(binary, "merge", "--archive", target, src), "records done", 1)
	if v := moltrail(t, nil, "verify", "--archive", target); v.code != 0 {
		t.Fatalf("verify after the kill: exit %d\n%s%s", v.code, v.stdout, v.stderr)
	}
	part := len(records(t, target))
	if part == 0 || part >= n {
		t.Fatalf("the kill did not land mid-merge: %d of %d records (%q)", part, n, seen)
	}
	m := decodeMerge(t, moltrail(t, nil, "merge", "--archive", target, "--json", src))
	if m.Added != n-part || m.Present != part || len(m.Refused) != 0 {
		t.Fatalf("rerun after %d of %d: %+v", part, n, m)
	}
	if v := moltrail(t, nil, "verify", "--archive", target); v.code != 0 || len(records(t, target)) != n {
		t.Fatalf("after the rerun: exit %d, %d records", v.code, len(records(t, target)))
	}
	t.Logf("killed after %d of %d records; the rerun added the other %d", part, n, n-part)
}

// TestTwoStudiesOnOneArchive starts the same study twice at once on one
// archive: every input is computed and stored once.
func TestTwoStudiesOnOneArchive(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	sf := clusterStudy(t, dir)
	arch := filepath.Join(dir, "arch")
	var wg sync.WaitGroup
	res := make([]result, 2)
	for i := range res {
		wg.Add(1)
		go func() {
			defer wg.Done()
			res[i] = moltrail(t, nil, "study", "--archive", arch, "--json", sf)
		}()
	}
	wg.Wait()
	done := 0
	for i, r := range res {
		if r.code != 0 {
			t.Fatalf("study %d: exit %d\n%s", i, r.code, r.stderr)
		}
		o := decodeStudy(t, r.stdout)
		done += o.Counts.Done
	}
	keys := perKey(t, arch)
	if len(keys) != 8 || done != 8 {
		t.Fatalf("%d inputs stored, %d computed by the two studies; want 8 and 8", len(keys), done)
	}
	for k, n := range keys {
		if n != 1 {
			t.Errorf("input %s stored %d times", k[:12], n)
		}
	}
}

// TestSlurmCluster submits the study to a real Slurm (started by .ci/run
// with .ci/slurm-local.sh; MOLTRAIL_TEST_SLURM=1 enables the test) as an
// array of 4 tasks and a merge job, waits for the merge, checks the merged
// archive against a one-process run and the records' Slurm provenance,
// then has one shard computed again after its archive is lost.
func TestSlurmCluster(t *testing.T) {
	if os.Getenv("MOLTRAIL_TEST_SLURM") != "1" {
		t.Skip("no Slurm for this test: .ci/run starts a single-node Slurm and sets MOLTRAIL_TEST_SLURM=1 (as root, with apt-get)")
	}
	if _, err := exec.LookPath("sbatch"); err != nil {
		t.Fatal("MOLTRAIL_TEST_SLURM=1 but sbatch is not on PATH")
	}
	dir := t.TempDir()
	os.Chmod(dir, 0o755)
	sf := clusterStudy(t, dir)
	one := filepath.Join(dir, "one")
	if r := moltrail(t, nil, "study", "--archive", one, sf); r.code != 0 {
		t.Fatalf("one-process study: %s", r.stderr)
	}
	arch := filepath.Join(dir, "archive")
	type submitOut struct {
		Tasks      []int  `json:"submitted_shards"`
		Submitted  bool   `json:"submitted"`
		ArrayJobID string `json:"array_job_id"`
		MergeJobID string `json:"merge_job_id"`
	}
	submit := func() submitOut {
		t.Helper()
		r := moltrail(t, nil, "cluster", "--archive", arch, "--shards", "4", "--time", "10:00", "--merge-time", "10:00", "--submit", "--json", sf)
		if r.code != 0 {
			t.Fatalf("cluster --submit: exit %d\n%s", r.code, r.stderr)
		}
		var s submitOut
		if err := json.Unmarshal([]byte(r.stdout), &s); err != nil {
			t.Fatalf("cluster --json: %v\n%s", err, r.stdout)
		}
		return s
	}
	waitMerged := func(mergeJob string) {
		t.Helper()
		deadline := time.Now().Add(3 * time.Minute)
		for {
			r := moltrail(t, nil, "cluster", "--status", "--json", sf)
			var st struct {
				Jobs []struct {
					JobID string `json:"job_id"`
					State string `json:"state"`
				} `json:"jobs"`
			}
			json.Unmarshal([]byte(r.stdout), &st)
			for _, j := range st.Jobs {
				if j.JobID == mergeJob && j.State != "" && j.State != "PENDING" && j.State != "RUNNING" && j.State != "COMPLETING" && j.State != "CONFIGURING" {
					if j.State != "COMPLETED" {
						logs, _ := filepath.Glob(filepath.Join(dir, "cluster-check.cluster", "logs", "*"))
						for _, l := range logs {
							b, _ := os.ReadFile(l)
							t.Logf("%s:\n%s", l, b)
						}
						t.Fatalf("merge job %s ended %s", mergeJob, j.State)
					}
					return
				}
			}
			if time.Now().After(deadline) {
				t.Fatalf("merge job %s did not end within 3 minutes; status:\n%s", mergeJob, r.stdout)
			}
			time.Sleep(time.Second)
		}
	}
	s := submit()
	if !s.Submitted || fmt.Sprint(s.Tasks) != "[1 2 3 4]" || s.ArrayJobID == "" || s.MergeJobID == "" {
		t.Fatalf("first submission: %+v", s)
	}
	waitMerged(s.MergeJobID)
	recs := sameAsOneRun(t, arch, one)
	tasks := map[string]bool{}
	for _, r := range recs {
		b := r.Run.Batch
		if b == nil || b.Scheduler != "slurm" || b.ArrayJobID != s.ArrayJobID || b.JobID == "" || b.Node == "" || r.Run.Host == "" {
			t.Fatalf("record %s has no Slurm provenance: %+v", r.ID[:12], b)
		}
		tasks[b.ArrayTaskID] = true
	}
	if len(tasks) != 4 {
		t.Fatalf("records from array tasks %v, want 4 tasks", tasks)
	}
	st := moltrail(t, nil, "cluster", "--status", sf)
	if st.code != 0 || !strings.Contains(st.stdout, "8 done, 0 failed, 0 to do; 8 in the study archive") {
		t.Fatalf("status after the merge: exit %d\n%s", st.code, st.stdout)
	}
	if again := submit(); again.Submitted || len(again.Tasks) != 0 {
		t.Fatalf("submitting a finished study submitted %+v", again)
	}

	// Lose shard 2's archive and the merged archive: only shard 2 is missing.
	os.RemoveAll(arch)
	os.RemoveAll(filepath.Join(dir, "cluster-check.cluster", "shards", "shard-2-of-4"))
	s2 := submit()
	if fmt.Sprint(s2.Tasks) != "[2]" || !s2.Submitted {
		t.Fatalf("resubmission: %+v", s2)
	}
	waitMerged(s2.MergeJobID)
	sameAsOneRun(t, arch, one)
	var ids []string
	for _, r := range records(t, arch) {
		ids = append(ids, r.Run.Batch.ArrayJobID)
	}
	sort.Strings(ids)
	if ids[0] == ids[len(ids)-1] {
		t.Fatalf("all records from array job %s; shard 2 was not recomputed by the second", ids[0])
	}
}
