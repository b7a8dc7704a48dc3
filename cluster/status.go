package cluster

import (
	"fmt"
	"sort"
	"strconv"
	"time"

	"moltrail/archive/study"
	"moltrail/engine"
)

// ShardStatus is the state of one shard.
type ShardStatus struct {
	Shard int `json:"shard"`
	Items int `json:"items"`
	// Done: a converged record is stored (in the study's archive or a shard archive).
	Done int `json:"done"`
	// Failed: the stored record failed or did not converge, or the
	// optimisation the item starts from did.
	Failed int `json:"failed"`
	// ToDo: nothing is stored yet.
	ToDo int `json:"to_do"`
	// Job and Queue are the shard's latest array task and its Slurm state
	// (empty when the scheduler does not know it).
	Job   string `json:"job,omitempty"`
	Queue string `json:"queue_state,omitempty"`
}

// JobState is the Slurm state of one submitted job.
type JobState struct {
	Role  string `json:"role"` // "array" or "merge"
	JobID string `json:"job_id"`
	State string `json:"state,omitempty"`
}

// Status is the progress of a study on the cluster.
type Status struct {
	Study     string `json:"study"`
	StudyFile string `json:"study_file"`
	WorkDir   string `json:"work_dir"`
	Archive   string `json:"archive"`
	Shards    int    `json:"shards"`
	Items     int    `json:"items"`
	Done      int    `json:"done"`
	Failed    int    `json:"failed"`
	ToDo      int    `json:"to_do"`
	// InArchive counts the items whose record the study's archive holds
	// (merged); the rest of Done and Failed is still in shard archives.
	InArchive int           `json:"in_study_archive"`
	PerShard  []ShardStatus `json:"per_shard"`
	Jobs      []JobState    `json:"jobs"`
	// QueueNote says why queue states are missing, if they are.
	QueueNote string `json:"queue_note,omitempty"`
}

// Finished reports whether every item has a converged record in the
// study's archive.
func (s *Status) Finished() bool { return s.InArchive == s.Items && s.Done == s.Items }

// Missing lists the shards with items still to do.
func (s *Status) Missing() []int {
	var out []int
	for _, sh := range s.PerShard {
		if sh.ToDo > 0 {
			out = append(out, sh.Shard)
		}
	}
	return out
}

// queued reports whether a Slurm state means the task will still run or
// is running.
func queued(state string) bool {
	switch state {
	case "PENDING", "RUNNING", "CONFIGURING", "COMPLETING", "REQUEUED", "RESIZING", "SUSPENDED", "REQUEUE_HOLD", "REQUEUE_FED", "SIGNALING", "STAGE_OUT":
		return true
	}
	return false
}

// categories sorts a dry run's items into done / failed / to do.
func categories(p *study.Plan, sum *study.Summary, retryFailed bool) map[int]string {
	res := map[int]*study.ItemResult{}
	for i := range sum.Items {
		res[sum.Items[i].Index] = &sum.Items[i]
	}
	out := map[int]string{}
	for _, it := range p.Items {
		r := res[it.Index]
		switch {
		case r == nil:
			out[it.Index] = "to_do"
		case r.Outcome == study.WouldReuse && r.Status == engine.StatusConverged:
			out[it.Index] = "done"
		case r.Outcome == study.WouldReuse:
			out[it.Index] = "failed"
		case it.From != nil && !retryFailed:
			if d := res[it.From.Index]; d != nil && d.Outcome == study.WouldReuse && d.Status != engine.StatusConverged {
				out[it.Index] = "failed" // its optimisation failed: the shard skips it
				continue
			}
			out[it.Index] = "to_do"
		default:
			out[it.Index] = "to_do"
		}
	}
	return out
}

// StatusOptions control ComputeStatus.
type StatusOptions struct {
	Archive     string
	Work        Layout
	Shards      int
	RetryFailed bool
	Wait        time.Duration
	// Scheduler, when not nil, is asked for the jobs' queue states.
	Scheduler Scheduler
	State     *State
}

