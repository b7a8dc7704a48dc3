package cluster

import (
	"fmt"
	"os"
	"path/filepath"
	"time"

	"moltrail/archive/study"
)

// Options describe a study's cluster run.
type Options struct {
	// StudyFile is the study file's path.
	StudyFile string
	// Archive is the study's archive (where the merge job merges to).
	Archive string
	// Work is the work directory.
	Work Layout
	// Shards is the shard count (0: the one used before, else DefaultShards).
	Shards int
	Res    Resources
	// Moltrail is the executable the jobs run (empty: this one).
	Moltrail string
	// RetryFailed makes failed items count as to do, and the shards
	// compute them again.
	RetryFailed bool
	// Wait bounds waiting for an archive held by another process.
	Wait time.Duration
	// Now is the time written into the scripts' header (zero: now).
	Now time.Time
}

// Prepared is a written set of job scripts and what to submit.
type Prepared struct {
	Script Script
	Status *Status
	// Tasks are the shards the array job will run.
	Tasks []int `json:"tasks"`
	// Queued are shards with missing items left out because a task of an
	// earlier submission is still queued or running for them.
	Queued []int `json:"queued"`
	// MergeOnly: no shard needs running, but records in shard archives are
	// not merged yet; only the merge job is needed.
	MergeOnly bool
	state     *State
}

// Nothing reports whether there is nothing to submit.
func (p *Prepared) Nothing() bool { return len(p.Tasks) == 0 && !p.MergeOnly }

// Prepare works out which shards still have missing items, writes the
// array and merge scripts for them into the work directory (with its
// shard and log directories) and records the study in cluster.json.
// sched, when not nil, is asked which earlier tasks are still queued.
func Prepare(p *study.Plan, o Options, sched Scheduler) (*Prepared, error) {
	abs := func(path string) string {
		a, err := filepath.Abs(path)
		if err != nil {
			return path
		}
		return a
	}
	work := Layout{Dir: abs(o.Work.Dir)}
	if err := o.Res.Check(); err != nil {
		return nil, err
	}
	state, err := LoadState(work)
	if err != nil {
		return nil, err
	}
	studyFile, archiveDir := abs(o.StudyFile), abs(o.Archive)
	if state != nil && state.Archive != archiveDir {
		return nil, fmt.Errorf("work directory %s serves the archive %s, not %s; give that archive, or another --work-dir", work.Dir, state.Archive, archiveDir)
	}
	n := o.Shards
	switch {
	case n > 0:
	case state != nil && state.Shards > 0:
		n = state.Shards
	default:
		n = DefaultShards(p)
	}
	if n > study.MaxShards {
		return nil, fmt.Errorf("--shards %d is more than %d", n, study.MaxShards)
	}
	sum, err := fileSHA256(studyFile)
	if err != nil {
		return nil, fmt.Errorf("study file: %v", unwrapPath(err))
	}
	if state == nil {
		state = &State{Format: StateFormat, Submissions: []Submission{}}
	}
	state.Study, state.StudySHA256, state.Archive, state.Shards = studyFile, sum, archiveDir, n
	st, err := ComputeStatus(p, StatusOptions{Archive: archiveDir, Work: work, Shards: n, RetryFailed: o.RetryFailed, Wait: o.Wait, Scheduler: sched, State: state})
	if err != nil {
		return nil, err
	}
	pr := &Prepared{Status: st, Tasks: []int{}, Queued: []int{}, state: state}
	for _, k := range st.Missing() {
		if q := st.PerShard[k-1].Queue; queued(q) {
			pr.Queued = append(pr.Queued, k)
			continue
		}
		pr.Tasks = append(pr.Tasks, k)
	}
	stored := st.Done + st.Failed
	pr.MergeOnly = len(pr.Tasks) == 0 && len(pr.Queued) == 0 && stored > st.InArchive
	exe := o.Moltrail
	if exe == "" {
		if exe, err = os.Executable(); err != nil {
			return nil, fmt.Errorf("cannot tell where this moltrail executable is (%v); give --moltrail PATH", err)
		}
	}
	now := o.Now
	if now.IsZero() {
		now = time.Now()
	}
	pr.Script = Script{StudyName: p.Study.Name, StudyFile: studyFile, Archive: archiveDir, Work: work, Moltrail: abs(exe),
		Shards: n, Tasks: pr.Tasks, Res: o.Res, RetryFailed: o.RetryFailed, Written: now.UTC().Format("2006-01-02 15:04 UTC")}
	for _, d := range []string{work.Dir, work.ShardsDir(), work.LogDir()} {
		if err := os.MkdirAll(d, 0o755); err != nil {
			return nil, fmt.Errorf("cannot make %s: %v", d, unwrapPath(err))
		}
	}
	if len(pr.Tasks) > 0 {
		if err := writeAtomic(work.ArrayScript(), []byte(pr.Script.Array()), 0o755); err != nil {
			return nil, err
		}
	}
	if err := writeAtomic(work.MergeScript(), []byte(pr.Script.Merge()), 0o755); err != nil {
		return nil, err
	}
	if err := state.save(work); err != nil {
		return nil, err
	}
	return pr, nil
}

// Submit submits the array job (when shards need running) and the merge
// job, which depends on the array (afterany) when there is one, and
// records both in cluster.json.
func (p *Prepared) Submit(sched Scheduler, now time.Time) (*Submission, error) {
	if p.Nothing() {
		return nil, fmt.Errorf("there is nothing to submit")
	}
	sub := Submission{TimeUTC: now.UTC().Format(time.RFC3339), Shards: p.Script.Shards, Tasks: p.Tasks}
	merge := []string{p.Script.Work.MergeScript()}
	if len(p.Tasks) > 0 {
		id, err := sched.Submit(p.Script.Work.ArrayScript())
		if err != nil {
			return nil, fmt.Errorf("submitting the array job: %v", err)
		}
		sub.ArrayJobID = id
		merge = append([]string{"--dependency=afterany:" + id}, merge...)
	}
	id, err := sched.Submit(merge...)
	if err != nil {
		// The array job stands; record it so that status and a later
		// submission know about it.
		p.state.Submissions = append(p.state.Submissions, sub)
		if serr := p.state.save(p.Script.Work); serr != nil {
			return nil, fmt.Errorf("submitting the merge job: %v (and recording array job %s failed: %v)", err, sub.ArrayJobID, serr)
		}
		return &sub, fmt.Errorf("array job %s is submitted, but submitting the merge job failed: %v; run moltrail cluster --submit again when the array has ended to merge", sub.ArrayJobID, err)
	}
	sub.MergeJobID = id
	p.state.Submissions = append(p.state.Submissions, sub)
	if err := p.state.save(p.Script.Work); err != nil {
		return &sub, fmt.Errorf("jobs %s and %s are submitted, but recording them failed: %v", sub.ArrayJobID, sub.MergeJobID, err)
	}
	return &sub, nil
}
