package main

import (
	"fmt"
	"io"

	"moltrail/compare"
)

func init() {
	register(Command{Name: "compare", Summary: "deviations of archived results from a reference set, statistics, cautions", Run: cmdCompare})
}

func cmdCompare(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("compare", stderr, "[--refs SET] [filters] [--json | --csv | --csv-stats]")
	af := addArchiveFlags(fs)
	cf := addComparisonFlags(fs)
	asJSON := fs.Bool("json", false, "print the whole comparison as one JSON value")
	asCSV := fs.Bool("csv", false, "print one CSV row per deviation")
	statsCSV := fs.Bool("csv-stats", false, "print one CSV row per level and quantity kind")
	pos, code, ok := parseFlags(fs, args)
	if !ok {
		return code
	}
	if len(pos) > 0 {
		fmt.Fprintf(stderr, "moltrail compare: unexpected argument %q (the reference set is given with --refs)\n", pos[0])
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
	sel, err := cf.resolve()
	if err != nil {
		return fail(stderr, exitUsage, "compare", err)
	}
	tab, _, code, err := compareArchive(af, sel, stderr)
	if err != nil {
		return fail(stderr, code, "compare", err)
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
