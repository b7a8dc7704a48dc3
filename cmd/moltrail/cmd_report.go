package main

import (
	"bytes"
	"encoding/json"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"time"

	"moltrail/archive"
	"moltrail/compare"
	"moltrail/report"
)

func init() {
	register(Command{Name: "report", Summary: "the supplementary-information document (PDF, or its tables as CSV or Markdown)", Run: cmdReport})
}

// reportSelection names the flags that choose the records and the
// comparison; they are written into the report and its fingerprint.
var reportSelection = map[string]bool{
	"refs": true, "molecule": true, "formula": true, "method": true, "basis": true, "status": true,
	"tag": true, "since": true, "until": true, "bootstrap": true, "seed": true,
}

func cmdReport(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("report", stderr, "--refs builtin|SET|FILE --out F.pdf [filters] [--title T --author A --affiliation X --date D | --config F.json] [--format pdf|csv|md] [--json]")
	af := addArchiveFlags(fs)
	ff := addFilterFlags(fs)
	refs := fs.String("refs", "", "reference set: builtin (all built-in sets), a built-in set name ("+strings.Join(compare.BuiltinNames(), ", ")+") or a reference-set JSON file")
	until := fs.String("until", "", "started before: 2006-01-02 or an RFC 3339 time")
	samples := fs.Int("bootstrap", compare.DefaultOptions.BootstrapSamples, "bootstrap resamples for confidence intervals")
	seed := fs.Uint64("seed", compare.DefaultOptions.Seed, "seed of the bootstrap random stream (fixed: same input, same output)")
	out := fs.String("out", "", "output file (required for PDF; CSV and Markdown go to stdout without it)")
	format := fs.String("format", "", "pdf, csv or md (default: from the --out extension, else pdf)")
	config := fs.String("config", "", "JSON file with title, author, affiliation, date (flags override it)")
	title := fs.String("title", "", "document title")
	author := fs.String("author", "", "author line of the title page")
	affil := fs.String("affiliation", "", "affiliation line of the title page")
	date := fs.String("date", "", "date printed and stored in the PDF (default: the latest record's run date; never the clock)")
	asJSON := fs.Bool("json", false, "print a JSON summary (output file, fingerprint, counts) on stdout")
	pos, code, ok := parseFlags(fs, args)
	if !ok {
		return code
	}
	if len(pos) > 0 {
		fmt.Fprintf(stderr, "moltrail report: unexpected argument %q (the reference set is given with --refs, the output with --out)\n", pos[0])
		return exitUsage
	}
	if *refs == "" {
		fmt.Fprintf(stderr, "moltrail report: --refs is required (builtin, one of %s, or a file)\n", strings.Join(compare.BuiltinNames(), ", "))
		return exitUsage
	}
	fmtName := strings.ToLower(*format)
	if fmtName == "" {
		switch strings.ToLower(filepath.Ext(*out)) {
		case ".csv":
			fmtName = "csv"
		case ".md", ".markdown":
			fmtName = "md"
		default:
			fmtName = "pdf"
		}
	}
	if fmtName == "markdown" {
		fmtName = "md"
	}
	if fmtName != "pdf" && fmtName != "csv" && fmtName != "md" {
		fmt.Fprintf(stderr, "moltrail report: --format %q is not pdf, csv or md\n", *format)
		return exitUsage
	}
	if fmtName == "pdf" && *out == "" {
		fmt.Fprintln(stderr, "moltrail report: --out F.pdf is required for a PDF")
		return exitUsage
	}
	if *asJSON && *out == "" {
		fmt.Fprintln(stderr, "moltrail report: --json needs --out (stdout carries the JSON summary)")
		return exitUsage
	}
	if *samples < 100 || *samples > 1000000 {
		fmt.Fprintf(stderr, "moltrail report: --bootstrap %d is outside 100–1000000\n", *samples)
		return exitUsage
	}

	var opts report.Options
	if *config != "" {
		b, err := os.ReadFile(*config)
		if err != nil {
			return fail(stderr, exitUsage, "report", fmt.Errorf("--config: %v", err))
		}
		dec := json.NewDecoder(bytes.NewReader(b))
		dec.DisallowUnknownFields()
		var c struct {
			Title       string `json:"title"`
			Author      string `json:"author"`
			Affiliation string `json:"affiliation"`
			Date        string `json:"date"`
		}
		if err := dec.Decode(&c); err != nil {
			return fail(stderr, exitUsage, "report", fmt.Errorf("--config %s: %v (keys: title, author, affiliation, date)", *config, err))
		}
		opts = report.Options{Title: c.Title, Author: c.Author, Affiliation: c.Affiliation, Date: c.Date}
	}
	for _, o := range []struct {
		flag string
		v    *string
		dst  *string
	}{{"title", title, &opts.Title}, {"author", author, &opts.Author}, {"affiliation", affil, &opts.Affiliation}, {"date", date, &opts.Date}} {
		if isSet(fs, o.flag) {
			*o.dst = *o.v
		}
	}
	fs.Visit(func(f *flag.Flag) {
		if reportSelection[f.Name] {
			opts.Selection = append(opts.Selection, "--"+f.Name+"="+f.Value.String())
		}
	})

	set, err := compare.LoadRefSet(*refs)
	if err != nil {
		return fail(stderr, exitUsage, "report", err)
	}
	flt, err := ff.filter()
	if err != nil {
		return fail(stderr, exitUsage, "report", err)
	}
	var before time.Time
	if *until != "" {
		before, err = archive.ParseSince(*until, time.Now())
		if err != nil {
			return fail(stderr, exitUsage, "report", fmt.Errorf("--until: %v", err))
		}
	}
	st, code, err := af.open(true, stderr)
	if err != nil {
		return fail(stderr, code, "report", err)
	}
	defer st.Close()
	sums, err := st.List(flt)
	if err != nil {
		return fail(stderr, exitFailed, "report", err)
	}
	var recs []*archive.Record
	for _, s := range sums {
		if !set.Names(s.Molecule) {
			continue
		}
		if !before.IsZero() {
			t, err := time.Parse(time.RFC3339Nano, s.StartUTC)
			if err == nil && !t.Before(before) {
				continue
			}
		}
		r, _, err := st.Get(s.ID)
		if err != nil {
			return fail(stderr, exitFailed, "report", err)
		}
		recs = append(recs, r)
	}
	tab, err := compare.Compare(set, recs, compare.Options{BootstrapSamples: *samples, Seed: *seed})
	if err != nil {
		return fail(stderr, exitUsage, "report", err)
	}
	// The document covers the records the comparison used.
	used := map[string]bool{}
	for _, p := range tab.Picked {
		used[p.RecordID] = true
	}
	for _, d := range tab.Deviations {
		used[d.RecordID] = true
	}
	var chosen []archive.Record
	for _, r := range recs {
		if used[r.ID] {
			chosen = append(chosen, *r)
			delete(used, r.ID) // each record once
		}
	}
	if len(chosen) == 0 {
		fmt.Fprintln(stderr, "moltrail report: note: no archived record matched the reference set; the document will have no results")
	}

	var buf bytes.Buffer
	switch fmtName {
	case "pdf":
		err = report.PDF(&buf, tab, chosen, opts)
	case "csv":
		err = report.CSV(&buf, tab, chosen, opts)
	case "md":
		err = report.Markdown(&buf, tab, chosen, opts)
	}
	if err != nil {
		return fail(stderr, exitFailed, "report", err)
	}
	if *out == "" {
		if _, err := stdout.Write(buf.Bytes()); err != nil {
			return fail(stderr, exitFailed, "report", err)
		}
		return exitOK
	}
	if err := writeFileAtomic(*out, buf.Bytes()); err != nil {
		return fail(stderr, exitFailed, "report", fmt.Errorf("--out %s: %v", *out, err))
	}
	fp := report.Fingerprint(tab, chosen, opts)
	flagged := 0
	for _, d := range tab.Deviations {
		if len(d.Cautions) > 0 {
			flagged++
		}
	}
	if *asJSON {
		if err := printJSON(stdout, map[string]any{
			"out": *out, "format": fmtName, "bytes": buf.Len(), "fingerprint_sha256": fp,
			"records": len(chosen), "deviations": len(tab.Deviations), "flagged_deviations": flagged,
			"reference_set": tab.RefSet.Name, "levels": len(tab.Levels),
		}); err != nil {
			return fail(stderr, exitFailed, "report", err)
		}
		return exitOK
	}
	fmt.Fprintf(stdout, "wrote %s (%s, %d bytes): %d records, %d deviations (%d with a caution); fingerprint %s\n",
		*out, fmtName, buf.Len(), len(chosen), len(tab.Deviations), flagged, fp)
	return exitOK
}

func isSet(fs *flag.FlagSet, name string) bool {
	set := false
	fs.Visit(func(f *flag.Flag) {
		if f.Name == name {
			set = true
		}
	})
	return set
}

// writeFileAtomic writes through a temporary file in the same directory,
// so a failed run never leaves half a document behind.
func writeFileAtomic(path string, b []byte) error {
	dir := filepath.Dir(path)
	tmp, err := os.CreateTemp(dir, ".moltrail-report-*")
	if err != nil {
		return err
	}
	name := tmp.Name()
	if _, err := tmp.Write(b); err != nil {
		tmp.Close()
		os.Remove(name)
		return err
	}
	if err := tmp.Close(); err != nil {
		os.Remove(name)
		return err
	}
	if err := os.Chmod(name, 0o644); err != nil {
		os.Remove(name)
		return err
	}
	return os.Rename(name, path)
}
