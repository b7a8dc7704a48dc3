package study

import (
	"context"
	"errors"
	"fmt"
	"io"
	"runtime"
	"sync"
	"time"

	"moltrail/archive"
	"moltrail/engine"
)

// Outcomes of an item.
const (
	// Computed: calculated by this run and stored.
	Computed = "computed"
	// Reused: the archive already held this input at this code version.
	Reused = "reused"
	// Skipped: the optimisation it starts from gave no usable geometry.
	Skipped = "skipped"
	// Errored: it could not be computed or stored; nothing was stored.
	Errored = "error"
	// Pending: not started (the run was stopped), or abandoned while running.
	Pending = "pending"
	// WouldCompute and WouldReuse are the outcomes of a dry run.
	WouldCompute = "would-compute"
	WouldReuse   = "would-reuse"
)

// ItemResult is what happened to one item.
type ItemResult struct {
	Index        int    `json:"index"`
	Item         string `json:"item"`
	Molecule     string `json:"molecule"`
	Level        string `json:"level"`
	LevelID      string `json:"level_id"`
	Task         string `json:"task"`
	GeometryFrom string `json:"geometry_from,omitempty"`
	Implied      bool   `json:"implied,omitempty"`
	Outcome      string `json:"outcome"`
	// Status is the record's status (converged, not_converged, failed).
	Status   string `json:"status,omitempty"`
	RecordID string `json:"record_id,omitempty"`
	InputKey string `json:"input_key,omitempty"`
	// WallSeconds is the time this run spent computing and storing the item.
	WallSeconds float64 `json:"wall_seconds,omitempty"`
	// Error says why an item failed, was skipped or did not converge.
	Error string `json:"error,omitempty"`
	// Waits names the item a dry run cannot key yet (its geometry comes from it).
	Waits string `json:"waits_for,omitempty"`
	// Record is the stored record (nil when there is none).
	Record *archive.Record `json:"-"`
}

// Category is the summary bucket of a result: "done", "reused", "failed",
// "not_converged", "skipped" or "pending".
func (r *ItemResult) Category() string {
	switch r.Outcome {
	case Skipped, Pending:
		return r.Outcome
	case WouldCompute:
		return "to_compute"
	case Errored:
		return "failed"
	}
	switch r.Status {
	case engine.StatusConverged:
		if r.Outcome == Reused || r.Outcome == WouldReuse {
			return "reused"
		}
		return "done"
	case engine.StatusNotConverged:
		return "not_converged"
	default:
		return "failed"
	}
}

// Counts are the numbers of items per category.
type Counts struct {
	Total        int `json:"total"`
	Done         int `json:"done"`
	Reused       int `json:"reused"`
	Failed       int `json:"failed"`
	NotConverged int `json:"not_converged"`
	Skipped      int `json:"skipped"`
	Pending      int `json:"pending"`
	// ToCompute is set by a dry run: the items a run would compute.
	ToCompute int `json:"to_compute,omitempty"`
}

func (c *Counts) add(r *ItemResult) {
	switch r.Category() {
	case "done":
		c.Done++
	case "reused":
		c.Reused++
	case "failed":
		c.Failed++
	case "not_converged":
		c.NotConverged++
	case "skipped":
		c.Skipped++
	case "pending":
		c.Pending++
	case "to_compute":
		c.ToCompute++
	}
}

// Summary is the outcome of a run (or a dry run).
type Summary struct {
	Study         string       `json:"study"`
	StudyFile     string       `json:"study_file"`
	Archive       string       `json:"archive"`
	DryRun        bool         `json:"dry_run"`
	Jobs          int          `json:"jobs"`
	ThreadsPerJob int          `json:"threads_per_calculation"`
	Interrupted   bool         `json:"interrupted"`
	WallSeconds   float64      `json:"wall_seconds"`
	Counts        Counts       `json:"counts"`
	Items         []ItemResult `json:"items"`
	// Shard is set when the run covered one shard of the study.
	Shard *Part `json:"shard,omitempty"`
	// ReuseFrom lists the other archives consulted for stored records.
	ReuseFrom []string `json:"reuse_from,omitempty"`
}

