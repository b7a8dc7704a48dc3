package main

import (
	"fmt"
	"io"
	"math"
	"strings"

	"moltrail/archive"
	"moltrail/compare"
)

func init() {
	register(Command{Name: "reproduce", Summary: "re-run a record's exact input with this code; per-quantity differences and a verdict", Run: cmdReproduce})
	register(Command{Name: "trace", Summary: "which records, quantities and settings produced a printed figure", Run: cmdTrace})
	register(Command{Name: "diff", Summary: "what differs between two records: settings, code, results", Run: cmdDiff})
}

func cmdReproduce(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("reproduce", stderr, "ID | --all [filters] [--json]")
	af := addArchiveFlags(fs)
	ff := addFilterFlags(fs)
	all := fs.Bool("all", false, "reproduce every record matching the filters")
	threads := fs.Int("threads", 0, "worker threads (0 = all cores)")
	memFlag := addMemoryFlag(fs)
	asJSON := fs.Bool("json", false, "print the outcome as JSON (an object for one ID, an array with --all)")
	pos, code, ok := parseFlags(fs, args)
	if !ok {
		return code
	}
	memBytes, err := memoryLimit(*memFlag)
	if err != nil {
		return fail(stderr, exitUsage, "reproduce", err)
	}
	if (*all) == (len(pos) == 1) || len(pos) > 1 {
		fmt.Fprintln(stderr, "moltrail reproduce: give one record id, or --all with optional filters")
		return exitUsage
	}
	st, code, err := af.open(true, stderr)
	if err != nil {
		return fail(stderr, code, "reproduce", err)
	}
	var ids []string
	if *all {
		f, err := ff.filter()
		if err != nil {
			st.Close()
			return fail(stderr, exitUsage, "reproduce", err)
		}
		sums, err := st.List(f)
		if err != nil {
			st.Close()
			return fail(stderr, exitFailed, "reproduce", err)
		}
		for _, s := range sums {
			ids = append(ids, s.ID)
		}
	} else {
		id, err := st.Resolve(pos[0])
		if err != nil {
			st.Close()
			return fail(stderr, exitUsage, "reproduce", err)
		}
		ids = []string{id}
	}
	st.Close()
	var reps []*archive.Reproduction
	bad := 0
	for _, id := range ids {
		rep, err := archive.Reproduce(af.path(), id, archive.RunRequest{Threads: *threads, Wait: af.waitOrNone(), Log: stderr}, engineComputer(memBytes))
		if err != nil {
			return fail(stderr, exitFailed, "reproduce", fmt.Errorf("record %s: %v", id[:12], err))
		}
		if rep.Verdict != archive.Reproduced {
			bad++
		}
		reps = append(reps, rep)
	}
	switch {
	case *asJSON && !*all:
		printJSON(stdout, reps[0])
	case *asJSON:
		if reps == nil {
			reps = []*archive.Reproduction{}
		}
		printJSON(stdout, reps)
	case !*all:
		writeReproduction(stdout, reps[0])
	default:
		t := &table{head: []string{"original", "molecule", "verdict", "new record", "why"}}
		for _, r := range reps {
			nw := "—"
			if r.New != "" {
				nw = r.New[:12]
			}
			t.add(r.Original[:12], r.Molecule, r.Verdict, nw, r.Reason)
		}
		t.write(stdout)
		fmt.Fprintf(stdout, "%d of %d record(s) reproduced\n", len(reps)-bad, len(reps))
	}
	if bad > 0 {
		return exitFailed
	}
	return exitOK
}

