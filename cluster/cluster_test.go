package cluster

import (
	"context"
	"encoding/json"
	"fmt"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"moltrail/archive/study"
	"moltrail/engine"
)

// fakeSlurm records submissions and reports the states it is told.
type fakeSlurm struct {
	next   int
	calls  [][]string
	states map[string]string
}

func (f *fakeSlurm) Submit(args ...string) (string, error) {
	f.next++
	f.calls = append(f.calls, args)
	return fmt.Sprint(100 + f.next), nil
}

func (f *fakeSlurm) States(ids []string) (map[string]string, string) { return f.states, "" }

// converge is a Computer that returns a converged result at the input
// geometry, or fails for molecules named in fail.
func converge(fail map[string]bool) func(*engine.Job, int, io.Writer) (*engine.Result, error) {
	return func(j *engine.Job, _ int, _ io.Writer) (*engine.Result, error) {
		if fail[j.Molecule.Name] {
			return nil, fmt.Errorf("the SCF met a wall")
		}
		res := &engine.Result{Status: engine.StatusConverged, EnergyHartree: -1, SCFEnergyHartree: -1}
		for _, a := range j.Molecule.Atoms {
			res.GeometryAngstrom = append(res.GeometryAngstrom, engine.GeomAtom{Symbol: a.Symbol, XYZ: [3]float64{a.Bohr[0] * 0.5, a.Bohr[1] * 0.5, a.Bohr[2] * 0.5}})
		}
		return res, nil
	}
}

// testStudy writes a study of 4 molecules × (HF optimisation + MP2 single
// point on it): 8 items in 4 groups.
func testStudy(t *testing.T, dir string) (string, *study.Plan) {
	t.Helper()
	var mols []string
	for i := 0; i < 4; i++ {
		mols = append(mols, fmt.Sprintf(`{"xyz": "2\nh2-%d\nH 0 0 0\nH 0 0 %.2f\n"}`, i, 0.70+0.02*float64(i)))
	}
	src := `{"format":"moltrail-study/1","name":"cluster unit","molecules":[` + strings.Join(mols, ",") + `],
	  "levels":[{"methods":["hf","mp2"],"basis_sets":["sto-3g"]}],
	  "tasks":[{"task":"optimize","levels":["hf/sto-3g"]},{"task":"energy","levels":["mp2/sto-3g"],"geometry_from":"hf/sto-3g"}]}`
	path := filepath.Join(dir, "unit.json")
	if err := os.WriteFile(path, []byte(src), 0o644); err != nil {
		t.Fatal(err)
	}
	st, err := study.Load(path)
	if err != nil {
		t.Fatal(err)
	}
	p, err := st.Plan()
	if err != nil {
		t.Fatal(err)
	}
	return path, p
}

func runShard(t *testing.T, p *study.Plan, l Layout, k, n int, fail map[string]bool) {
	t.Helper()
	sp, err := p.Shard(study.Part{K: k, N: n})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := study.Run(context.Background(), sp, study.Options{Archive: l.ShardDir(k, n), Compute: converge(fail)}); err != nil {
		t.Fatal(err)
	}
}

