package archive

import (
	"errors"
	"fmt"
	"io"
	"os"
	"runtime"
	"strings"
	"time"

	"moltrail/engine"
	"moltrail/engine/molecule"
)

// Computer computes a job (in moltrail: engine.Run). The archive calls it
// without holding the store open, so other processes can read and write
// while a calculation runs.
type Computer func(job *engine.Job, threads int, progress io.Writer) (*engine.Result, error)

// RunRequest is one calculation to run and store.
type RunRequest struct {
	Job     *engine.Job
	Tags    map[string]string
	Lineage []Link
	// Force computes even when the archive holds this input at this code version.
	Force bool
	// Threads for the computation (0 = all cores); recorded in run.threads.
	Threads int
	// Wait bounds waiting for the archive (see OpenOptions.Wait).
	Wait time.Duration
	// Log receives progress and remarks (nil = silent).
	Log io.Writer
	// Key signs the record (nil: the user's key, see UserKey).
	Key *SigningKey
}

// RunOutcome is what RunAndStore did.
type RunOutcome struct {
	Record *Record
	// Cached: the record was already stored and nothing was computed.
	Cached bool
	// Recomputed is the stored record a forced run was linked to, if any.
	Recomputed *Record
	// Reason says in a phrase why a stored record was or was not reused.
	Reason string
}

// FindSameBuild returns the newest stored record of this input key made by
// the same code version (see Code.SameBuild) that may be reused (see
// Store.Reusable), or nil.
func (s *Store) FindSameBuild(inputKey string, code Code) (*Record, error) {
	r, _, err := s.FindReuse(inputKey, code)
	return r, err
}

// FindReuse is FindSameBuild with the reason in a phrase: why the record
// found may stand for a computation by code, or why none may (no record of
// the input, or what sets the newest one apart from code).
func (s *Store) FindReuse(inputKey string, code Code) (*Record, string, error) {
	sums, err := s.ByInputKey(inputKey)
	if err != nil {
		return nil, "", err
	}
	if len(sums) == 0 {
		return nil, "the archive holds no record of this input", nil
	}
	var newest string
	for i := len(sums) - 1; i >= 0; i-- {
		r, _, err := s.Get(sums[i].ID)
		if err != nil {
			return nil, "", err
		}
		ok, why := r.Code.Match(code)
		if ok {
			same := why
			if ok, why, err = s.Reusable(r, time.Now()); err != nil {
				return nil, "", err
			}
			if ok {
				return r, fmt.Sprintf("record %s holds this input and was made by this code: %s", short(r.ID), same), nil
			}
		}
		if newest == "" {
			newest = fmt.Sprintf("record %s: %s", short(r.ID), why)
		}
	}
	return nil, fmt.Sprintf("the archive holds %d record(s) of this input, none made by this code (newest, %s)", len(sums), newest), nil
}

// FutureSlack is how far a record's start time may lie ahead of this
// machine's clock (clocks of different machines differ a little) before
// the record counts as dated in the future.
const FutureSlack = 5 * time.Minute

// InFuture reports whether a record's start time lies more than
// FutureSlack after now.
func (r *Record) InFuture(now time.Time) bool {
	t, err := time.Parse(time.RFC3339Nano, r.Run.StartUTC)
	return err == nil && t.After(now.Add(FutureSlack))
}

// Reusable reports whether a stored record may stand in for a new
// calculation of its input: its hashes match, it is signed by a key the
// archive trusts (Store.Trust), and it is not dated in the future. An
// unsigned record, or one signed by a key the archive does not trust, is
// never reused: its input is computed again. why says, in a phrase, what
// keeps a record from being reused.
func (s *Store) Reusable(r *Record, now time.Time) (ok bool, why string, err error) {
	trust, err := s.Trust()
	if err != nil {
		return false, "", err
	}
	if err := r.Check(); err != nil {
		return false, "its hashes do not match its content", nil
	}
	if r.InFuture(now) {
		return false, "it is dated in the future (" + r.Run.StartUTC + ")", nil
	}
	switch c := trust.Check(r); c.State {
	case SigTrusted:
		return true, "", nil
	case SigUnsigned:
		return false, "it is unsigned (written before records were signed), so it is not reused", nil
	case SigUntrusted:
		return false, "it is signed by key " + c.Fingerprint + ", which this archive does not trust", nil
	default:
		return false, "its signature does not match its content", nil
	}
}