func writeReproduction(w io.Writer, r *archive.Reproduction) {
	fmt.Fprintf(w, "record %s (%s): %s\n", r.Original, r.Molecule, strings.ToUpper(r.Verdict))
	if r.Reason != "" {
		fmt.Fprintf(w, "  why: %s\n", r.Reason)
	}
	if r.New != "" {
		fmt.Fprintf(w, "  new run stored as %s (lineage: reproduces)\n", r.New)
	}
	fmt.Fprintln(w, "  tolerances, from the record's own convergence criteria:")
	for _, t := range r.Tolerances {
		fmt.Fprintf(w, "    %-10s ± %.3g %s  (%s)\n", t.Kind, t.Abs, t.Unit, t.Rule)
	}
	if len(r.Code) == 0 {
		fmt.Fprintln(w, "  code: the same build")
	} else {
		fmt.Fprintln(w, "  code differences (original → now):")
		for _, c := range r.Code {
			fmt.Fprintf(w, "    %-18s %s → %s\n", c.Field, orDash(c.A), orDash(c.B))
		}
	}
	if len(r.Checks) > 0 {
		t := &table{head: []string{"quantity", "original", "now", "difference", "tolerance", "unit", ""}, right: []bool{false, true, true, true, true}}
		for _, c := range r.Checks {
			mark := "ok"
			if !c.Within {
				mark = "MOVED"
			}
			t.add(c.Quantity, num(c.Original), num(c.New), fmt.Sprintf("%.2e", c.Diff), fmt.Sprintf("%.1e", c.Tol), c.Unit, mark)
		}
		t.write(w)
	}
}

func orDash(s string) string {
	if s == "" {
		return "—"
	}
	return s
}

func num(v float64) string {
	if math.IsNaN(v) {
		return "—"
	}
	return fmt.Sprintf("%.10g", v)
}

// traceHelp says what trace searches.
const traceHelp = `Finds the records, quantities and settings behind a printed figure: every
stored quantity (energies, dipole and quadrupole components, bond lengths and
angles) that rounds to it, and every number of the comparison that compare
and report print with the same selection (--refs and the filters): computed
and reference values, deviations, statistics and level differences, with
the records they rest on. --refs none searches the stored quantities only.
A study's document compares exactly the study's records: select them with
the study's tags (--tag) to rebuild that comparison.
`

// traceComparison is what trace found in the rebuilt comparison.
type traceComparison struct {
	ReferenceSet string           `json:"reference_set"`
	Records      int              `json:"records"`
	Figures      []compare.Figure `json:"figures"`
}

