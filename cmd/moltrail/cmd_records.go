package main

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"strings"
	"time"

	"moltrail/archive"
)

func init() {
	register(Command{Name: "list", Summary: "stored records, one line each, or a molecule × level overview (filters: molecule, formula, method, basis, task, tag, status, time)", Run: cmdList})
	register(Command{Name: "show", Summary: "one record, whole (ID or a unique prefix)", Run: cmdShow})
	register(Command{Name: "verify", Summary: "check every record, index entry and signature; names each record that is lost, altered or signed by an untrusted key", Run: cmdVerify})
	register(Command{Name: "export", Summary: "write records (all or filtered) and their notes as JSON lines", Run: cmdExport})
	register(Command{Name: "import", Summary: "read JSON-lines records and notes: checked as run would, hash- and signature-checked, all or nothing, never overwriting", Run: cmdImport})
	register(Command{Name: "note", Summary: "attach a remark to a record (the record itself never changes)", Run: cmdNote})
}

type filterFlags struct {
	molecule, formula, method, basis, status, task, since, until string
	tags                                                         multiFlag
}

func addFilterFlags(fs *flag.FlagSet) *filterFlags {
	f := &filterFlags{}
	fs.StringVar(&f.molecule, "molecule", "", "molecule `NAME` (case-insensitive)")
	fs.StringVar(&f.formula, "formula", "", "Hill `FORMULA`, e.g. H2O")
	fs.StringVar(&f.method, "method", "", "the `METHOD`")
	fs.StringVar(&f.basis, "basis", "", "basis set `NAME`")
	fs.StringVar(&f.status, "status", "", "the `STATUS`: converged, not_converged or failed")
	fs.StringVar(&f.task, "task", "", "the `TASK`: energy or optimize")
	fs.Var(&f.tags, "tag", "records with the tag `KEY=VALUE` (repeatable; all must match)")
	fs.StringVar(&f.since, "since", "", "records started at or after `TIME`: 2006-01-02, an RFC 3339 time, or a span back from now (36h, 7d)")
	fs.StringVar(&f.until, "until", "", "records started before `TIME` (same forms as --since)")
	return f
}

func (f *filterFlags) filter() (archive.Filter, error) {
	out := archive.Filter{Molecule: f.molecule, Formula: f.formula, Method: f.method, Basis: f.basis, Status: f.status, Task: f.task, Tags: f.tags}
	switch f.task {
	case "", "energy", "optimize":
	default:
		return out, fmt.Errorf("--task %q is not energy or optimize", f.task)
	}
	switch f.status {
	case "", "converged", "not_converged", "failed":
	default:
		return out, fmt.Errorf("--status %q is not converged, not_converged or failed", f.status)
	}
	for _, t := range f.tags {
		if k, _, ok := strings.Cut(t, "="); !ok || k == "" {
			return out, fmt.Errorf("--tag %q must be KEY=VALUE", t)
		}
	}
	now := time.Now()
	for _, tf := range []struct {
		name, v string
		dst     *time.Time
	}{{"since", f.since, &out.Since}, {"until", f.until, &out.Until}} {
		if tf.v == "" {
			continue
		}
		t, err := archive.ParseTimeFlag(tf.name, tf.v, now)
		if err != nil {
			return out, err
		}
		*tf.dst = t
	}
	return out, nil
}

func cmdList(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("list", stderr, "[filters] [--overview] [--energy-unit UNIT] [--json]")
	af := addArchiveFlags(fs)
	ff := addFilterFlags(fs)
	asJSON := fs.Bool("json", false, "print a JSON array of record summaries (with --overview: the overview)")
	overview := fs.Bool("overview", false, "a molecule × level table of what the archive holds instead of one line per record")
	unitName := addEnergyUnitFlag(fs)
	pos, code, ok := parseFlags(fs, args)
	if !ok {
		return code
	}
	if len(pos) > 0 {
		fmt.Fprintf(stderr, "moltrail list: unexpected argument %q (filters are flags)\n", pos[0])
		return exitUsage
	}
	f, err := ff.filter()
	if err != nil {
		return fail(stderr, exitUsage, "list", err)
	}
	unit, err := parseEnergyUnit(*unitName)
	if err != nil {
		return fail(stderr, exitUsage, "list", err)
	}
	st, code, err := af.open(true, stderr)
	if err != nil {
		return fail(stderr, code, "list", err)
	}
	defer st.Close()
	sums, err := st.List(f)
	if err != nil {
		return fail(stderr, exitFailed, "list", err)
	}
	rows, err := listRows(st, sums)
	if err != nil {
		return fail(stderr, exitFailed, "list", err)
	}
	if *overview {
		ov := buildOverview(rows)
		if *asJSON {
			printJSON(stdout, ov)
		} else {
			writeOverview(stdout, ov)
		}
		return exitOK
	}
	if *asJSON {
		printJSON(stdout, rows)
		return exitOK
	}
	if len(rows) == 0 {
		fmt.Fprintln(stdout, "no records match")
		return exitOK
	}
	t := &table{head: []string{"id", "started UTC", "molecule", "formula", "level", "task", "geometry", "status", "energy/" + unit.header(), "tags"},
		right: []bool{false, false, false, false, false, false, false, false, true, false}}
	for _, s := range rows {
		t.add(s.ID[:12], utc(s.StartUTC), s.Molecule, s.Formula, s.Level+angularMark(s.Angular), s.Task, geometryCell(s.Geometry), s.Status,
			unit.total(s.Status, s.EnergyHartree), strings.Join(s.Tags, " "))
	}
	t.write(stdout)
	fmt.Fprintf(stdout, "%d record(s); ° marks Cartesian d/f functions\n", len(rows))
	return exitOK
}

