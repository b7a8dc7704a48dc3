package main

import (
	"bytes"
	"context"
	"flag"
	"fmt"
	"io"
	"os"
	"os/signal"
	"reflect"
	"runtime"
	"sort"
	"strings"
	"sync"
	"syscall"
	"time"

	"github.com/schollz/progressbar/v3"
	"golang.org/x/term"

	"moltrail/archive"
	"moltrail/archive/study"
	"moltrail/compare"
	"moltrail/engine"
	"moltrail/report"
)

func init() {
	register(Command{Name: "study", Summary: "run a matrix of molecules × levels from a study file; resumable, computes only what the archive lacks", Run: cmdStudy})
}

const studyHelp = `Runs every calculation a study file describes (molecules × levels × tasks;
layout: schemas/study.schema.json) and stores each in the archive as soon as
it finishes. What the archive already holds (same input key, same code
version) is reused, never recomputed, so an interrupted study — Ctrl-C,
a killed process, a lost machine — is finished by running the same command
again, and a level added to the file later runs only the new items.

Cores: --jobs N calculations run at once, each with max(1, cores/N)
threads (--threads overrides); thread counts never change a number.
Memory: each calculation may use the study's memory_limit (--memory-limit
overrides), by default half the available memory divided by N; the limit
never changes a number either.
Ctrl-C once: no new calculation starts, the running ones finish and are
stored. Ctrl-C twice: the running ones are abandoned (nothing half-stored).

Several runs may share one archive (two terminals, a resubmitted shard):
each input is claimed in the archive before it is computed, and a run that
finds an item claimed waits for the other's record instead of computing it
again. A claim ends with its process, however that process ends.

Shards: --shard K/N runs only shard K of N. The split depends on the study
file alone, so separate machines agree on it without talking; an
optimisation and every single point on its geometry land in the same shard,
so no shard waits for another; shards differ in size by at most one such
group. Give each shard its own --archive, let --reuse-from name the study's
archive (read only), and bring the shard archives together with moltrail
merge. A shard run writes no report (report.output is not used); run the
study with --report on the merged archive (it reuses every item).
moltrail cluster does all of this on Slurm.

Exit status: 0 every item has a converged record, 1 anything failed, did
not converge, was skipped or is still to do, 2 bad usage or a bad study file.
`

// studyRun holds how a study is run and reported.
type studyRun struct {
	cmd       string
	archive   string
	wait      time.Duration
	jobs      int
	threads   int
	memory    int64 // per calculation; 0 = the engine's default over jobs
	retry     bool
	reuse     []string
	reportOut string
	refs      string
	reportOps report.Options
}

