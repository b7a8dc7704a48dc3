package main

import (
	"fmt"
	"io"
	"os"
	"strings"
	"time"

	"moltrail/archive/study"
	"moltrail/cluster"
)

func init() {
	register(Command{Name: "cluster", Summary: "run a study on Slurm: an array job of shards and a merge job; --status shows progress", Run: cmdCluster})
}

const clusterHelp = `Runs a study on a Slurm cluster. From the study file it writes, in the
study's work directory (--work-dir, default NAME.cluster beside the study
file NAME.json):

  array.sbatch   an array job, one task per shard of the study; task K runs
                 moltrail study --shard K/N into its own archive
                 shards/shard-K-of-N, reusing what the study's archive holds
  merge.sbatch   a job that merges the shard archives into the study's
                 archive (--archive); submitted to start after the array has
                 ended, however it ended (afterany)
  cluster.json   what was submitted, with the job ids

Both scripts are plain bash with #SBATCH lines, documented, for your site to
edit. With --submit, moltrail submits them with sbatch and prints the job
ids. Running the same command again after tasks failed or ran out of time
submits only the shards whose items are still missing (stored neither in the
study's archive nor in a shard archive), leaves out shards whose earlier
task is still queued or running, and submits only a merge when everything is
computed but not yet merged. Records computed on the cluster carry the Slurm
job id, array task id and node in their provenance.

--status shows per shard what is done, failed and still to do, from the
archives, and the queue state of each shard's latest task (squeue; sacct
where the site keeps accounting). Exit status 0 when every item has a
converged record in the study's archive, 1 otherwise.

Run from a machine that can submit jobs, on a file system the compute nodes
share. Exit status: 0 done (or, for --status, finished), 1 submission or
work failed (for --status: not finished), 2 bad usage or a bad study file.
`

type clusterJSON struct {
	Study       string          `json:"study"`
	WorkDir     string          `json:"work_dir"`
	Archive     string          `json:"archive"`
	Shards      int             `json:"shards"`
	Tasks       []int           `json:"submitted_shards"`
	Queued      []int           `json:"still_queued_shards"`
	MergeOnly   bool            `json:"merge_only"`
	ArrayScript string          `json:"array_script,omitempty"`
	MergeScript string          `json:"merge_script,omitempty"`
	Submitted   bool            `json:"submitted"`
	ArrayJobID  string          `json:"array_job_id,omitempty"`
	MergeJobID  string          `json:"merge_job_id,omitempty"`
	Status      *cluster.Status `json:"status"`
}