// geometryCell is the geometry column of list: where the record's final
// geometry comes from.
func geometryCell(g archive.GeometrySource) string {
	switch g.Kind {
	case archive.GeometryOptimised:
		return "optimised"
	case archive.GeometryBorrowed:
		return "from " + g.SourceLevel + " " + shortID(g.Source)
	case archive.GeometryUnresolved:
		return "from record " + shortID(g.Source)
	}
	if g.FromInput {
		return "input of " + shortID(g.Source)
	}
	return "input"
}

func shortID(id string) string {
	if len(id) > 12 {
		return id[:12]
	}
	return id
}

// listRow is one line of `list`: the record's summary, its level label
// and where its geometry comes from.
type listRow struct {
	archive.Summary
	// Level is the record's level in the trade's notation (archive.LevelLabel).
	Level    string                 `json:"level"`
	Geometry archive.GeometrySource `json:"geometry"`
	// JobLevel is the level without the geometry's (archive.JobLevel).
	JobLevel string `json:"job_level"`
}

// listRows labels each summary with its record's level; the label needs
// the record itself (frozen core, geometry-from links).
func listRows(st *archive.Store, sums []archive.Summary) ([]listRow, error) {
	rows := make([]listRow, 0, len(sums))
	look := st.Lookup()
	for _, s := range sums {
		r, _, err := st.Get(s.ID)
		if err != nil {
			return nil, err
		}
		rows = append(rows, listRow{Summary: s, Level: archive.LevelLabel(r, look), Geometry: archive.GeometryOf(r, look), JobLevel: archive.JobLevel(&r.Input)})
	}
	return rows, nil
}

func angularMark(a string) string {
	if a == "cartesian" {
		return "°"
	}
	return ""
}

func cmdShow(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("show", stderr, "ID [--energy-unit UNIT] [--json]")
	af := addArchiveFlags(fs)
	asJSON := fs.Bool("json", false, "print exactly the stored record")
	unitName := addEnergyUnitFlag(fs)
	pos, code, ok := parseFlags(fs, args)
	if !ok {
		return code
	}
	if len(pos) != 1 {
		fmt.Fprintln(stderr, "moltrail show: give one record id (or a unique prefix of at least 4 hex digits)")
		return exitUsage
	}
	unit, err := parseEnergyUnit(*unitName)
	if err != nil {
		return fail(stderr, exitUsage, "show", err)
	}
	st, code, err := af.open(true, stderr)
	if err != nil {
		return fail(stderr, code, "show", err)
	}
	defer st.Close()
	id, err := st.Resolve(pos[0])
	if err != nil {
		return fail(stderr, exitUsage, "show", err)
	}
	rec, raw, err := st.Get(id)
	if err != nil {
		return fail(stderr, exitFailed, "show", err)
	}
	if *asJSON {
		fmt.Fprintf(stdout, "%s\n", raw)
		return exitOK
	}
	notes, _ := st.Notes(id)
	writeRecord(stdout, rec, notes, st.Lookup(), unit)
	if err := rec.Check(); err != nil {
		fmt.Fprintf(stderr, "moltrail show: warning: record %s does not verify: %v\n", id[:12], err)
		return exitFailed
	}
	return exitOK
}