func cmdStudy(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("study", stderr, "[flags] FILE.json\n\n"+studyHelp)
	af := addArchiveFlags(fs)
	jobs := addJobsFlag(fs)
	threads := fs.Int("threads", 0, "threads per calculation (0 = max(1, cores/jobs)); never changes a number")
	dry := fs.Bool("dry-run", false, "list what would be computed and what would be reused; compute nothing")
	asJSON := fs.Bool("json", false, "print one JSON summary on stdout")
	reportOut := fs.String("report", "", "after the run, write the supplementary-information PDF `FILE` over exactly the study's records (overrides the study's report.output)")
	refs := fs.String("refs", "", "reference `SET` for --report: builtin, a built-in set name ("+strings.Join(compare.BuiltinNames(), ", ")+") or a file (default: the study's reference_set, else builtin)")
	retry := fs.Bool("retry-failed", false, "compute again the items whose stored record failed or did not converge")
	memFlag := addMemoryFlag(fs)
	shard := fs.String("shard", "", "run only shard `K/N` of the study (see above)")
	var reuse multiFlag
	fs.Var(&reuse, "reuse-from", "also reuse records stored in this archive `DIRECTORY` (read only; repeatable)")
	pos, code, ok := parseFlags(fs, args)
	if !ok {
		return code
	}
	if len(pos) != 1 {
		fmt.Fprintln(stderr, "moltrail study: give exactly one study file (JSON)")
		return exitUsage
	}
	if *jobs < 1 || *jobs > 256 {
		fmt.Fprintf(stderr, "moltrail study: --jobs %d is outside 1–256\n", *jobs)
		return exitUsage
	}
	if *threads < 0 {
		fmt.Fprintf(stderr, "moltrail study: --threads %d is negative\n", *threads)
		return exitUsage
	}
	memBytes, err := memoryLimit(*memFlag)
	if err != nil {
		return fail(stderr, exitUsage, "study", err)
	}
	st, err := study.Load(pos[0])
	if err != nil {
		return fail(stderr, exitUsage, "study", err)
	}
	for _, m := range st.Molecules() {
		for _, n := range m.Notes {
			fmt.Fprintf(stderr, "moltrail study: molecule %s: %s\n", m.Name, n)
		}
	}
	if memBytes == 0 {
		memBytes = st.MemoryLimitBytes
	}
	plan, err := st.Plan()
	if err != nil {
		return fail(stderr, exitUsage, "study", err)
	}
	if *shard != "" {
		part, err := study.ParsePart(*shard)
		if err != nil {
			return fail(stderr, exitUsage, "study", fmt.Errorf("--%v", err))
		}
		if *reportOut != "" {
			fmt.Fprintln(stderr, "moltrail study: --report covers the whole study; run it after merging the shards, not with --shard")
			return exitUsage
		}
		if plan, err = plan.Shard(part); err != nil {
			return fail(stderr, exitUsage, "study", err)
		}
	}
	r := studyRun{cmd: "study", archive: af.path(), wait: af.waitOrNone(), jobs: *jobs, threads: *threads, memory: memBytes, retry: *retry, reuse: reuse}
	r.refs = *refs
	if r.refs == "" {
		r.refs = studyRefs(st)
	}
	r.reportOut = *reportOut
	if r.reportOut == "" && st.Report != nil && st.Report.Output != "" && plan.Part == nil {
		r.reportOut = st.ResolvePath(st.Report.Output)
	}
	if st.Report != nil {
		r.reportOps = report.Options{Title: st.Report.Title, Author: st.Report.Author, Affiliation: st.Report.Affiliation, Date: st.Report.Date}
	}
	if *dry {
		return studyDryRun(plan, r, *asJSON, stdout, stderr)
	}
	if r.reportOut != "" {
		if err := checkOutPath(r.reportOut); err != nil {
			return fail(stderr, exitUsage, "study", fmt.Errorf("report %s: %v", r.reportOut, err))
		}
		if _, err := compare.LoadRefSet(r.refs); err != nil {
			return fail(stderr, exitUsage, "study", err)
		}
	}
	if _, err := archive.UserKey(); err != nil {
		return fail(stderr, exitFailed, "study", fmt.Errorf("%v; nothing was computed", err))
	}
	sum, code := runStudy(plan, r, stderr)
	if sum == nil {
		return code
	}
	out := studyJSON{Summary: sum}
	if r.reportOut != "" {
		_, info, err := studyReport(plan, sum, r, stderr)
		if err != nil {
			fmt.Fprintf(stderr, "moltrail study: the report was not written: %v\n", err)
			code = exitFailed
		} else {
			out.Report = info
		}
	}
	if *asJSON {
		if err := printJSON(stdout, out); err != nil {
			return fail(stderr, exitFailed, "study", err)
		}
	} else {
		writeStudySummary(stdout, sum)
		if out.Report != nil {
			fmt.Fprintf(stdout, "report: wrote %s (%d bytes): %d records, %d deviations (%d with a caution); fingerprint %s\n",
				out.Report.Out, out.Report.Bytes, out.Report.Records, out.Report.Deviations, out.Report.Flagged, out.Report.Fingerprint)
		}
	}
	if !sum.OK() {
		code = exitFailed
	}
	return code
}

// addJobsFlag is the --jobs flag of study and demo: one default for both,
// a calculation per core.
func addJobsFlag(fs *flag.FlagSet) *int {
	return fs.Int("jobs", runtime.NumCPU(), "calculations run at once (one per core unless given); each gets max(1, cores/jobs) threads")
}

// studyRefs is the study's reference set argument: a built-in name as
// written, a file resolved against the study's directory.
func studyRefs(st *study.Study) string {
	r := st.ReferenceSet
	if r == "" {
		return "builtin"
	}
	n := strings.ToLower(r)
	if n == "builtin" || n == "all" {
		return r
	}
	for _, b := range compare.BuiltinNames() {
		if n == b {
			return r
		}
	}
	return st.ResolvePath(r)
}

// studyJSON is the --json output of study and demo.
type studyJSON struct {
	*study.Summary
	Report *studyReportInfo `json:"report,omitempty"`
}

type studyReportInfo struct {
	Out         string `json:"out"`
	Bytes       int    `json:"bytes"`
	Fingerprint string `json:"fingerprint_sha256"`
	Records     int    `json:"records"`
	Deviations  int    `json:"deviations"`
	Flagged     int    `json:"flagged_deviations"`
	RefSet      string `json:"reference_set"`
}