// RunAndStore runs one job and stores its record in the archive at dir:
// when the archive already holds the input at the running code version
// and Force is false, it returns that record without computing. Otherwise
// it computes (with the archive closed), builds and seals the record —
// failed and not-converged runs included — and stores it, linking a
// forced recomputation to the record it repeats.
func RunAndStore(dir string, req RunRequest, compute Computer) (*RunOutcome, error) {
	key, err := req.Job.InputKey()
	if err != nil {
		return nil, err
	}
	if req.Key == nil {
		if req.Key, err = UserKey(); err != nil {
			return nil, err
		}
	}
	if err := CheckTags(req.Tags); err != nil {
		return nil, err
	}
	// A place that cannot take the record is refused before computing.
	if err := checkDir(dir, false); err != nil {
		return nil, err
	}
	code := CurrentCode()
	out := &RunOutcome{}
	lineage := append([]Link{}, req.Lineage...)
	if st, err := Open(dir, OpenOptions{ReadOnly: true, Wait: req.Wait, Log: req.Log}); err == nil {
		prev, why, ferr := st.FindReuse(key, code)
		st.Close()
		if ferr != nil {
			return nil, ferr
		}
		out.Reason = why
		if prev != nil && !req.Force {
			out.Record, out.Cached = prev, true
			return out, nil
		}
		if prev != nil {
			out.Recomputed = prev
			lineage = append(lineage, Link{Relation: Recomputes, ID: prev.ID})
		}
	} else if !errors.Is(err, ErrNoArchive) {
		return nil, err
	} else {
		out.Reason = "the archive holds no record of this input"
	}
	rec, err := Compute(req, code, lineage, compute)
	if err != nil {
		return nil, err
	}
	st, err := Open(dir, OpenOptions{Wait: req.Wait, Log: req.Log})
	if err != nil {
		return nil, fmt.Errorf("the calculation finished but could not be stored: %w", err)
	}
	defer st.Close()
	if _, err := st.Put(rec); err != nil {
		return nil, err
	}
	if err := st.Close(); err != nil {
		return nil, fmt.Errorf("archive %s: closing after the write: %v", dir, err)
	}
	out.Record = rec
	return out, nil
}

// Compute runs the job and returns the sealed and signed record (not
// stored). The signing key and the tags are checked before computing.
func Compute(req RunRequest, code Code, lineage []Link, compute Computer) (*Record, error) {
	key := req.Key
	if key == nil {
		var err error
		if key, err = UserKey(); err != nil {
			return nil, err
		}
	}
	if err := CheckTags(req.Tags); err != nil {
		return nil, err
	}
	threads := req.Threads
	if threads <= 0 {
		threads = runtime.NumCPU()
	}
	start := time.Now().UTC()
	res, cerr := compute(req.Job, req.Threads, req.Log)
	end := time.Now().UTC()
	host, _ := os.Hostname()
	rec := &Record{
		Input:   *req.Job,
		Code:    code,
		Lineage: lineage,
		Tags:    map[string]string{},
		Run: Run{StartUTC: start.Format(time.RFC3339Nano), EndUTC: end.Format(time.RFC3339Nano),
			WallSeconds: end.Sub(start).Seconds(), Host: host, Threads: threads, PeakMemoryMB: peakMemoryMiB(),
			Batch: BatchJobFromEnv(os.Getenv)},
	}
	for k, v := range req.Tags {
		rec.Tags[k] = v
	}
	switch {
	case cerr != nil:
		rec.Results = failedResult(req.Job, cerr.Error())
	case res == nil:
		rec.Results = failedResult(req.Job, "the engine returned no result")
	default:
		rec.Results = *res
		switch res.Status {
		case engine.StatusConverged, engine.StatusNotConverged, engine.StatusFailed:
		default:
			rec.Results.Status = engine.StatusFailed
			rec.Results.Error = fmt.Sprintf("the engine returned the unknown status %q", res.Status)
		}
		if rec.Results.GeometryAngstrom == nil {
			rec.Results.GeometryAngstrom = inputGeometry(req.Job)
		}
	}
	rec.Status = rec.Results.Status
	if err := rec.Seal(); err != nil {
		// A result that cannot be encoded (a non-finite number) is kept as a failure.
		rec.Results = failedResult(req.Job, "the results could not be stored: "+err.Error())
		rec.Status = rec.Results.Status
		if err := rec.Seal(); err != nil {
			return nil, err
		}
	}
	if err := key.Sign(rec); err != nil {
		return nil, err
	}
	return rec, nil
}

// BatchJobFromEnv describes the Slurm job this process runs in, read from
// the variables Slurm sets (SLURM_JOB_ID, SLURM_ARRAY_JOB_ID,
// SLURM_ARRAY_TASK_ID, SLURMD_NODENAME), or nil outside a Slurm job.
func BatchJobFromEnv(getenv func(string) string) *BatchJob {
	id := strings.TrimSpace(getenv("SLURM_JOB_ID"))
	if id == "" {
		return nil
	}
	return &BatchJob{Scheduler: "slurm", JobID: id, ArrayJobID: strings.TrimSpace(getenv("SLURM_ARRAY_JOB_ID")),
		ArrayTaskID: strings.TrimSpace(getenv("SLURM_ARRAY_TASK_ID")), Node: strings.TrimSpace(getenv("SLURMD_NODENAME"))}
}

func failedResult(job *engine.Job, msg string) engine.Result {
	return engine.Result{Status: engine.StatusFailed, Error: msg, GeometryAngstrom: inputGeometry(job)}
}

func inputGeometry(job *engine.Job) []engine.GeomAtom {
	g := []engine.GeomAtom{}
	for _, a := range job.Molecule.Atoms {
		g = append(g, engine.GeomAtom{Symbol: a.Symbol, XYZ: [3]float64{
			a.Bohr[0] * molecule.BohrAngstrom, a.Bohr[1] * molecule.BohrAngstrom, a.Bohr[2] * molecule.BohrAngstrom}})
	}
	return g
}