// OK reports whether every item has a converged record.
func (s *Summary) OK() bool {
	return s.Counts.Done+s.Counts.Reused == s.Counts.Total
}

// Records returns the stored records of the items, each once, in plan order.
func (s *Summary) Records() []*archive.Record {
	var out []*archive.Record
	seen := map[string]bool{}
	for _, r := range s.Items {
		if r.Record != nil && !seen[r.Record.ID] {
			seen[r.Record.ID] = true
			out = append(out, r.Record)
		}
	}
	return out
}

// Event kinds.
const (
	// EventPlanned: the archive has been consulted; Progress says how much is to compute.
	EventPlanned = "planned"
	// EventStarted: a calculation began (Item is set).
	EventStarted = "started"
	// EventFinished: an item finished, was reused, skipped or failed (Item is set).
	EventFinished = "finished"
	// EventStopping: the context was cancelled; nothing new starts.
	EventStopping = "stopping"
	// EventElsewhere: another process is computing this item's input in
	// the same archive; Run waits for its record (Item is set).
	EventElsewhere = "elsewhere"
)

// Event is a progress report from Run.
type Event struct {
	Kind     string
	Item     *ItemResult
	Progress Progress
}

// Progress counts items during a run.
type Progress struct {
	Total    int
	Finished int
	// ToCompute estimates how many items this run computes (computed so far,
	// running, and those still to start; items whose input is not known yet
	// count as to compute until the archive says otherwise).
	ToCompute int
	// ComputedSoFar is how many calculations have ended.
	ComputedSoFar int
	Running       int
	// Elsewhere counts items another process is computing.
	Elsewhere int
	Counts    Counts
}

// Options control Run.
type Options struct {
	// Archive is the archive directory: records are looked up and stored
	// there.
	Archive string
	// ReuseFrom are further archives, only read: an item whose input one
	// of them holds at this code version is reused (a shard's run reads
	// the study's merged archive this way).
	ReuseFrom []string
	// ClaimPoll is how often Run looks again at items another process is
	// computing in the same archive (0 = one second).
	ClaimPoll time.Duration
	// Jobs is the number of calculations run at once (default 1).
	Jobs int
	// Threads is each calculation's thread count (0 = max(1, cores/Jobs)).
	Threads int
	// Wait bounds waiting for the archive (see archive.OpenOptions.Wait).
	Wait time.Duration
	// Compute computes one job (in moltrail: engine.Run).
	Compute archive.Computer
	// RetryFailed computes again the items whose stored record (at this
	// code version) failed or did not converge; the new record is linked
	// to the old one ("recomputes").
	RetryFailed bool
	// Events receives progress reports, one at a time, from one goroutine.
	Events func(Event)
	// Abandon, when closed after ctx is cancelled, makes Run return
	// without waiting for running calculations (as soon as no record is
	// being written); their results are dropped and they are reported as
	// pending.
	Abandon <-chan struct{}
}

// ThreadsPerJob is the thread count of each calculation: threads when
// positive, else max(1, cores/jobs).
func ThreadsPerJob(jobs, threads int) int {
	if threads > 0 {
		return threads
	}
	if jobs < 1 {
		jobs = 1
	}
	t := runtime.NumCPU() / jobs
	if t < 1 {
		t = 1
	}
	return t
}

const (
	stWaiting = iota
	stReady
	// stElsewhere: ready, but another process holds the item's claim.
	stElsewhere
	stRunning
	stFinished
)

type node struct {
	it      *Item
	dep     *node
	job     *engine.Job
	key     string
	lineage []archive.Link
	prev    *archive.Record
	state   int
	res     ItemResult
	// claim is held while the item is computed by this run.
	claim *archive.Claim
	// said is true once the item was reported as computed elsewhere.
	said bool
}