// runStudy runs the plan with signal handling and progress on stderr. A
// nil summary means the run could not start (code says why).
func runStudy(plan *study.Plan, r studyRun, stderr io.Writer) (*study.Summary, int) {
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	abandon := make(chan struct{})
	sig := make(chan os.Signal, 2)
	signal.Notify(sig, os.Interrupt, syscall.SIGTERM)
	finished := make(chan struct{})
	defer func() { signal.Stop(sig); close(finished) }()
	pr := newStudyProgress(stderr, r.cmd)
	go func() {
		n := 0
		for {
			select {
			case <-sig:
				n++
				if n == 1 {
					pr.say("interrupted: no new calculation starts; the running ones finish and are stored (Ctrl-C again to abandon them)")
					cancel()
				} else {
					pr.say("abandoning the running calculations; everything already stored stays stored")
					close(abandon)
					return
				}
			case <-finished:
				return
			}
		}
	}()
	sum, err := study.Run(ctx, plan, study.Options{Archive: r.archive, ReuseFrom: r.reuse, Jobs: r.jobs, Threads: r.threads, Wait: r.wait,
		Compute: engineComputer(r.memoryPerCalculation()), RetryFailed: r.retry, Events: pr.event, Abandon: abandon})
	pr.close()
	if err != nil {
		return nil, fail(stderr, exitFailed, r.cmd, err)
	}
	if sum.Interrupted {
		fmt.Fprintf(stderr, "moltrail %s: stopped with %d items still to do; run the same command again to finish them (nothing stored is computed again)\n", r.cmd, sum.Counts.Pending)
	}
	return sum, exitOK
}

// memoryPerCalculation is the memory limit of each calculation: the one
// given, else the engine's default shared among the jobs run at once.
func (r studyRun) memoryPerCalculation() int64 {
	if r.memory > 0 {
		return r.memory
	}
	return max(engine.DefaultMemoryLimitBytes()/int64(max(r.jobs, 1)), engine.MinMemoryLimitBytes)
}

// studyProgress shows a run's progress: a bar on a terminal, one line per
// finished item otherwise.
type studyProgress struct {
	mu     sync.Mutex
	w      io.Writer
	cmd    string
	tty    bool
	bar    *progressbar.ProgressBar
	max    int
	total  int
	stop   chan struct{}
	counts study.Counts
	run    int
}

// isTerminal reports whether w is (or wraps, as an embedded Writer) a terminal.
func isTerminal(w io.Writer) bool {
	if f, ok := w.(*os.File); ok {
		return term.IsTerminal(int(f.Fd()))
	}
	v := reflect.ValueOf(w)
	if v.Kind() == reflect.Pointer && !v.IsNil() && v.Elem().Kind() == reflect.Struct {
		if f := v.Elem().FieldByName("Writer"); f.IsValid() && f.CanInterface() {
			if inner, ok := f.Interface().(io.Writer); ok && inner != w {
				return isTerminal(inner)
			}
		}
	}
	return false
}

func newStudyProgress(w io.Writer, cmd string) *studyProgress {
	return &studyProgress{w: w, cmd: cmd, tty: isTerminal(w), stop: make(chan struct{})}
}

// say prints a remark, above the bar if there is one.
func (p *studyProgress) say(msg string) {
	p.mu.Lock()
	defer p.mu.Unlock()
	if p.bar != nil {
		p.bar.Clear()
	}
	fmt.Fprintf(p.w, "moltrail %s: %s\n", p.cmd, msg)
	if p.bar != nil {
		p.bar.RenderBlank()
	}
}

func (p *studyProgress) describe() string {
	c := p.counts
	s := fmt.Sprintf("done %d · reused %d · running %d", c.Done, c.Reused, p.run)
	if n := c.Failed + c.NotConverged + c.Skipped; n > 0 {
		s += fmt.Sprintf(" · problems %d", n)
	}
	return s
}