func cmdCluster(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("cluster", stderr, "[flags] FILE.json\n\n"+clusterHelp)
	af := addArchiveFlags(fs)
	work := fs.String("work-dir", "", "the study's cluster `DIRECTORY` (default: NAME.cluster beside the study file NAME.json)")
	shards := fs.Int("shards", 0, "split the study into `N` shards, one array task each (default: as before, else one per group of dependent items, at most 10)")
	var res cluster.Resources
	fs.StringVar(&res.Partition, "partition", "", "Slurm `PARTITION` for both jobs (default: the cluster's)")
	fs.StringVar(&res.Time, "time", "", "each array task's time `LIMIT`, e.g. 2:00:00 or 1-12:00:00 (default: the partition's)")
	fs.StringVar(&res.MergeTime, "merge-time", "", "the merge job's time `LIMIT` (default: the partition's)")
	fs.IntVar(&res.CPUs, "cpus-per-task", 1, "CPUs of each array task; its calculations use them all")
	fs.StringVar(&res.Memory, "mem", "", "memory `SIZE` of each array task, e.g. 8G (default: the partition's)")
	fs.IntVar(&res.MaxRunning, "max-running", 0, "run at most `N` array tasks at once (0: no limit)")
	var extra multiFlag
	fs.Var(&extra, "sbatch-line", "a further #SBATCH `OPTION` for both jobs, e.g. --account=chem (repeatable)")
	exe := fs.String("moltrail", "", "the moltrail `EXECUTABLE` the jobs run (default: this one)")
	retry := fs.Bool("retry-failed", false, "count failed items as missing, and have the shards compute them again")
	submit := fs.Bool("submit", false, "submit the jobs with sbatch and print their ids")
	status := fs.Bool("status", false, "show the study's progress; write and submit nothing")
	asJSON := fs.Bool("json", false, "print one JSON summary on stdout")
	pos, code, ok := parseFlags(fs, args)
	if !ok {
		return code
	}
	if len(pos) != 1 {
		fmt.Fprintln(stderr, "moltrail cluster: give exactly one study file (JSON)")
		return exitUsage
	}
	if *submit && *status {
		fmt.Fprintln(stderr, "moltrail cluster: --status shows progress only; give it without --submit")
		return exitUsage
	}
	if *shards < 0 || *shards > study.MaxShards {
		fmt.Fprintf(stderr, "moltrail cluster: --shards %d is outside 1–%d\n", *shards, study.MaxShards)
		return exitUsage
	}
	res.Extra = extra
	if err := res.Check(); err != nil {
		return fail(stderr, exitUsage, "cluster", err)
	}
	st, err := study.Load(pos[0])
	if err != nil {
		return fail(stderr, exitUsage, "cluster", err)
	}
	plan, err := st.Plan()
	if err != nil {
		return fail(stderr, exitUsage, "cluster", err)
	}
	layout := cluster.Layout{Dir: *work}
	if layout.Dir == "" {
		layout.Dir = cluster.DefaultDir(pos[0])
	}
	state, err := cluster.LoadState(layout)
	if err != nil {
		return fail(stderr, exitFailed, "cluster", err)
	}
	// A work directory remembers its archive: the default location rule
	// applies only to a new one.
	archiveDir := af.path()
	if state != nil && af.dir == "" && os.Getenv("MOLTRAIL_ARCHIVE") == "" {
		archiveDir = state.Archive
	}
	sched := cluster.Slurm{}
	if *status {
		return clusterStatus(plan, layout, state, archiveDir, af.waitOrNone(), *shards, *retry, sched, *asJSON, stdout, stderr)
	}
	pr, err := cluster.Prepare(plan, cluster.Options{StudyFile: pos[0], Archive: archiveDir, Work: layout, Shards: *shards, Res: res,
		Moltrail: *exe, RetryFailed: *retry, Wait: af.waitOrNone()}, sched)
	if err != nil {
		return fail(stderr, exitFailed, "cluster", err)
	}
	out := clusterJSON{Study: st.Name, WorkDir: pr.Script.Work.Dir, Archive: pr.Script.Archive, Shards: pr.Script.Shards,
		Tasks: pr.Tasks, Queued: pr.Queued, MergeOnly: pr.MergeOnly, MergeScript: pr.Script.Work.MergeScript(), Status: pr.Status}
	if len(pr.Tasks) > 0 {
		out.ArrayScript = pr.Script.Work.ArrayScript()
	}
	var subErr error
	if *submit && !pr.Nothing() {
		sub, err := pr.Submit(sched, time.Now())
		if sub != nil {
			out.ArrayJobID, out.MergeJobID, out.Submitted = sub.ArrayJobID, sub.MergeJobID, sub.MergeJobID != ""
		}
		subErr = err
	}
	if *asJSON {
		if err := printJSON(stdout, out); err != nil {
			return fail(stderr, exitFailed, "cluster", err)
		}
	} else {
		writeClusterPlan(stdout, pr, out, *submit)
	}
	if subErr != nil {
		return fail(stderr, exitFailed, "cluster", subErr)
	}
	return exitOK
}