// newNodes makes the nodes of a plan, each linked to its dependency.
func newNodes(p *Plan) []*node {
	nodes := make([]*node, len(p.Items))
	byItem := make(map[*Item]*node, len(p.Items))
	for i, it := range p.Items {
		nodes[i] = &node{it: it, res: baseResult(it)}
		byItem[it] = nodes[i]
	}
	for _, n := range nodes {
		if n.it.From != nil {
			n.dep = byItem[n.it.From]
		}
	}
	return nodes
}

func baseResult(it *Item) ItemResult {
	r := ItemResult{Index: it.Index, Item: it.Name(), Molecule: it.Molecule.Name, Level: it.Level.Label,
		LevelID: it.Level.ID, Task: it.Task, Implied: it.Implied}
	if it.From != nil {
		r.GeometryFrom = it.From.Level.Label
	}
	return r
}

func usable(n *node) bool {
	return n.res.Record != nil && n.res.Status == engine.StatusConverged
}

// resolve builds the node's job and input key once its dependency (if
// any) has finished with a usable record.
func (n *node) resolve() error {
	var err error
	if n.dep == nil {
		n.job, err = n.it.Job(nil)
	} else {
		g, gerr := GeometryOf(n.dep.res.Record, n.it.Molecule.Mol)
		if gerr != nil {
			return gerr
		}
		n.job, err = n.it.Job(g)
		n.lineage = []archive.Link{{Relation: archive.GeometryFrom, ID: n.dep.res.Record.ID}}
	}
	if err != nil {
		return err
	}
	n.key, err = n.job.InputKey()
	n.res.InputKey = n.key
	return err
}

func (p *Plan) tags() map[string]string {
	t := map[string]string{}
	for k, v := range p.Study.Tags {
		t[k] = v
	}
	if _, ok := t["study"]; !ok {
		t["study"] = p.Study.Name
	}
	return t
}

// lookup returns the stored records (at this code version) of the keys,
// from the first of the archives that holds each (an archive that does
// not exist yet holds nothing).
func lookup(dirs []string, wait time.Duration, keys []string) (map[string]*archive.Record, error) {
	out := map[string]*archive.Record{}
	code := archive.CurrentCode()
	for _, dir := range dirs {
		if len(out) == len(keys) {
			break
		}
		st, err := archive.Open(dir, archive.OpenOptions{ReadOnly: true, Wait: wait})
		if errors.Is(err, archive.ErrNoArchive) {
			continue
		}
		if err != nil {
			return nil, err
		}
		for _, k := range keys {
			if out[k] != nil {
				continue
			}
			r, err := st.FindSameBuild(k, code)
			if err != nil {
				st.Close()
				return nil, err
			}
			if r != nil {
				out[k] = r
			}
		}
		st.Close()
	}
	return out, nil
}

// reusable reports whether a stored record ends the item (a failed one
// does not when failures are retried).
func reusable(r *archive.Record, retryFailed bool) bool {
	return r != nil && (!retryFailed || r.Status == engine.StatusConverged)
}

func store(dir string, wait time.Duration, rec *archive.Record) error {
	st, err := archive.Open(dir, archive.OpenOptions{Wait: wait})
	if err != nil {
		return fmt.Errorf("the calculation finished but could not be stored: %w", err)
	}
	if _, err := st.Put(rec); err != nil {
		st.Close()
		return err
	}
	if err := st.Close(); err != nil {
		return fmt.Errorf("archive %s: closing after the write: %v", dir, err)
	}
	return nil
}

type workDone struct {
	n   *node
	rec *archive.Record
	// stored: rec was found in the archive after the claim was taken
	// (another process computed it meanwhile); nothing was computed.
	stored  bool
	err     error
	seconds float64
}