func (p *studyProgress) event(e study.Event) {
	p.mu.Lock()
	defer p.mu.Unlock()
	p.counts, p.run, p.total = e.Progress.Counts, e.Progress.Running, e.Progress.Total
	switch e.Kind {
	case study.EventPlanned:
		stored := e.Progress.Counts.Done + e.Progress.Counts.Reused + e.Progress.Counts.Failed + e.Progress.Counts.NotConverged
		fmt.Fprintf(p.w, "moltrail %s: %d items: %d already stored, %d to compute or waiting for a geometry\n", p.cmd, e.Progress.Total, stored, e.Progress.ToCompute)
		if p.tty && e.Progress.ToCompute > 0 {
			p.max = e.Progress.ToCompute
			p.bar = progressbar.NewOptions(p.max, progressbar.OptionSetWriter(p.w), progressbar.OptionShowCount(),
				progressbar.OptionSetPredictTime(true), progressbar.OptionSetElapsedTime(true), progressbar.OptionSetWidth(24),
				progressbar.OptionSetDescription(p.describe()), progressbar.OptionThrottle(200*time.Millisecond),
				progressbar.OptionSetTheme(progressbar.Theme{Saucer: "#", SaucerPadding: ".", BarStart: "|", BarEnd: "|"}))
			p.bar.RenderBlank()
			go p.tick()
		}
	case study.EventStarted:
		if p.bar != nil {
			p.bar.Describe(p.describe())
		}
	case study.EventFinished:
		it := e.Item
		if p.bar == nil {
			if it.Outcome == study.Reused && it.Category() == "reused" && e.Progress.ComputedSoFar == 0 && e.Progress.Running == 0 {
				// Reused before anything ran: counted in the first line already.
				return
			}
			fmt.Fprintln(p.w, itemLine(it, e.Progress.Finished, e.Progress.Total))
			return
		}
		if c := it.Category(); c != "done" && c != "reused" {
			p.bar.Clear()
			fmt.Fprintln(p.w, itemLine(it, e.Progress.Finished, e.Progress.Total))
		}
		if e.Progress.ToCompute != p.max && e.Progress.ToCompute > 0 {
			p.max = e.Progress.ToCompute
			p.bar.ChangeMax(p.max)
		}
		p.bar.Set(e.Progress.ComputedSoFar)
		p.bar.Describe(p.describe())
	case study.EventStopping:
		if p.bar != nil {
			p.bar.Describe(p.describe() + " · stopping")
		}
	case study.EventElsewhere:
		msg := e.Item.Item + ": another process is computing it in this archive; waiting for its record"
		if p.bar != nil {
			p.bar.Clear()
			fmt.Fprintf(p.w, "moltrail %s: %s\n", p.cmd, msg)
			p.bar.RenderBlank()
		} else {
			fmt.Fprintf(p.w, "moltrail %s: %s\n", p.cmd, msg)
		}
	}
}

// tick refreshes the bar's clock while long calculations run.
func (p *studyProgress) tick() {
	t := time.NewTicker(time.Second)
	defer t.Stop()
	for {
		select {
		case <-t.C:
			p.mu.Lock()
			if p.bar != nil {
				p.bar.Describe(p.describe())
			}
			p.mu.Unlock()
		case <-p.stop:
			return
		}
	}
}

func (p *studyProgress) close() {
	p.mu.Lock()
	defer p.mu.Unlock()
	close(p.stop)
	if p.bar != nil {
		p.bar.Describe(p.describe())
		p.bar.Exit()
		fmt.Fprintln(p.w)
		p.bar = nil
	}
}

// itemLine is the one-line account of a finished item.
func itemLine(it *study.ItemResult, n, total int) string {
	w := len(fmt.Sprint(total))
	cat := it.Category()
	word := map[string]string{"done": "done", "reused": "reused", "failed": "FAILED", "not_converged": "NOT CONVERGED", "skipped": "skipped", "pending": "pending"}[cat]
	s := fmt.Sprintf("(%*d/%d) %-8s %s", w, n, total, word, it.Item)
	if it.WallSeconds > 0 {
		s += fmt.Sprintf("  %.1f s", it.WallSeconds)
	}
	if it.RecordID != "" {
		s += "  record " + it.RecordID[:12]
	}
	if it.Error != "" && cat != "done" && cat != "reused" {
		s += ": " + it.Error
	}
	return s
}

// writeStudySummary prints the closing summary.
func writeStudySummary(w io.Writer, s *study.Summary) {
	c := s.Counts
	fmt.Fprintf(w, "study %q%s: %d items: %d done, %d reused, %d failed, %d not converged", s.Study, shardText(s.Shard), c.Total, c.Done, c.Reused, c.Failed, c.NotConverged)
	if c.Skipped > 0 {
		fmt.Fprintf(w, ", %d skipped", c.Skipped)
	}
	if c.Pending > 0 {
		fmt.Fprintf(w, ", %d still to do", c.Pending)
	}
	fmt.Fprintf(w, "  (%d job%s × %d thread%s, %s)\n", s.Jobs, plural(s.Jobs), s.ThreadsPerJob, plural(s.ThreadsPerJob), roundDur(s.WallSeconds))
	for i := range s.Items {
		it := &s.Items[i]
		switch it.Category() {
		case "failed", "not_converged", "skipped":
			fmt.Fprintf(w, "  %-13s %s: %s\n", strings.ReplaceAll(it.Category(), "_", " "), it.Item, it.Error)
		}
	}
}

