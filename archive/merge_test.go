package archive

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"time"

	badger "github.com/dgraph-io/badger/v4"
)

func storeAll(t *testing.T, dir string, recs ...*Record) {
	t.Helper()
	s := openRW(t, dir)
	if _, err := s.PutMany(recs); err != nil {
		t.Fatal(err)
	}
	if err := s.Close(); err != nil {
		t.Fatal(err)
	}
}

func TestMergeAddsEachRecordOnceWithNotesAndLineage(t *testing.T) {
	base := t.TempDir()
	a, b, target := filepath.Join(base, "a"), filepath.Join(base, "b"), filepath.Join(base, "target")
	var recs []*Record
	for i := 0; i < 6; i++ {
		recs = append(recs, fixture(t, i, "hf", "sto-3g", map[string]string{"shard": fmt.Sprint(i % 2)}, t0.Add(time.Duration(i)*time.Second)))
	}
	// A single point linked to the optimisation it started from.
	child := fixture(t, 40, "mp2", "sto-3g", nil, t0.Add(time.Minute))
	child.Lineage = []Link{{Relation: GeometryFrom, ID: recs[0].ID}}
	if err := child.Seal(); err != nil {
		t.Fatal(err)
	}
	storeAll(t, a, recs[0], recs[2], recs[4], child)
	storeAll(t, b, recs[1], recs[3], recs[4], recs[5]) // recs[4] in both
	sa := openRW(t, a)
	note, err := sa.AddNote(child.ID, "basis too small for the dipole", t0.Add(2*time.Minute))
	if err != nil {
		t.Fatal(err)
	}
	sa.Close()
	storeAll(t, target, recs[5]) // already present

	dst := openRW(t, target)
	defer dst.Close()
	rep, err := dst.Merge([]string{a, b}, MergeOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if rep.Records != 8 || rep.Added != 6 || rep.Present != 2 || len(rep.Refused) != 0 || rep.NotesAdded != 1 {
		t.Fatalf("first merge: %+v", rep)
	}
	if n, _ := dst.Count(); n != 7 {
		t.Fatalf("%d records in the target, want 7", n)
	}
	for _, r := range append(recs, child) {
		_, raw, err := dst.Get(r.ID)
		want, _ := r.Encode()
		if err != nil || !bytes.Equal(raw, want) {
			t.Fatalf("record %s not byte-identical after the merge (%v)", short(r.ID), err)
		}
	}
	got, _, _ := dst.Get(child.ID)
	if len(got.Lineage) != 1 || got.Lineage[0].ID != recs[0].ID {
		t.Fatalf("lineage lost: %+v", got.Lineage)
	}
	notes, err := dst.Notes(child.ID)
	if err != nil || len(notes) != 1 || notes[0] != *note {
		t.Fatalf("notes after the merge: %+v %v", notes, err)
	}
	if v, _ := dst.Verify(); len(v.Problems) != 0 {
		t.Fatalf("verify after the merge: %+v", v.Problems)
	}
	// Merging again adds nothing.
	rep2, err := dst.Merge([]string{a, b}, MergeOptions{})
	if err != nil || rep2.Added != 0 || rep2.Present != 8 || rep2.NotesAdded != 0 || rep2.NotesPresent != 1 || len(rep2.Refused) != 0 {
		t.Fatalf("second merge: %+v %v", rep2, err)
	}
	if _, err := dst.Merge([]string{target}, MergeOptions{}); err == nil || !strings.Contains(err.Error(), "target archive itself") {
		t.Fatalf("merging the target into itself: %v", err)
	}
}

func TestMergeRefusesConflictsAndForgeries(t *testing.T) {
	base := t.TempDir()
	src, target := filepath.Join(base, "src"), filepath.Join(base, "target")
	good := fixture(t, 1, "hf", "sto-3g", nil, t0)
	clash := fixture(t, 2, "hf", "sto-3g", nil, t0.Add(time.Second))
	forged := fixture(t, 3, "hf", "sto-3g", nil, t0.Add(2*time.Second))
	storeAll(t, src, good, clash, forged)
	// In the source: a record edited after sealing (its id no longer
	// matches). In the target: other bytes under clash's id.
	edit := func(dir string, id string, change func(*Record)) {
		s := openRW(t, dir)
		defer s.Close()
		r, _, err := s.Get(id)
		if err != nil {
			t.Fatal(err)
		}
		change(r)
		raw, _ := r.Encode()
		if err := s.db.Update(func(txn *badger.Txn) error { return txn.Set([]byte(pRecord+id), raw) }); err != nil {
			t.Fatal(err)
		}
	}
	edit(src, forged.ID, func(r *Record) { r.Results.EnergyHartree -= 0.5 })
	storeAll(t, target, clash)
	edit(target, clash.ID, func(r *Record) { r.Tags = map[string]string{"edited": "yes"} })
	_, before := exportAll(t, target)

	dst := openRW(t, target)
	defer dst.Close()
	rep, err := dst.Merge([]string{src}, MergeOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if rep.Added != 1 || rep.Present != 0 || len(rep.Refused) != 2 {
		t.Fatalf("merge: %+v", rep)
	}
	reasons := map[string]string{}
	for _, r := range rep.Refused {
		reasons[r.ID] = r.Reason
	}
	if !strings.Contains(reasons[clash.ID], "different record under this id") || !strings.Contains(reasons[clash.ID], short(clash.ID)) {
		t.Errorf("conflict not named: %q", reasons[clash.ID])
	}
	if !strings.Contains(reasons[forged.ID], "does not match the content") {
		t.Errorf("forged record not refused for its hash: %q", reasons[forged.ID])
	}
	// The target's own copy is left as it was.
	_, raw, _ := dst.Get(clash.ID)
	if !bytes.Contains(raw, []byte(`"edited":"yes"`)) {
		t.Fatalf("the target's record was overwritten")
	}
	dst.Close()
	if _, after := exportAll(t, target); after != before+1 {
		t.Fatalf("%d records before the merge, %d after; want one added", before, after)
	}
}

func exportAll(t *testing.T, dir string) (string, int) {
	t.Helper()
	s, err := Open(dir, OpenOptions{ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	var buf bytes.Buffer
	n, err := s.Export(&buf, Filter{})
	if err != nil {
		t.Fatal(err)
	}
	return buf.String(), n
}

func TestMergeSourcesExpandsShardDirectories(t *testing.T) {
	base := t.TempDir()
	shards := filepath.Join(base, "shards")
	for _, n := range []string{"shard-2-of-2", "shard-1-of-2"} {
		storeAll(t, filepath.Join(shards, n), fixture(t, len(n), "hf", "sto-3g", nil, t0))
	}
	if err := os.MkdirAll(filepath.Join(shards, "not-started"), 0o755); err != nil {
		t.Fatal(err)
	}
	got, err := MergeSources([]string{shards, filepath.Join(shards, "shard-1-of-2")})
	if err != nil {
		t.Fatal(err)
	}
	want := []string{filepath.Join(shards, "shard-1-of-2"), filepath.Join(shards, "shard-2-of-2")}
	if fmt.Sprint(got) != fmt.Sprint(want) {
		t.Fatalf("sources %v, want %v", got, want)
	}
	if _, err := MergeSources([]string{filepath.Join(shards, "not-started")}); err == nil {
		t.Fatal("an empty directory was taken as a source")
	}
	f := filepath.Join(base, "file")
	os.WriteFile(f, []byte("x"), 0o644)
	if _, err := MergeSources([]string{f}); err == nil {
		t.Fatal("a plain file was taken as a source")
	}
}

func TestImportRefusesOtherBytesUnderStoredID(t *testing.T) {
	dir := t.TempDir()
	r := fixture(t, 5, "hf", "sto-3g", nil, t0)
	storeAll(t, dir, r)
	s := openRW(t, dir)
	defer s.Close()
	other := *r
	other.Tags = map[string]string{"x": "y"}
	raw, _ := other.Encode()
	s.db.Update(func(txn *badger.Txn) error { return txn.Set([]byte(pRecord+r.ID), raw) })
	line, _ := r.Encode()
	rep, err := s.Import(bytes.NewReader(append(line, '\n')), "one.jsonl", ImportPolicy{})
	if !errors.Is(err, ErrRefused) || len(rep.Refused) != 1 || rep.Skipped != 0 || !strings.Contains(rep.Refused[0].Reason, "one.jsonl:1") {
		t.Fatalf("import over other bytes: %+v %v", rep, err)
	}
	if _, err := s.PutMany([]*Record{r}); err == nil || !strings.Contains(err.Error(), short(r.ID)) {
		t.Fatalf("PutMany over other bytes: %v", err)
	}
}

func TestBatchJobProvenance(t *testing.T) {
	env := map[string]string{"SLURM_JOB_ID": "4242", "SLURM_ARRAY_JOB_ID": "4240", "SLURM_ARRAY_TASK_ID": "3", "SLURMD_NODENAME": "node07"}
	b := BatchJobFromEnv(func(k string) string { return env[k] })
	if b == nil || *b != (BatchJob{Scheduler: "slurm", JobID: "4242", ArrayJobID: "4240", ArrayTaskID: "3", Node: "node07"}) {
		t.Fatalf("batch job %+v", b)
	}
	if BatchJobFromEnv(func(string) string { return "" }) != nil {
		t.Fatal("a batch job outside Slurm")
	}
	// The batch job is provenance: same input key, its own record id, and
	// records without one encode exactly as before (no batch_job key).
	plain := fixture(t, 9, "hf", "sto-3g", nil, t0)
	enc, _ := plain.Encode()
	if bytes.Contains(enc, []byte("batch_job")) {
		t.Fatalf("a record without a batch job encodes one: %s", enc)
	}
	onCluster := *plain
	onCluster.Run.Batch = b
	if err := onCluster.Seal(); err != nil {
		t.Fatal(err)
	}
	if onCluster.InputKey != plain.InputKey || onCluster.ID == plain.ID {
		t.Fatalf("input key %s/%s, ids %s/%s", short(onCluster.InputKey), short(plain.InputKey), short(onCluster.ID), short(plain.ID))
	}
	raw, _ := onCluster.Encode()
	if err := ValidateRecordJSON(raw); err != nil {
		t.Fatalf("a record with a batch job fails the schema: %v", err)
	}
	var back Record
	json.Unmarshal(raw, &back)
	if back.Run.Batch == nil || back.Run.Batch.ArrayTaskID != "3" || back.Check() != nil {
		t.Fatalf("round trip: %+v", back.Run.Batch)
	}
}

func TestClaimIsExclusiveAndEndsWithItsProcess(t *testing.T) {
	if os.Getenv("MOLTRAIL_CLAIM_CHILD") != "" {
		c, held, err := TryClaim(os.Getenv("MOLTRAIL_CLAIM_CHILD"), strings.Repeat("ab", 32))
		if err != nil || held {
			fmt.Fprintln(os.Stderr, "child could not claim:", held, err)
			os.Exit(3)
		}
		fmt.Println("claimed")
		time.Sleep(time.Minute)
		c.Release()
		os.Exit(0)
	}
	dir := filepath.Join(t.TempDir(), "arch")
	key := strings.Repeat("ab", 32)
	c, held, err := TryClaim(dir, key)
	if err != nil || held || c == nil {
		t.Fatalf("first claim: %v %v", held, err)
	}
	if _, held, _ := TryClaim(dir, key); !held {
		t.Fatal("a second claim on the same key was granted")
	}
	if c2, held, err := TryClaim(dir, strings.Repeat("cd", 32)); err != nil || held {
		t.Fatalf("another key: %v %v", held, err)
	} else {
		c2.Release()
	}
	// The claims directory does not keep the directory from becoming an archive.
	s := openRW(t, dir)
	if _, err := s.Put(fixture(t, 1, "hf", "sto-3g", nil, t0)); err != nil {
		t.Fatal(err)
	}
	s.Close()
	if err := c.Release(); err != nil {
		t.Fatal(err)
	}
	c3, held, err := TryClaim(dir, key)
	if err != nil || held {
		t.Fatalf("claim after release: %v %v", held, err)
	}
	c3.Release()

	// A process killed while holding a claim leaves nothing held.
	cmd := exec.Command(os.Args[0], "-test.run=^TestClaimIsExclusiveAndEndsWithItsProcess$")
	cmd.Env = append(os.Environ(), "MOLTRAIL_CLAIM_CHILD="+dir)
	out, _ := cmd.StdoutPipe()
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	buf := make([]byte, 64)
	if n, _ := out.Read(buf); !strings.Contains(string(buf[:n]), "claimed") {
		cmd.Process.Kill()
		t.Fatalf("child said %q", buf[:n])
	}
	if _, held, _ := TryClaim(dir, key); !held {
		t.Fatal("the child's claim is not seen")
	}
	cmd.Process.Kill()
	cmd.Wait()
	c4, held, err := TryClaim(dir, key)
	if err != nil || held {
		t.Fatalf("claim after the holder was killed: %v %v", held, err)
	}
	c4.Release()
	if v, err := Open(dir, OpenOptions{ReadOnly: true}); err != nil {
		t.Fatalf("archive with a claims directory: %v", err)
	} else {
		v.Close()
	}
}