func TestPrepareSubmitResubmit(t *testing.T) {
	dir := t.TempDir()
	path, p := testStudy(t, dir)
	archiveDir := filepath.Join(dir, "archive")
	l := Layout{Dir: DefaultDir(path)}
	res := Resources{Partition: "short", Time: "1:00:00", MergeTime: "20", CPUs: 4, Memory: "8G", MaxRunning: 2, Extra: []string{"#SBATCH --account=chem", "--qos=low"}}
	o := Options{StudyFile: path, Archive: archiveDir, Work: l, Shards: 4, Res: res, Moltrail: "/opt/moltrail/bin/moltrail",
		Now: time.Date(2025, 1, 2, 3, 4, 0, 0, time.UTC)}
	sched := &fakeSlurm{}
	pr, err := Prepare(p, o, sched)
	if err != nil {
		t.Fatal(err)
	}
	if fmt.Sprint(pr.Tasks) != "[1 2 3 4]" || pr.MergeOnly || pr.Status.ToDo != 8 {
		t.Fatalf("first prepare: tasks %v, merge only %v, %+v", pr.Tasks, pr.MergeOnly, pr.Status)
	}
	arr, _ := os.ReadFile(l.ArrayScript())
	for _, want := range []string{"#!/bin/bash", "#SBATCH --array=1-4%2\n", "#SBATCH --partition=short\n", "#SBATCH --time=1:00:00\n",
		"#SBATCH --cpus-per-task=4\n", "#SBATCH --mem=8G\n", "#SBATCH --account=chem\n", "#SBATCH --qos=low\n",
		"#SBATCH --job-name=moltrail-cluster-unit\n", "moltrail=/opt/moltrail/bin/moltrail\n", `--shard "$shard/$shards"`,
		"--reuse-from \"$study_archive\"", "study_archive=" + archiveDir + "\n", "2025-01-02 03:04 UTC"} {
		if !strings.Contains(string(arr), want) {
			t.Errorf("array script lacks %q", want)
		}
	}
	mrg, _ := os.ReadFile(l.MergeScript())
	for _, want := range []string{"#SBATCH --time=20\n", "#SBATCH --account=chem\n", "#SBATCH --job-name=moltrail-cluster-unit-merge\n",
		`merge --archive "$study_archive"`} {
		if !strings.Contains(string(mrg), want) {
			t.Errorf("merge script lacks %q", want)
		}
	}
	if strings.Contains(string(mrg), "--array") || strings.Contains(string(mrg), "--mem") {
		t.Errorf("merge script asks for the array's resources:\n%s", mrg)
	}
	for _, s := range []string{l.ArrayScript(), l.MergeScript()} {
		if fi, err := os.Stat(s); err != nil || fi.Mode()&0o100 == 0 {
			t.Errorf("%s is not executable", s)
		}
	}
	checkScriptsRun(t, p, l, archiveDir)
	sub, err := pr.Submit(sched, time.Now())
	if err != nil || sub.ArrayJobID != "101" || sub.MergeJobID != "102" {
		t.Fatalf("submit: %+v %v", sub, err)
	}
	if got := fmt.Sprint(sched.calls); got != fmt.Sprintf("[[%s] [--dependency=afterany:101 %s]]", l.ArrayScript(), l.MergeScript()) {
		t.Fatalf("sbatch calls %s", got)
	}
	state, err := LoadState(l)
	if err != nil || len(state.Submissions) != 1 || state.Shards != 4 || state.Archive != archiveDir {
		t.Fatalf("state %+v %v", state, err)
	}

	// Shards 1, 2 and 4 ran (4 with a failing molecule); 3 ran out of time.
	as := p.Assign(4)
	failing := map[string]bool{}
	for _, it := range p.Items {
		if as[it.Index] == 4 {
			failing[it.Molecule.Name] = true
		}
	}
	for _, k := range []int{1, 2, 4} {
		runShard(t, p, l, k, 4, failing)
	}
	sched.states = map[string]string{"101_1": "COMPLETED", "101_2": "COMPLETED", "101_3": "TIMEOUT", "101_4": "FAILED", "102": "COMPLETED"}
	o.Shards = 0 // remembered
	pr2, err := Prepare(p, o, sched)
	if err != nil {
		t.Fatal(err)
	}
	s := pr2.Status
	if fmt.Sprint(pr2.Tasks) != "[3]" || s.Done != 4 || s.Failed != 2 || s.ToDo != 2 || s.InArchive != 0 {
		t.Fatalf("resubmission: tasks %v, status %+v", pr2.Tasks, s)
	}
	if sh := s.PerShard[3]; sh.Failed != 2 || sh.Queue != "FAILED" || sh.Job != "101_4" {
		t.Fatalf("shard 4: %+v", sh)
	}
	if s.Jobs[0].State != "COMPLETED×2 FAILED×1 TIMEOUT×1" {
		t.Fatalf("array job state %q", s.Jobs[0].State)
	}
	arr2, _ := os.ReadFile(l.ArrayScript())
	if !strings.Contains(string(arr2), "#SBATCH --array=3%2\n") {
		t.Fatalf("resubmitted array line:\n%s", arr2)
	}
	// While shard 3's new task is queued it is not submitted again.
	if _, err := pr2.Submit(sched, time.Now()); err != nil {
		t.Fatal(err)
	}
	sched.states["103_3"] = "PENDING"
	pr3, err := Prepare(p, o, sched)
	if err != nil || len(pr3.Tasks) != 0 || fmt.Sprint(pr3.Queued) != "[3]" || !pr3.Nothing() {
		t.Fatalf("while queued: tasks %v queued %v nothing %v %v", pr3.Tasks, pr3.Queued, pr3.Nothing(), err)
	}
	// Shard 3 done: only a merge is left to do.
	runShard(t, p, l, 3, 4, nil)
	sched.states["103_3"] = "COMPLETED"
	pr4, err := Prepare(p, o, sched)
	if err != nil || !pr4.MergeOnly || len(pr4.Tasks) != 0 {
		t.Fatalf("after all shards: %+v %v", pr4, err)
	}
	sub4, err := pr4.Submit(sched, time.Now())
	if err != nil || sub4.ArrayJobID != "" || len(sched.calls[len(sched.calls)-1]) != 1 {
		t.Fatalf("merge-only submission: %+v %v %v", sub4, err, sched.calls)
	}
	// A failed item is missing again with --retry-failed: shard 4 reruns.
	o.RetryFailed = true
	pr5, err := Prepare(p, o, sched)
	if err != nil || fmt.Sprint(pr5.Tasks) != "[4]" {
		t.Fatalf("retry failed: tasks %v %v", pr5.Tasks, err)
	}
	arr5, _ := os.ReadFile(l.ArrayScript())
	if !strings.Contains(string(arr5), "--retry-failed") {
		t.Fatal("the retry is not passed to the shards")
	}
	b, _ := json.Marshal(pr5.Status)
	if !strings.Contains(string(b), `"per_shard"`) {
		t.Fatalf("status JSON %s", b)
	}
	// The work directory serves one archive.
	o.Archive = filepath.Join(dir, "other")
	if _, err := Prepare(p, o, sched); err == nil || !strings.Contains(err.Error(), "serves the archive") {
		t.Fatalf("another archive: %v", err)
	}
}

