package main

import (
	"fmt"
	"io"
	"strings"
	"time"

	"moltrail/archive"
	"moltrail/compare"
)

func init() {
	register(Command{Name: "compare", Summary: "deviations of archived results from a reference set, statistics, cautions", Run: cmdCompare})
}

func cmdCompare(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("compare", stderr, "--refs builtin|SET|FILE [filters] [--json | --csv | --csv-stats]")
	af := addArchiveFlags(fs)
	ff := addFilterFlags(fs)
	refs := fs.String("refs", "", "reference set: builtin (all built-in sets), a built-in set name ("+strings.Join(compare.BuiltinNames(), ", ")+") or a reference-set JSON file")
	until := fs.String("until", "", "started before: 2006-01-02 or an RFC 3339 time")
	asJSON := fs.Bool("json", false, "print the whole comparison as one JSON value")
	asCSV := fs.Bool("csv", false, "print one CSV row per deviation")
	statsCSV := fs.Bool("csv-stats", false, "print one CSV row per level and quantity kind")
	samples := fs.Int("bootstrap", compare.DefaultOptions.BootstrapSamples, "bootstrap resamples for confidence intervals")
	seed := fs.Uint64("seed", compare.DefaultOptions.Seed, "seed of the bootstrap random stream (fixed: same input, same output)")
	pos, code, ok := parseFlags(fs, args)
	if !ok {
		return code
	}
	if len(pos) > 0 {
		fmt.Fprintf(stderr, "moltrail compare: unexpected argument %q (the reference set is given with --refs)\n", pos[0])
		return exitUsage
	}
	if *refs == "" {
		fmt.Fprintf(stderr, "moltrail compare: --refs is required (builtin, one of %s, or a file)\n", strings.Join(compare.BuiltinNames(), ", "))
		return exitUsage
	}
	n := 0
	for _, b := range []bool{*asJSON, *asCSV, *statsCSV} {
		if b {
			n++
		}
	}
	if n > 1 {
		fmt.Fprintln(stderr, "moltrail compare: --json, --csv and --csv-stats exclude each other")
		return exitUsage
	}
	if *samples < 100 || *samples > 1000000 {
		fmt.Fprintf(stderr, "moltrail compare: --bootstrap %d is outside 100–1000000\n", *samples)
		return exitUsage
	}
	set, err := compare.LoadRefSet(*refs)
	if err != nil {
		return fail(stderr, exitUsage, "compare", err)
	}
	f, err := ff.filter()
	if err != nil {
		return fail(stderr, exitUsage, "compare", err)
	}
	var before time.Time
	if *until != "" {
		before, err = archive.ParseSince(*until, time.Now())
		if err != nil {
			return fail(stderr, exitUsage, "compare", fmt.Errorf("--until: %v", err))
		}
	}
	st, code, err := af.open(true, stderr)
	if err != nil {
		return fail(stderr, code, "compare", err)
	}
	defer st.Close()
	sums, err := st.List(f)
	if err != nil {
		return fail(stderr, exitFailed, "compare", err)
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
			return fail(stderr, exitFailed, "compare", err)
		}
		recs = append(recs, r)
	}
	tab, err := compare.Compare(set, recs, compare.Options{BootstrapSamples: *samples, Seed: *seed})
	if err != nil {
		return fail(stderr, exitUsage, "compare", err)
	}
	switch {
	case *asJSON:
		err = printJSON(stdout, tab)
	case *asCSV:
		err = compare.WriteCSV(stdout, tab)
	case *statsCSV:
		err = compare.WriteStatsCSV(stdout, tab)
	default:
		err = compare.WriteText(stdout, tab)
	}
	if err != nil {
		return fail(stderr, exitFailed, "compare", err)
	}
	return exitOK
}
