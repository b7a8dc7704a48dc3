package main

import (
	"embed"
	"fmt"
	"io"
	"path"
	"sort"
	"strings"

	"moltrail/archive/study"
	"moltrail/compare"
	"moltrail/report"
)

func init() {
	register(Command{Name: "demo", Summary: "the whole job end to end on a built-in scenario: optimise, compare with experiment, write moltrail-demo.pdf", Run: cmdDemo})
}

// demoFS holds the built-in scenario: the study files and their molecules.
//
//go:embed demo
var demoFS embed.FS

const demoStory = `The Halden group (a fictional three-person team at an imaginary institute
for laboratory astrophysics) needs equilibrium structures and dipole moments
of small molecules to seed rotational line lists. Their computer is a
laptop. Which of Hartree–Fock, MP2 and the hybrid functional B3LYP, with a
split-valence (6-31G*) or a triple-zeta (6-311G**) basis set, is good
enough? moltrail optimises every molecule at every level, compares with
experiment, and writes the supplementary information.`

// loadDemo parses an embedded study ("study" or "quick").
func loadDemo(name string) (*study.Study, error) {
	b, err := demoFS.ReadFile(path.Join("demo", name+".json"))
	if err != nil {
		return nil, fmt.Errorf("built-in scenario %q is missing from this build: %v", name, err)
	}
	read := func(file string) ([]byte, error) { return demoFS.ReadFile(path.Join("demo", file)) }
	return study.Parse(b, "builtin:demo/"+name+".json", read)
}

// demoJSON is the --json output of the demo.
type demoJSON struct {
	studyJSON
	Statistics []compare.Stats `json:"statistics"`
	Cautions   []demoCaution   `json:"cautions_raised"`
}

type demoCaution struct {
	Code  string `json:"code"`
	Title string `json:"title"`
	Count int    `json:"count"`
}

func cmdDemo(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("demo", stderr, "[--out FILE.pdf] [--quick] [--jobs N] [--archive DIRECTORY] [--json]")
	af := addArchiveFlags(fs)
	out := fs.String("out", "moltrail-demo.pdf", "the PDF `FILE` to write")
	quick := fs.Bool("quick", false, "a smaller scenario (three diatomics, the triple-zeta basis only) for a first look")
	jobs := addJobsFlag(fs)
	asJSON := fs.Bool("json", false, "print one JSON summary on stdout")
	pos, code, ok := parseFlags(fs, args)
	if !ok {
		return code
	}
	if len(pos) > 0 {
		fmt.Fprintf(stderr, "moltrail demo: unexpected argument %q\n", pos[0])
		return exitUsage
	}
	if *jobs < 1 || *jobs > 256 {
		fmt.Fprintf(stderr, "moltrail demo: --jobs %d is outside 1–256\n", *jobs)
		return exitUsage
	}
	if err := checkOutPath(*out); err != nil {
		return fail(stderr, exitUsage, "demo", fmt.Errorf("--out %s: %v", *out, err))
	}
	name := "study"
	if *quick {
		name = "quick"
	}
	st, err := loadDemo(name)
	if err != nil {
		return fail(stderr, exitFailed, "demo", err)
	}
	plan, err := st.Plan()
	if err != nil {
		return fail(stderr, exitFailed, "demo", err)
	}
	if !*asJSON {
		fmt.Fprintf(stdout, "%s\n", demoStory)
		if *quick {
			fmt.Fprintln(stdout, "(Quick version: three diatomics, the triple-zeta basis only.)")
		}
		fmt.Fprintln(stdout)
	}
	r := studyRun{cmd: "demo", archive: af.path(), wait: af.waitOrNone(), jobs: *jobs, refs: studyRefs(st), reportOut: *out}
	if st.Report != nil {
		r.reportOps = report.Options{Title: st.Report.Title, Author: st.Report.Author, Affiliation: st.Report.Affiliation, Date: st.Report.Date}
	}
	fmt.Fprintf(stderr, "moltrail demo: archive %s; %d calculations at most, %d at once\n", r.archive, len(plan.Items), *jobs)
	sum, code := runStudy(plan, r, stderr)
	if sum == nil {
		return code
	}
	tab, info, err := studyReport(plan, sum, r, stderr)
	if err != nil {
		return fail(stderr, exitFailed, "demo", fmt.Errorf("the document was not written: %v", err))
	}
	cautions := countCautions(tab)
	if *asJSON {
		if err := printJSON(stdout, demoJSON{studyJSON: studyJSON{Summary: sum, Report: info}, Statistics: tab.Stats, Cautions: cautions}); err != nil {
			return fail(stderr, exitFailed, "demo", err)
		}
	} else {
		writeDemoSummary(stdout, tab, cautions)
		writeStudySummary(stdout, sum)
		fmt.Fprintf(stdout, "document: %s (%d records, %d deviations, %d with a caution)\n", info.Out, info.Records, info.Deviations, info.Flagged)
		fmt.Fprintln(stdout, "These are model results for a handful of molecules: the statistics describe this set, not the methods in general; check what matters to you against your own references.")
	}
	if !sum.OK() {
		return exitFailed
	}
	return exitOK
}