// shardText is " shard K/N" for a shard's run, else "".
func shardText(p *study.Part) string {
	if p == nil {
		return ""
	}
	return " shard " + p.String()
}

func plural(n int) string {
	if n == 1 {
		return ""
	}
	return "s"
}

func roundDur(sec float64) string {
	d := time.Duration(sec * float64(time.Second))
	switch {
	case d < 10*time.Second:
		return d.Round(100 * time.Millisecond).String()
	default:
		return d.Round(time.Second).String()
	}
}

func studyDryRun(plan *study.Plan, r studyRun, asJSON bool, stdout, stderr io.Writer) int {
	sum, err := study.DryRun(plan, study.Options{Archive: r.archive, ReuseFrom: r.reuse, Jobs: r.jobs, Threads: r.threads, Wait: r.wait, RetryFailed: r.retry})
	if err != nil {
		return fail(stderr, exitFailed, r.cmd, err)
	}
	if asJSON {
		if err := printJSON(stdout, studyJSON{Summary: sum}); err != nil {
			return fail(stderr, exitFailed, r.cmd, err)
		}
		return exitOK
	}
	t := table{head: []string{"#", "plan", "molecule", "level", "task", "geometry from", "stored record"}}
	for i := range sum.Items {
		it := &sum.Items[i]
		plan := "compute"
		rec := ""
		if it.Outcome == study.WouldReuse {
			plan = "reuse"
			rec = it.RecordID[:12]
			if it.Status != "converged" {
				rec += " (" + strings.ReplaceAll(it.Status, "_", " ") + ")"
			}
		}
		if it.Waits != "" {
			plan = "compute after"
			rec = "waits for " + it.Waits
		}
		from := it.GeometryFrom
		if from == "" {
			from = "as given"
		}
		task := it.Task
		if it.Implied {
			task += " (needed)"
		}
		t.add(fmt.Sprint(it.Index+1), plan, it.Molecule, it.Level, task, from, rec)
	}
	t.write(stdout)
	fmt.Fprintf(stdout, "study %q%s: %d items: %d to compute, %d stored already; %d job%s × %d thread%s; archive %s\n",
		sum.Study, shardText(sum.Shard), sum.Counts.Total, sum.Counts.ToCompute, sum.Counts.Total-sum.Counts.ToCompute,
		sum.Jobs, plural(sum.Jobs), sum.ThreadsPerJob, plural(sum.ThreadsPerJob), r.archive)
	return exitOK
}

// studyReport compares exactly the study's records with the reference set
// and writes the document when r.reportOut is set.
func studyReport(plan *study.Plan, sum *study.Summary, r studyRun, stderr io.Writer) (*compare.Table, *studyReportInfo, error) {
	set, err := compare.LoadRefSet(r.refs)
	if err != nil {
		return nil, nil, err
	}
	var recs []*archive.Record
	for _, rec := range sum.Records() {
		if set.Names(rec.Input.Molecule.Name) {
			recs = append(recs, rec)
		}
	}
	// A fixed order (by id) so the document does not depend on which
	// worker finished first.
	sort.Slice(recs, func(i, j int) bool { return recs[i].ID < recs[j].ID })
	tab, err := compare.Compare(set, recs, compare.Options{})
	if err != nil {
		return nil, nil, err
	}
	if r.reportOut == "" {
		return tab, nil, nil
	}
	chosen := recordsUsed(tab, recs)
	opts := r.reportOps
	opts.Selection = append(opts.Selection, "study="+plan.Study.Name, "study_file="+plan.Study.Origin, fmt.Sprintf("study_items=%d", len(plan.Items)))
	if opts.Title == "" {
		opts.Title = plan.Study.Name
	}
	var buf bytes.Buffer
	if err := report.PDF(&buf, tab, chosen, opts); err != nil {
		return nil, nil, err
	}
	if err := writeFileAtomic(r.reportOut, buf.Bytes()); err != nil {
		return nil, nil, fmt.Errorf("%s: %v", r.reportOut, err)
	}
	return tab, &studyReportInfo{Out: r.reportOut, Bytes: buf.Len(), Fingerprint: report.Fingerprint(tab, chosen, opts),
		Records: len(chosen), Deviations: len(tab.Deviations), Flagged: tab.Flagged(), RefSet: tab.RefSet.Name}, nil
}