// verifyNotes says in the help what verify proves and what it does not.
const verifyNotes = `
What verify proves: every record's content still hashes to its id and its
input to its input key; every listing and index entry points at a record
that can be read and belongs to it, so nothing listed is lost; the table
files' block checksums match (damage is named); every signature matches its
record, which shows that the holder of that key signed exactly this content;
and every signing key is on the archive's trust list or is your own key.

What it does not prove: that the numbers are right, that the program which
computed them was unmodified, or anything about unsigned records (written
before records were signed) beyond their hashes. A key's holder can sign
anything, so trust only keys whose owners you know (moltrail trust).

Exit status 1 when anything is found, naming each record.`

func cmdVerify(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("verify", stderr, "[--json]")
	af := addArchiveFlags(fs)
	asJSON := fs.Bool("json", false, "print the report as JSON")
	addHelpNotes(fs, verifyNotes)
	pos, code, ok := parseFlags(fs, args)
	if !ok {
		return code
	}
	if len(pos) > 0 {
		fmt.Fprintf(stderr, "moltrail verify: unexpected argument %q\n", pos[0])
		return exitUsage
	}
	st, code, err := af.open(true, stderr)
	if err != nil {
		return fail(stderr, code, "verify", err)
	}
	defer st.Close()
	rep, err := st.Verify()
	if err != nil {
		return fail(stderr, exitFailed, "verify", err)
	}
	signed := fmt.Sprintf("%d signed by trusted keys, %d unsigned (written before records were signed)", rep.Trusted, rep.Unsigned)
	if *asJSON {
		printJSON(stdout, rep)
	} else if len(rep.Problems) == 0 {
		fmt.Fprintf(stdout, "verified %d record(s) and %d note(s) in %s: every hash and signature matches; %s\n", rep.Records, rep.Notes, af.path(), signed)
	} else {
		for _, p := range rep.Problems {
			fmt.Fprintf(stdout, "%-9s %s\n", problemWord[p.Kind], strings.TrimSpace(p.ID+"  "+p.Problem))
		}
		fmt.Fprintf(stdout, "%d finding(s) in %s (%d record(s) and %d note(s) read; %s)\n", len(rep.Problems), af.path(), rep.Records, rep.Notes, signed)
	}
	for _, p := range rep.Problems {
		if p.ID == "" {
			fmt.Fprintf(stderr, "moltrail verify: %s\n", p.Problem)
		} else {
			fmt.Fprintf(stderr, "moltrail verify: record %s: %s\n", p.ID, p.Problem)
		}
	}
	if len(rep.Problems) > 0 {
		return exitFailed
	}
	return exitOK
}

// problemWord heads a verify finding by its kind.
var problemWord = map[string]string{
	archive.ProblemDamaged:   "DAMAGED",
	archive.ProblemLost:      "LOST",
	archive.ProblemContent:   "MISMATCH",
	archive.ProblemIndex:     "MISMATCH",
	archive.ProblemSignature: "SIGNATURE",
	archive.ProblemUntrusted: "UNTRUSTED",
}

func cmdExport(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("export", stderr, "--out FILE.jsonl [filters]")
	af := addArchiveFlags(fs)
	ff := addFilterFlags(fs)
	out := fs.String("out", "", "output `FILE` (JSON lines; - for stdout)")
	asJSON := fs.Bool("json", false, "print a JSON summary (needs --out FILE)")
	pos, code, ok := parseFlags(fs, args)
	if !ok {
		return code
	}
	if len(pos) > 0 || *out == "" {
		fmt.Fprintln(stderr, "moltrail export: give --out FILE.jsonl (or --out - for stdout) and filters as flags")
		return exitUsage
	}
	if *out == "-" && *asJSON {
		fmt.Fprintln(stderr, "moltrail export: --json needs --out FILE (stdout carries the records)")
		return exitUsage
	}
	f, err := ff.filter()
	if err != nil {
		return fail(stderr, exitUsage, "export", err)
	}
	st, code, err := af.open(true, stderr)
	if err != nil {
		return fail(stderr, code, "export", err)
	}
	defer st.Close()
	if *out == "-" {
		n, notes, err := st.ExportNotes(stdout, f)
		if err != nil {
			return fail(stderr, exitFailed, "export", err)
		}
		fmt.Fprintf(stderr, "moltrail export: %d record(s) and %d note(s)\n", n, notes)
		return exitOK
	}
	tmp, err := createAtomic(*out)
	if err != nil {
		return fail(stderr, exitUsage, "export", fmt.Errorf("--out %s: %v", *out, err))
	}
	n, notes, err := st.ExportNotes(tmp, f)
	if err != nil {
		tmp.Abort()
		return fail(stderr, exitFailed, "export", err)
	}
	if err := tmp.Commit(); err != nil {
		return fail(stderr, exitFailed, "export", fmt.Errorf("--out %s: %v", *out, err))
	}
	if *asJSON {
		printJSON(stdout, map[string]any{"out": *out, "records": n, "notes": notes})
	} else {
		fmt.Fprintf(stdout, "wrote %d record(s) and their %d note(s) to %s\n", n, notes, *out)
	}
	return exitOK
}