func writeClusterPlan(w io.Writer, pr *cluster.Prepared, out clusterJSON, submitted bool) {
	s := pr.Status
	fmt.Fprintf(w, "study %q: %d items in %d shards: %d done, %d failed, %d to do; %d in the study archive %s\n",
		s.Study, s.Items, s.Shards, s.Done, s.Failed, s.ToDo, s.InArchive, s.Archive)
	if len(pr.Queued) > 0 {
		fmt.Fprintf(w, "shard(s) %s still have a task queued or running; they are not submitted again\n", cluster.ArrayList(pr.Queued))
	}
	switch {
	case pr.Nothing() && s.Finished():
		fmt.Fprintln(w, "every item has a converged record in the study archive; nothing to submit")
		return
	case pr.Nothing():
		fmt.Fprintln(w, "nothing to submit now")
		if s.Failed > 0 && len(pr.Queued) == 0 {
			fmt.Fprintln(w, "failed items stay failed; --retry-failed has the shards compute them again")
		}
		return
	}
	if len(pr.Tasks) > 0 {
		fmt.Fprintf(w, "wrote %s (shards %s of %d) and %s\n", out.ArrayScript, cluster.ArrayList(pr.Tasks), s.Shards, out.MergeScript)
	} else {
		fmt.Fprintf(w, "every item is computed; wrote %s to merge the shard archives\n", out.MergeScript)
	}
	switch {
	case out.Submitted && out.ArrayJobID != "":
		fmt.Fprintf(w, "submitted array job %s (%d task%s) and merge job %s (starts after the array has ended)\n", out.ArrayJobID, len(pr.Tasks), plural(len(pr.Tasks)), out.MergeJobID)
	case out.Submitted:
		fmt.Fprintf(w, "submitted merge job %s\n", out.MergeJobID)
	case !submitted && len(pr.Tasks) > 0:
		fmt.Fprintf(w, "submit with --submit, or yourself:\n  id=$(sbatch --parsable %s) && sbatch --dependency=afterany:$id %s\n", out.ArrayScript, out.MergeScript)
	case !submitted:
		fmt.Fprintf(w, "submit with --submit, or yourself:\n  sbatch %s\n", out.MergeScript)
	}
}

func clusterStatus(plan *study.Plan, layout cluster.Layout, state *cluster.State, archiveDir string, wait time.Duration, shards int, retry bool, sched cluster.Scheduler, asJSON bool, stdout, stderr io.Writer) int {
	if shards == 0 && state != nil {
		shards = state.Shards
	}
	if shards == 0 {
		shards = cluster.DefaultShards(plan)
	}
	st, err := cluster.ComputeStatus(plan, cluster.StatusOptions{Archive: archiveDir, Work: layout, Shards: shards, RetryFailed: retry,
		Wait: wait, Scheduler: sched, State: state})
	if err != nil {
		return fail(stderr, exitFailed, "cluster", err)
	}
	if asJSON {
		if err := printJSON(stdout, st); err != nil {
			return fail(stderr, exitFailed, "cluster", err)
		}
	} else {
		t := &table{head: []string{"shard", "items", "done", "failed", "to do", "latest task", "queue state"},
			right: []bool{true, true, true, true, true, false, false}}
		for _, sh := range st.PerShard {
			t.add(fmt.Sprint(sh.Shard), fmt.Sprint(sh.Items), fmt.Sprint(sh.Done), fmt.Sprint(sh.Failed), fmt.Sprint(sh.ToDo), sh.Job, strings.ToLower(sh.Queue))
		}
		t.write(stdout)
		fmt.Fprintf(stdout, "study %q: %d items in %d shards: %d done, %d failed, %d to do; %d in the study archive %s\n",
			st.Study, st.Items, st.Shards, st.Done, st.Failed, st.ToDo, st.InArchive, st.Archive)
		for _, j := range st.Jobs {
			state := strings.ToLower(j.State)
			if state == "" {
				state = "not known to the scheduler any more"
			}
			fmt.Fprintf(stdout, "%s job %s: %s\n", j.Role, j.JobID, state)
		}
		if st.QueueNote != "" {
			fmt.Fprintf(stdout, "queue states incomplete: %s\n", st.QueueNote)
		}
	}
	if !st.Finished() {
		return exitFailed
	}
	return exitOK
}