func countCautions(tab *compare.Table) []demoCaution {
	n := map[string]int{}
	for _, c := range tab.Cautions {
		n[c.Code]++
	}
	var out []demoCaution
	for _, l := range tab.Legend {
		if n[l.Code] > 0 {
			out = append(out, demoCaution{Code: l.Code, Title: l.Title, Count: n[l.Code]})
			delete(n, l.Code)
		}
	}
	var rest []string
	for c := range n {
		rest = append(rest, c)
	}
	sort.Strings(rest)
	for _, c := range rest {
		out = append(out, demoCaution{Code: c, Title: c, Count: n[c]})
	}
	return out
}

// demoKinds are the quantity kinds the terminal summary shows, in order.
var demoKinds = []struct{ kind, title string }{
	{compare.KindBondLength, "bond lengths"},
	{compare.KindAngle, "bond angles"},
	{compare.KindDipoleAxis, "dipole moments along the bond or symmetry axis"},
	{compare.KindDipoleNorm, "dipole magnitudes"},
	{compare.KindQuadrupole, "quadrupole components"},
}

// writeDemoSummary prints accuracy (MSE) and precision (SD) per level and
// kind, then the cautions raised.
func writeDemoSummary(w io.Writer, tab *compare.Table, cautions []demoCaution) {
	fmt.Fprintln(w, "Accuracy (mean signed error, computed − experiment) and precision (standard deviation of the errors):")
	for _, k := range demoKinds {
		var rows []compare.Stats
		for _, s := range tab.Stats {
			if s.Kind == k.kind {
				rows = append(rows, s)
			}
		}
		if len(rows) == 0 {
			continue
		}
		fmt.Fprintf(w, "\n%s (%s)\n", k.title, rows[0].Unit)
		t := table{head: []string{"level", "n", "MSE", "SD", "MAE", "largest |error|"}, right: []bool{false, true, true, true, true, false}}
		for _, s := range rows {
			sd := fmt.Sprintf("%.2f", s.SD)
			if s.N < 2 {
				sd = "·"
			}
			t.add(s.Level, fmt.Sprint(s.N), fmt.Sprintf("%+.2f", s.MSE), sd, fmt.Sprintf("%.2f", s.MAE), fmt.Sprintf("%.2f at %s", s.MaxAbs, s.MaxAt))
		}
		t.write(w)
	}
	if v := bondVerdict(tab); v != "" {
		fmt.Fprintf(w, "\n%s\n", v)
	}
	fmt.Fprintln(w)
	if len(cautions) == 0 {
		fmt.Fprintln(w, "Cautions raised: none.")
	} else {
		fmt.Fprintln(w, "Cautions raised (explained in the document):")
		for _, c := range cautions {
			fmt.Fprintf(w, "  %-12s %3d× %s\n", c.Code, c.Count, c.Title)
		}
	}
	fmt.Fprintln(w)
}

// bondVerdict says in one sentence how the levels' bond lengths rank for
// each basis set, by mean absolute error (signed errors of opposite sign
// would cancel in a mean signed error), from the numbers.
func bondVerdict(tab *compare.Table) string {
	levels := map[string]compare.Level{}
	for _, l := range tab.Levels {
		levels[l.Label] = l
	}
	var rows []compare.Stats
	for _, s := range tab.Stats {
		if s.Kind == compare.KindBondLength {
			rows = append(rows, s)
		}
	}
	if len(rows) < 2 {
		return ""
	}
	byBasis := map[string][]compare.Stats{}
	var order []string
	for _, s := range rows {
		b := levels[s.Level].Basis
		if _, ok := byBasis[b]; !ok {
			order = append(order, b)
		}
		byBasis[b] = append(byBasis[b], s)
	}
	var parts []string
	for _, b := range order {
		rs := byBasis[b]
		sort.SliceStable(rs, func(i, j int) bool { return rs[i].MAE < rs[j].MAE })
		var bits []string
		for _, s := range rs {
			name := strings.TrimSuffix(s.Level, "/"+b)
			bits = append(bits, fmt.Sprintf("%s %.2f %s (mean signed %s)", name, s.MAE, s.Unit, signedFixed(s.MSE, 2)))
		}
		parts = append(parts, fmt.Sprintf("with %s: %s", b, strings.Join(bits, ", ")))
	}
	return "Bond lengths, mean absolute error from closest to farthest — " + strings.Join(parts, "; ") + "."
}

// signedFixed prints v with its sign ("+0.38", "-0.12") and prec
// decimals, as the tables above it do; a value that rounds to zero prints
// as "0.00".
func signedFixed(v float64, prec int) string {
	s := fixed(v, prec)
	if strings.Trim(s, "-0.") == "" || strings.HasPrefix(s, "-") {
		return s
	}
	return "+" + s
}