// Run runs the plan against the archive: items whose input the archive
// holds at this code version are reused, the others are computed on
// o.Jobs workers in dependency order, and each finished calculation is
// stored at once. When ctx is cancelled no new calculation starts; Run
// waits for the running ones (see Options.Abandon) and reports the rest
// as pending. Failed items do not stop the others. The error is non-nil
// only when the run could not start (e.g. the archive cannot be read).
//
// Before computing an item Run claims its input key in the archive (see
// archive.Claim) and looks again whether it is stored; an item claimed by
// another process (a second study on the same archive) is not computed
// here: Run waits for that process's record and reuses it, or computes the
// item itself when that process ends without storing it. So two runs on
// one archive never compute the same input twice.
func Run(ctx context.Context, p *Plan, o Options) (*Summary, error) {
	if o.Compute == nil {
		return nil, fmt.Errorf("study run: no compute function")
	}
	start := time.Now()
	jobs := o.Jobs
	if jobs < 1 {
		jobs = 1
	}
	threads := ThreadsPerJob(jobs, o.Threads)
	tags := p.tags()
	code := archive.CurrentCode()
	nodes := newNodes(p)
	dirs := append([]string{o.Archive}, o.ReuseFrom...)
	poll := o.ClaimPoll
	if poll <= 0 {
		poll = time.Second
	}
	var (
		storeMu   sync.Mutex
		abandoned bool
		doneCh    = make(chan workDone, len(nodes))
		running   int
		computed  int
		stopping  bool
		inflight  = map[string]*node{}
		produced  = map[string]*archive.Record{}
		planned   bool
	)
	progress := func() Progress {
		pr := Progress{Total: len(nodes), Running: running, ComputedSoFar: computed}
		for _, n := range nodes {
			switch n.state {
			case stFinished:
				pr.Finished++
				pr.Counts.add(&n.res)
			case stElsewhere:
				pr.Elsewhere++
				fallthrough
			case stWaiting, stReady:
				if !stopping {
					pr.ToCompute++
				}
			}
		}
		pr.ToCompute += computed + running
		pr.Counts.Total = len(nodes)
		return pr
	}
	emit := func(kind string, r *ItemResult) {
		if o.Events != nil {
			var cp *ItemResult
			if r != nil {
				c := *r
				cp = &c
			}
			o.Events(Event{Kind: kind, Item: cp, Progress: progress()})
		}
	}
	finish := func(n *node, outcome string, rec *archive.Record, msg string) {
		n.state = stFinished
		n.res.Outcome = outcome
		if rec != nil {
			n.res.Record = rec
			n.res.RecordID = rec.ID
			n.res.InputKey = rec.InputKey
			n.res.Status = rec.Status
			if msg == "" && rec.Status != engine.StatusConverged {
				msg = rec.Results.Error
			}
		}
		n.res.Error = msg
		if planned {
			emit(EventFinished, &n.res)
		}
	}
	work := func(n *node) {
		t0 := time.Now()
		defer n.claim.Release()
		// Another process may have stored the item between the look-up
		// and the claim.
		storeMu.Lock()
		found, err := lookup([]string{o.Archive}, o.Wait, []string{n.key})
		storeMu.Unlock()
		if r := found[n.key]; err == nil && reusable(r, o.RetryFailed) {
			doneCh <- workDone{n: n, rec: r, stored: true, seconds: time.Since(t0).Seconds()}
			return
		}
		lineage := append([]archive.Link{}, n.lineage...)
		if n.prev != nil {
			lineage = append(lineage, archive.Link{Relation: archive.Recomputes, ID: n.prev.ID})
		}
		req := archive.RunRequest{Job: n.job, Tags: tags, Lineage: lineage, Threads: threads, Wait: o.Wait}
		rec, err := safeCompute(req, code, lineage, o.Compute)
		if err == nil {
			storeMu.Lock()
			if abandoned {
				storeMu.Unlock()
				return
			}
			err = store(o.Archive, o.Wait, rec)
			storeMu.Unlock()
		}
		doneCh <- workDone{n: n, rec: rec, err: err, seconds: time.Since(t0).Seconds()}
	}

	ctxDone := ctx.Done()
	abandon := o.Abandon
	for {
		// Resolve every waiting item whose dependency has finished and
		// consult the archive for them in one read; repeat while that
		// finishes items (reused optimisations free their dependants).
		for {
			var look []*node
			changed := false
			for _, n := range nodes {
				if n.state != stWaiting || (n.dep != nil && n.dep.state != stFinished) {
					continue
				}
				if n.dep != nil && !usable(n.dep) {
					finish(n, Skipped, nil, "the optimisation it starts from ("+n.dep.res.Item+") has no converged result")
					changed = true
					continue
				}
				if err := n.resolve(); err != nil {
					finish(n, Errored, nil, err.Error())
					changed = true
					continue
				}
				if r := produced[n.key]; r != nil {
					finish(n, Reused, r, "")
					changed = true
					continue
				}
				look = append(look, n)
			}
			if len(look) > 0 {
				keys := make([]string, len(look))
				for i, n := range look {
					keys[i] = n.key
				}
				// Under the store lock: a read-only open would only wait for our own writer.
				storeMu.Lock()
				found, err := lookup(dirs, o.Wait, keys)
				storeMu.Unlock()
				if err != nil && !planned {
					return nil, err
				}
				for _, n := range look {
					switch r := found[n.key]; {
					case err != nil:
						finish(n, Errored, nil, "the archive could not be read: "+err.Error())
					case reusable(r, o.RetryFailed):
						finish(n, Reused, r, "")
					default:
						n.prev = r
						n.state = stReady
					}
				}
				changed = true
			}
			if !changed {
				break
			}
		}
		if !planned {
			planned = true
			emit(EventPlanned, nil)
			for _, n := range nodes {
				if n.state == stFinished {
					emit(EventFinished, &n.res)
				}
			}
		}
		if !stopping && ctx.Err() != nil {
			stopping = true
			ctxDone = nil
			emit(EventStopping, nil)
		}
		for _, n := range nodes {
			if stopping || running >= jobs {
				break
			}
			if n.state != stReady || inflight[n.key] != nil {
				continue
			}
			c, held, err := archive.TryClaim(o.Archive, n.key)
			if err != nil {
				finish(n, Errored, nil, "the item could not be claimed in the archive: "+err.Error())
				continue
			}
			if held {
				n.state = stElsewhere
				if !n.said {
					n.said = true
					emit(EventElsewhere, &n.res)
				}
				continue
			}
			n.claim = c
			n.state = stRunning
			inflight[n.key] = n
			running++
			emit(EventStarted, &n.res)
			go work(n)
		}
		elsewhere := 0
		for _, n := range nodes {
			if n.state == stElsewhere {
				elsewhere++
			}
		}
		if running == 0 && (elsewhere == 0 || stopping) {
			break
		}
		var pollC <-chan time.Time
		if elsewhere > 0 && !stopping {
			pollC = time.After(poll)
		}
		if !stopping {
			abandon = nil
		} else {
			abandon = o.Abandon
		}
		select {
		case d := <-doneCh:
			running--
			computed++
			delete(inflight, d.n.key)
			d.n.res.WallSeconds = d.seconds
			if d.err != nil {
				finish(d.n, Errored, nil, d.err.Error())
				break
			}
			produced[d.n.key] = d.rec
			if d.stored {
				computed--
				finish(d.n, Reused, d.rec, "")
			} else {
				finish(d.n, Computed, d.rec, "")
			}
			// Items with the same input that waited for this one.
			for _, m := range nodes {
				if m.state == stReady && m.key == d.n.key {
					finish(m, Reused, d.rec, "")
				}
			}
		case <-pollC:
			// Try the items other processes hold again: a claim that has
			// been given up (stored, or its process ended) can be taken.
			for _, n := range nodes {
				if n.state == stElsewhere {
					n.state = stReady
				}
			}
		case <-ctxDone:
			stopping = true
			ctxDone = nil
			emit(EventStopping, nil)
		case <-abandon:
			storeMu.Lock()
			abandoned = true
			storeMu.Unlock()
			// A result that arrived meanwhile was stored: account for it.
			for {
				select {
				case d := <-doneCh:
					running--
					computed++
					d.n.res.WallSeconds = d.seconds
					switch {
					case d.err != nil:
						finish(d.n, Errored, nil, d.err.Error())
					case d.stored:
						finish(d.n, Reused, d.rec, "")
					default:
						finish(d.n, Computed, d.rec, "")
					}
					continue
				default:
				}
				break
			}
			running = 0
		}
		if running == 0 && abandoned {
			break
		}
	}
	sum := &Summary{Study: p.Study.Name, StudyFile: p.Study.Origin, Archive: o.Archive, Jobs: jobs, ThreadsPerJob: threads,
		Shard: p.Part, ReuseFrom: o.ReuseFrom}
	for _, n := range nodes {
		if n.state != stFinished {
			n.res.Outcome = Pending
			n.res.Error = ""
			sum.Interrupted = true
		}
		sum.Counts.add(&n.res)
		sum.Items = append(sum.Items, n.res)
	}
	sum.Counts.Total = len(nodes)
	sum.WallSeconds = time.Since(start).Seconds()
	return sum, nil
}