// maxRefusalLines bounds the refusals import prints one by one.
const maxRefusalLines = 20

func cmdImport(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("import", stderr, "FILE.jsonl [--partial] [--trusted-only] [--json]")
	af := addArchiveFlags(fs)
	asJSON := fs.Bool("json", false, "print the summary as JSON")
	partial := fs.Bool("partial", false, "store the acceptable records when some are refused (without it one refused record means nothing is imported, exit status 2)")
	trustedOnly := fs.Bool("trusted-only", false, "refuse records that are unsigned or signed by a key the archive does not trust (see moltrail trust)")
	pos, code, ok := parseFlags(fs, args)
	if !ok {
		return code
	}
	if len(pos) != 1 {
		fmt.Fprintln(stderr, "moltrail import: give one JSON-lines file")
		return exitUsage
	}
	fh, err := os.Open(pos[0])
	if err != nil {
		return fail(stderr, exitUsage, "import", fmt.Errorf("cannot open %s: %v", pos[0], pathErr(err)))
	}
	defer fh.Close()
	// Read and validate the whole file before opening the archive for writing.
	ex, err := archive.ReadExchange(fh, pos[0])
	if err != nil {
		return fail(stderr, exitUsage, "import", fmt.Errorf("%v; nothing was imported", err))
	}
	batch := ex.Batch()
	policy := archive.ImportPolicy{Partial: *partial, TrustedOnly: *trustedOnly}
	rep, err := archive.ImportInto(af.path(), batch, policy, archive.OpenOptions{Wait: af.waitOrNone(), Log: stderr}, func(done, total int) {
		fmt.Fprintf(stderr, "moltrail import: %d of %d records written\n", done, total)
	})
	for i, r := range rep.Refused {
		if i == maxRefusalLines && len(rep.Refused) > i+1 {
			fmt.Fprintf(stderr, "moltrail import: … and %d more refused (--json lists them all)\n", len(rep.Refused)-i)
			break
		}
		fmt.Fprintf(stderr, "moltrail import: %s\n", r.Reason)
	}
	if errors.Is(err, archive.ErrRefused) {
		if *asJSON {
			printJSON(stdout, rep)
		}
		return fail(stderr, exitUsage, "import", fmt.Errorf("%s: %v (--partial)", pos[0], err))
	}
	if err != nil {
		return fail(stderr, archiveErrCode(err), "import", err)
	}
	if *asJSON {
		printJSON(stdout, rep)
	} else {
		fmt.Fprintf(stdout, "%s: %d record(s) read, %d imported, %d already present (skipped); %d note(s) read, %d imported, %d already present; %d refused\n",
			pos[0], rep.Lines, rep.Imported, rep.Skipped, rep.Notes, rep.NotesAdded, rep.NotesPresent, len(rep.Refused))
	}
	if len(rep.Refused) > 0 {
		return exitFailed
	}
	return exitOK
}

func cmdNote(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("note", stderr, "ID TEXT…")
	af := addArchiveFlags(fs)
	asJSON := fs.Bool("json", false, "print the stored note as JSON")
	pos, code, ok := parseFlags(fs, args)
	if !ok {
		return code
	}
	text := strings.TrimSpace(strings.Join(pos[min(1, len(pos)):], " "))
	if len(pos) < 2 || text == "" {
		fmt.Fprintln(stderr, "moltrail note: give a record id and the note text")
		return exitUsage
	}
	st, code, err := af.open(false, stderr)
	if err != nil {
		return fail(stderr, code, "note", err)
	}
	defer st.Close()
	id, err := st.Resolve(pos[0])
	if err != nil {
		return fail(stderr, exitUsage, "note", err)
	}
	n, err := st.AddNote(id, text, time.Now())
	if err != nil {
		return fail(stderr, archiveErrCode(err), "note", err)
	}
	if *asJSON {
		printJSON(stdout, n)
	} else {
		fmt.Fprintf(stdout, "note %s added to record %s\n", n.ID[:12], id[:12])
	}
	return exitOK
}