func cmdTrace(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("trace", stderr, "VALUE [--unit UNIT] [--refs SET] [filters] [--json]\n\n"+traceHelp)
	af := addArchiveFlags(fs)
	cf := addComparisonFlags(fs)
	unit := fs.String("unit", "", "`UNIT` of the figure: "+archive.UnitNames()+", or % for relative deviations (default: each number in its own unit)")
	asJSON := fs.Bool("json", false, "print the matches as JSON")
	pos, code, ok := parseFlags(fs, args)
	if !ok {
		return code
	}
	if len(pos) != 1 {
		fmt.Fprintln(stderr, "moltrail trace: give one printed figure, e.g. moltrail trace 1.93 --unit D")
		return exitUsage
	}
	var sel *comparison
	var f archive.Filter
	var err error
	if strings.EqualFold(*cf.refs, "none") {
		f, err = cf.filter.filter()
	} else if sel, err = cf.resolve(); err == nil {
		f = sel.filter
	}
	if err != nil {
		return fail(stderr, exitUsage, "trace", err)
	}
	pv, err := archive.ParsePrinted(pos[0])
	if err != nil {
		return fail(stderr, exitUsage, "trace", err)
	}
	percent := strings.TrimSpace(*unit) == "%"
	if !percent {
		if _, _, err := archive.Trace(nil, pos[0], *unit); err != nil {
			return fail(stderr, exitUsage, "trace", err)
		}
	}
	st, code, err := af.open(true, stderr)
	if err != nil {
		return fail(stderr, code, "trace", err)
	}
	defer st.Close()
	recs, err := st.Records(f)
	if err != nil {
		return fail(stderr, exitFailed, "trace", err)
	}
	var ms []archive.TraceMatch
	if !percent {
		if ms, pv, err = archive.Trace(recs, pos[0], *unit); err != nil {
			return fail(stderr, exitUsage, "trace", err)
		}
	}
	var tc *traceComparison
	if sel != nil {
		crecs, err := selectRecordsForComparison(st, sel.set, sel.filter, stderr)
		if err != nil {
			return fail(stderr, exitFailed, "trace", err)
		}
		tab, err := compare.Compare(sel.set, crecs, sel.options)
		if err != nil {
			return fail(stderr, exitUsage, "trace", err)
		}
		tc = &traceComparison{ReferenceSet: tab.RefSet.Name, Records: len(crecs), Figures: []compare.Figure{}}
		// A unit the comparison does not use (hartree for energies is
		// fine, a figure in bohr of a deviation is not) finds nothing there.
		if figs, err := compare.Figures(tab, pv.Low, pv.High, *unit); err == nil {
			tc.Figures = append(tc.Figures, figs...)
		}
	}
	if *asJSON {
		if ms == nil {
			ms = []archive.TraceMatch{}
		}
		printJSON(stdout, map[string]any{"figure": pv, "unit": *unit, "matches": ms, "comparison": tc})
		return exitOK
	}
	fmt.Fprintf(stdout, "%s stands for %.10g ≤ x < %.10g; searched %d record(s)\n", pv.Text, pv.Low, pv.High, len(recs))
	if len(ms) == 0 {
		fmt.Fprintln(stdout, "no stored quantity prints as this figure")
	} else {
		t := &table{head: []string{"record", "molecule", "quantity", "value", "unit", "level", "scf ΔE tol", "code", "started UTC", ""}, right: []bool{false, false, false, true}}
		for _, m := range ms {
			note := ""
			if m.MagnitudeOnly {
				note = "magnitude only (sign differs)"
			}
			t.add(m.RecordID[:12], m.Molecule, m.Quantity, fmt.Sprintf("%.8g", m.Value), m.Unit, m.Level+angularMark(m.Angular)+fitNote(m.FitSet, " "),
				fmt.Sprintf("%.0e", m.EnergyTol), codeLabel(m.Version, m.Revision), utc(m.StartUTC), note)
		}
		t.write(stdout)
		for _, m := range ms {
			for _, in := range m.DerivedFrom {
				fmt.Fprintf(stdout, "%s is derived (%s): %s %s  %s/%s\n", m.RecordID[:12], m.Recipe, in.Role, in.ID[:12], in.Method, in.Basis)
			}
		}
	}
	n := len(ms)
	if tc != nil {
		writeTraceComparison(stdout, tc)
		n += len(tc.Figures)
	}
	fmt.Fprintf(stdout, "%d match(es). A match says only that the figure is consistent with a stored or compared value; check the settings against the source of the figure.\n", n)
	return exitOK
}

// writeTraceComparison prints the numbers of the comparison that match.
func writeTraceComparison(w io.Writer, tc *traceComparison) {
	fmt.Fprintf(w, "\nIn the comparison with %s over %d record(s) (as compare and report print it with this selection): ", tc.ReferenceSet, tc.Records)
	if len(tc.Figures) == 0 {
		fmt.Fprintln(w, "no number prints as this figure")
		return
	}
	fmt.Fprintf(w, "%d number(s)\n", len(tc.Figures))
	t := &table{head: []string{"part", "what", "level", "kind", "molecule / quantity", "value", "unit", "records", ""}, right: []bool{false, false, false, false, false, true}}
	for _, f := range tc.Figures {
		what := strings.TrimSpace(f.Molecule + " " + f.Quantity)
		if f.Part != "deviation" && f.N > 0 {
			what = strings.TrimSpace(fmt.Sprintf("n = %d %s", f.N, f.Quantity))
		}
		var ids []string
		for i, id := range f.Records {
			if i == 3 {
				ids = append(ids, fmt.Sprintf("+%d more", len(f.Records)-3))
				break
			}
			ids = append(ids, shortID(id))
		}
		note := ""
		if f.MagnitudeOnly {
			note = "magnitude only (sign differs)"
		}
		t.add(f.Part, f.What, f.Level, f.Kind, what, fmt.Sprintf("%.8g", f.Value), f.Unit, strings.Join(ids, " "), note)
	}
	t.write(w)
}