// safeCompute runs archive.Compute, turning a panic inside the engine into
// a failed calculation instead of a crash of the whole study.
func safeCompute(req archive.RunRequest, code archive.Code, lineage []archive.Link, compute archive.Computer) (rec *archive.Record, err error) {
	wrapped := func(job *engine.Job, threads int, w io.Writer) (res *engine.Result, cerr error) {
		defer func() {
			if r := recover(); r != nil {
				res, cerr = nil, fmt.Errorf("internal error in the engine (please report it): %v", r)
			}
		}()
		return compute(job, threads, w)
	}
	return archive.Compute(req, code, lineage, wrapped)
}

// DryRun says, for each item, whether Run would reuse a stored record or
// compute it. An item whose geometry comes from an optimisation that is
// not stored yet cannot be keyed: it is listed as to compute, waiting for
// that optimisation.
func DryRun(p *Plan, o Options) (*Summary, error) {
	start := time.Now()
	jobs := o.Jobs
	if jobs < 1 {
		jobs = 1
	}
	nodes := newNodes(p)
	for pass := 0; pass < 2; pass++ {
		var look []*node
		for _, n := range nodes {
			if n.state != stWaiting {
				continue
			}
			if n.dep != nil {
				if n.dep.state != stFinished {
					continue
				}
				if n.dep.res.Record == nil || n.dep.res.Status != engine.StatusConverged {
					n.state = stFinished
					n.res.Outcome = WouldCompute
					n.res.Waits = n.dep.res.Item
					continue
				}
			}
			if err := n.resolve(); err != nil {
				return nil, err
			}
			look = append(look, n)
		}
		keys := make([]string, len(look))
		for i, n := range look {
			keys[i] = n.key
		}
		found, err := lookup(append([]string{o.Archive}, o.ReuseFrom...), o.Wait, keys)
		if err != nil {
			return nil, err
		}
		for _, n := range look {
			n.state = stFinished
			r := found[n.key]
			if reusable(r, o.RetryFailed) {
				n.res.Outcome = WouldReuse
				n.res.Record, n.res.RecordID, n.res.Status = r, r.ID, r.Status
				n.res.Error = ""
				if r.Status != engine.StatusConverged {
					n.res.Error = r.Results.Error
				}
				continue
			}
			n.res.Outcome = WouldCompute
		}
	}
	sum := &Summary{Study: p.Study.Name, StudyFile: p.Study.Origin, Archive: o.Archive, DryRun: true,
		Jobs: jobs, ThreadsPerJob: ThreadsPerJob(jobs, o.Threads), Shard: p.Part, ReuseFrom: o.ReuseFrom}
	for _, n := range nodes {
		sum.Counts.add(&n.res)
		sum.Items = append(sum.Items, n.res)
	}
	sum.Counts.Total = len(nodes)
	sum.WallSeconds = time.Since(start).Seconds()
	return sum, nil
}