func TestResourcesCheck(t *testing.T) {
	good := Resources{CPUs: 1, Time: "1-12:00:00", Memory: "500M", Extra: []string{"--constraint=avx512"}}
	if err := good.Check(); err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		r    Resources
		want string
	}{
		{Resources{CPUs: 0}, "--cpus-per-task 0"},
		{Resources{CPUs: 1, Time: "two hours"}, "--time"},
		{Resources{CPUs: 1, MergeTime: "1h"}, "--merge-time"},
		{Resources{CPUs: 1, Memory: "8 GB"}, "--mem"},
		{Resources{CPUs: 1, Partition: "a b"}, "--partition"},
		{Resources{CPUs: 1, MaxRunning: -1}, "--max-running"},
		{Resources{CPUs: 1, Extra: []string{"--array=1-9"}}, "written by moltrail"},
		{Resources{CPUs: 1, Extra: []string{"#SBATCH --dependency=afterok:1"}}, "written by moltrail"},
		{Resources{CPUs: 1, Extra: []string{"--qos=a\n#SBATCH --array=1"}}, "line break"},
		{Resources{CPUs: 1, Extra: []string{"rm -rf /"}}, "not an sbatch option"},
	}
	for _, c := range cases {
		err := c.r.Check()
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%+v: %v, want %q", c.r, err, c.want)
		}
	}
}

func TestSlurmOutputParsing(t *testing.T) {
	for in, want := range map[string]string{"1234\n": "1234", "77;cluster-a\n": "77", "sbatch: warning: x\n88\n": "88"} {
		if got, err := parseParsable(in); err != nil || got != want {
			t.Errorf("%q: %q %v", in, got, err)
		}
	}
	if _, err := parseParsable("Submitted batch job 5\n"); err == nil {
		t.Error("non-parsable output accepted")
	}
	st := map[string]string{}
	parseStates("12_1|RUNNING\n12_[2-4]|PENDING\n13|CANCELLED by 0\n12_1.batch|RUNNING\n\n", st)
	if fmt.Sprint(st) != "map[12_1:RUNNING 13:CANCELLED]" {
		t.Fatalf("states %v", st)
	}
	if got := ArrayList([]int{1, 2, 3, 5, 7, 8}); got != "1-3,5,7-8" {
		t.Fatalf("array list %q", got)
	}
	if jobName("Benchmark: water / 2025", "") != "moltrail-Benchmark--water---2025" {
		t.Fatalf("job name %q", jobName("Benchmark: water / 2025", ""))
	}
	if q := quote("/a b/it's"); q != `'/a b/it'\''s'` {
		t.Fatalf("quote %s", q)
	}
}

// checkScriptsRun runs the scripts with bash as Slurm would, with a stand-in
// moltrail that prints its arguments.
func checkScriptsRun(t *testing.T, p *study.Plan, l Layout, archiveDir string) {
	t.Helper()
	if _, err := exec.LookPath("bash"); err != nil {
		t.Log("no bash here: the scripts are not run")
		return
	}
	fake := filepath.Join(t.TempDir(), "moltrail")
	os.WriteFile(fake, []byte("#!/bin/sh\necho \"$@\"\n"), 0o755)
	run := func(script string, env ...string) string {
		b, _ := os.ReadFile(script)
		text := strings.Replace(string(b), "moltrail=/opt/moltrail/bin/moltrail", "moltrail="+fake, 1)
		cmd := exec.Command("bash", "-c", text)
		cmd.Env = append(os.Environ(), env...)
		out, err := cmd.CombinedOutput()
		if err != nil {
			t.Fatalf("%s: %v\n%s", script, err, out)
		}
		return string(out)
	}
	out := run(l.ArrayScript(), "SLURM_ARRAY_TASK_ID=3", "SLURM_CPUS_PER_TASK=4", "SLURM_JOB_ID=77")
	want := fmt.Sprintf("study %s --shard 3/4 --archive %s --reuse-from %s --wait 10m --threads 4", p.Study.Origin, l.ShardDir(3, 4), archiveDir)
	if !strings.Contains(out, want) || !strings.Contains(out, "shard 3 of 4") {
		t.Fatalf("array task ran:\n%s\nwant %q", out, want)
	}
	cmd := exec.Command("bash", l.ArrayScript())
	cmd.Env = append(os.Environ(), "SLURM_ARRAY_TASK_ID=")
	if out, err := cmd.CombinedOutput(); err == nil || !strings.Contains(string(out), "array job") {
		t.Fatalf("the array script ran outside an array task: %v %s", err, out)
	}
	out = run(l.MergeScript())
	if want := "merge --archive " + archiveDir + " --wait 10m " + l.ShardsDir(); !strings.Contains(out, want) {
		t.Fatalf("merge job ran %q, want %q", out, want)
	}
}