func cmdDiff(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("diff", stderr, "ID ID [--json]")
	af := addArchiveFlags(fs)
	asJSON := fs.Bool("json", false, "print the differences as JSON")
	pos, code, ok := parseFlags(fs, args)
	if !ok {
		return code
	}
	if len(pos) != 2 {
		fmt.Fprintln(stderr, "moltrail diff: give two record ids (unique prefixes are fine)")
		return exitUsage
	}
	st, code, err := af.open(true, stderr)
	if err != nil {
		return fail(stderr, code, "diff", err)
	}
	defer st.Close()
	var recs [2]*archive.Record
	for i, p := range pos {
		id, err := st.Resolve(p)
		if err != nil {
			return fail(stderr, exitUsage, "diff", err)
		}
		if recs[i], _, err = st.Get(id); err != nil {
			return fail(stderr, exitFailed, "diff", err)
		}
	}
	d := archive.Diff(recs[0], recs[1])
	if *asJSON {
		printJSON(stdout, d)
		return exitOK
	}
	look := st.Lookup()
	for i, id := range []string{d.A, d.B} {
		fmt.Fprintf(stdout, "%c %s  %s  %s  %s\n", 'A'+i, id, recs[i].Input.Molecule.Name, archive.LevelLabel(recs[i], look), utc(recs[i].Run.StartUTC))
	}
	section := func(title string, n int) bool {
		if n == 0 {
			fmt.Fprintf(stdout, "\n» %s: no differences\n", title)
			return false
		}
		fmt.Fprintf(stdout, "\n» %s: %d difference(s)\n", title, n)
		return true
	}
	if section("input", len(d.Input)) {
		t := &table{head: []string{"field", "A", "B"}}
		for _, f := range d.Input {
			t.add(f.Field, cell(f.A), cell(f.B))
		}
		t.write(stdout)
	}
	if section("code", len(d.Code)) {
		t := &table{head: []string{"field", "A", "B"}}
		for _, c := range d.Code {
			t.add(c.Field, orDash(c.A), orDash(c.B))
		}
		t.write(stdout)
	}
	for _, s := range d.Status {
		fmt.Fprintf(stdout, "\n» %s: A %s, B %s\n", s.Field, cell(s.A), cell(s.B))
	}
	var real, noise []archive.ResultDiff
	for _, r := range d.Results {
		if r.Noise {
			noise = append(noise, r)
		} else {
			real = append(real, r)
		}
	}
	results := func(rs []archive.ResultDiff) {
		t := &table{head: []string{"quantity", "A", "B", "B − A", "relative", "unit"}, right: []bool{false, true, true, true, true}}
		for _, r := range rs {
			t.add(r.Quantity, pnum(r.A), pnum(r.B), pexp(r.Abs), pexp(r.Rel), r.Unit)
		}
		t.write(stdout)
	}
	if section("results", len(real)) {
		results(real)
	}
	if len(noise) > 0 {
		fmt.Fprintf(stdout, "\n» numerical noise: %d quantity(ies) differ by less than one unit of the last digit moltrail prints (%s)\n", len(noise), resolutions(noise))
		results(noise)
	}
	return exitOK
}

// resolutions names the printed resolution of each unit among rs.
func resolutions(rs []archive.ResultDiff) string {
	var out []string
	seen := map[string]bool{}
	for _, r := range rs {
		if !seen[r.Unit] {
			seen[r.Unit] = true
			out = append(out, fmt.Sprintf("%g %s", r.Resolution, r.Unit))
		}
	}
	return strings.Join(out, ", ")
}

func cell(v any) string {
	if v == nil {
		return "—"
	}
	if f, ok := v.(float64); ok {
		return fmt.Sprintf("%.12g", f)
	}
	return fmt.Sprint(v)
}

func pnum(p *float64) string {
	if p == nil {
		return "—"
	}
	return fmt.Sprintf("%.10g", *p)
}

func pexp(p *float64) string {
	if p == nil {
		return "—"
	}
	return fmt.Sprintf("%.2e", *p)
}
