package main

import (
	"bytes"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"

	"moltrail/report"
)

func init() {
	register(Command{Name: "report", Summary: "the supplementary-information document (PDF, or its tables as CSV or Markdown)", Run: cmdReport})
}

func cmdReport(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("report", stderr, "[--refs SET] --out FILE.pdf [filters] [--title TITLE --author AUTHOR --affiliation AFFILIATION --date DATE | --config FILE.json] [--format FORMAT] [--json]")
	af := addArchiveFlags(fs)
	cf := addComparisonFlags(fs)
	out := fs.String("out", "", "output `FILE` (required for PDF; CSV and Markdown go to stdout without it)")
	format := fs.String("format", "", "`FORMAT`: pdf, csv or md (default: from the --out extension, else pdf)")
	config := fs.String("config", "", "JSON `FILE` with title, author, affiliation, date (flags override it)")
	title := fs.String("title", "", "document `TITLE`")
	author := fs.String("author", "", "`AUTHOR` line of the title page")
	affil := fs.String("affiliation", "", "`AFFILIATION` line of the title page")
	date := fs.String("date", "", "`DATE` printed and stored in the PDF (default: the latest record's run date; never the clock)")
	asJSON := fs.Bool("json", false, "print a JSON summary (output file, fingerprint, counts) on stdout")
	pos, code, ok := parseFlags(fs, args)
	if !ok {
		return code
	}
	if len(pos) > 0 {
		fmt.Fprintf(stderr, "moltrail report: unexpected argument %q (the reference set is given with --refs, the output with --out)\n", pos[0])
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
		fmt.Fprintln(stderr, "moltrail report: --json needs --out FILE (without it the document itself goes to stdout)")
		return exitUsage
	}
	sel, err := cf.resolve()
	if err != nil {
		return fail(stderr, exitUsage, "report", err)
	}
	if *out != "" {
		if err := checkOutPath(*out); err != nil {
			return fail(stderr, exitUsage, "report", fmt.Errorf("--out %s: %v", *out, err))
		}
	}

	var opts report.Options
	if *config != "" {
		b, err := os.ReadFile(*config)
		if err != nil {
			return fail(stderr, exitUsage, "report", fmt.Errorf("--config %s: %v", *config, pathErr(err)))
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
			return fail(stderr, exitUsage, "report", fmt.Errorf("--config %s: %s (a JSON object with the text keys title, author, affiliation, date)", *config, jsonProblem(b, err)))
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
	// The flags given, and the reference set even when it is the default.
	fs.VisitAll(func(f *flag.Flag) {
		if comparisonFlagNames[f.Name] && (isSet(fs, f.Name) || f.Name == "refs") {
			opts.Selection = append(opts.Selection, "--"+f.Name+"="+f.Value.String())
		}
	})

	tab, recs, code, err := compareArchive(af, sel, stderr)
	if err != nil {
		return fail(stderr, code, "report", err)
	}
	// The document covers the records the comparison used.
	chosen := recordsUsed(tab, recs)
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
	flagged := tab.Flagged()
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

// jsonProblem words a decoding error of a small JSON file: the key of a
// value of the wrong type, an unknown key, or the line of a syntax error.
func jsonProblem(b []byte, err error) string {
	var te *json.UnmarshalTypeError
	var se *json.SyntaxError
	switch {
	case errors.As(err, &te) && te.Field != "":
		return fmt.Sprintf("%q must be %s, not a JSON %s", te.Field, jsonKind(te.Type.Kind().String()), te.Value)
	case te != nil:
		return fmt.Sprintf("the file holds a JSON %s where an object is expected", te.Value)
	case errors.As(err, &se):
		return fmt.Sprintf("line %d: %v", 1+bytes.Count(b[:min(int(se.Offset), len(b))], []byte("\n")), strings.TrimPrefix(se.Error(), "json: "))
	case errors.Is(err, io.EOF):
		return "the file is empty"
	}
	msg := strings.TrimPrefix(err.Error(), "json: ")
	return strings.Replace(msg, "unknown field", "unknown key", 1)
}

func jsonKind(k string) string {
	switch k {
	case "string":
		return "text"
	case "struct", "map":
		return "an object"
	case "slice", "array":
		return "an array"
	}
	return "a " + k
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