// ComputeStatus works out the study's progress from the archives (the
// study's and every shard archive in the work directory) and, when a
// scheduler is given, the queue.
func ComputeStatus(p *study.Plan, o StatusOptions) (*Status, error) {
	n := o.Shards
	if n < 1 {
		return nil, fmt.Errorf("the shard count is not known")
	}
	all, err := study.DryRun(p, study.Options{Archive: o.Archive, ReuseFrom: o.Work.ShardArchives(), Wait: o.Wait, RetryFailed: o.RetryFailed})
	if err != nil {
		return nil, err
	}
	merged, err := study.DryRun(p, study.Options{Archive: o.Archive, Wait: o.Wait, RetryFailed: o.RetryFailed})
	if err != nil {
		return nil, err
	}
	st := &Status{Study: p.Study.Name, StudyFile: p.Study.Origin, WorkDir: o.Work.Dir, Archive: o.Archive, Shards: n,
		Items: len(p.Items), Jobs: []JobState{}}
	for _, r := range merged.Items {
		if r.Outcome == study.WouldReuse {
			st.InArchive++
		}
	}
	cat := categories(p, all, o.RetryFailed)
	as := p.Assign(n)
	st.PerShard = make([]ShardStatus, n)
	for k := range st.PerShard {
		st.PerShard[k].Shard = k + 1
	}
	for _, it := range p.Items {
		sh := &st.PerShard[as[it.Index]-1]
		sh.Items++
		switch cat[it.Index] {
		case "done":
			sh.Done++
			st.Done++
		case "failed":
			sh.Failed++
			st.Failed++
		default:
			sh.ToDo++
			st.ToDo++
		}
	}
	if o.State != nil {
		st.addQueue(o.State, o.Scheduler)
	}
	return st, nil
}

// addQueue fills in the jobs' and shards' Slurm states: for each shard the
// task of the latest submission (with this shard count) that ran it.
func (st *Status) addQueue(state *State, sched Scheduler) {
	var ids []string
	latest := map[int]string{}
	for _, sub := range state.Submissions {
		if sub.ArrayJobID != "" {
			st.Jobs = append(st.Jobs, JobState{Role: "array", JobID: sub.ArrayJobID})
			ids = append(ids, sub.ArrayJobID)
			if sub.Shards == st.Shards {
				for _, k := range sub.Tasks {
					latest[k] = sub.ArrayJobID + "_" + strconv.Itoa(k)
				}
			}
		}
		if sub.MergeJobID != "" {
			st.Jobs = append(st.Jobs, JobState{Role: "merge", JobID: sub.MergeJobID})
			ids = append(ids, sub.MergeJobID)
		}
	}
	for i := range st.PerShard {
		st.PerShard[i].Job = latest[st.PerShard[i].Shard]
	}
	if len(ids) == 0 {
		return
	}
	if sched == nil {
		st.QueueNote = "no scheduler to ask"
		return
	}
	states, note := sched.States(ids)
	st.QueueNote = note
	for i := range st.Jobs {
		st.Jobs[i].State = arrayState(states, st.Jobs[i].JobID)
	}
	for i := range st.PerShard {
		if j := st.PerShard[i].Job; j != "" {
			st.PerShard[i].Queue = states[j]
		}
	}
}

// arrayState is a job's state; for an array job, the states of its tasks
// in one word each ("RUNNING×2 PENDING×1").
func arrayState(states map[string]string, id string) string {
	if s, ok := states[id]; ok {
		return s
	}
	count := map[string]int{}
	prefix := id + "_"
	for k, s := range states {
		if len(k) > len(prefix) && k[:len(prefix)] == prefix {
			count[s]++
		}
	}
	var names []string
	for s := range count {
		names = append(names, s)
	}
	sort.Strings(names)
	out := ""
	for _, s := range names {
		if out != "" {
			out += " "
		}
		out += fmt.Sprintf("%s×%d", s, count[s])
	}
	return out
}
