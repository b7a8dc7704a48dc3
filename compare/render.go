package compare

import (
	"encoding/csv"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"time"
	"unicode/utf8"
)

// WriteText writes the terminal rendering of a table: blocks separated by
// titled rules, values aligned in columns, every caution code explained.
func WriteText(w io.Writer, t *Table) error {
	p := &printer{w: w}
	p.line("moltrail comparison against %q  (%d entries, %s)", t.RefSet.Name, t.RefSet.Entries, t.RefSet.Origin)
	if len(t.Levels) == 0 {
		p.line("")
		p.line("no converged record matches a molecule of this reference set")
	}
	var labels []string
	for _, l := range t.Levels {
		labels = append(labels, l.Label)
	}
	if len(labels) > 0 {
		p.line("levels: %s", strings.Join(labels, " · "))
	}

	if len(t.Picked) > 0 {
		p.rule("records used")
		g := &grid{head: []string{"molecule", "level", "for", "record", "started UTC", "why this one"}}
		for _, pk := range t.Picked {
			g.add(pk.Molecule, pk.Level, pk.Purpose, shortID(pk.RecordID), when(pk.DateUTC), pk.Reason)
		}
		p.grid(g)
	}

	for _, lv := range t.Levels {
		var rows []Deviation
		for _, d := range t.Deviations {
			if d.Level == lv.Label {
				rows = append(rows, d)
			}
		}
		if len(rows) == 0 {
			continue
		}
		p.rule("deviations at " + lv.Label + "  (computed − reference)")
		g := &grid{head: []string{"molecule", "quantity", "unit", "reference", "± unc", "computed", "deviation", "rel.", "cautions"}, right: map[int]bool{3: true, 4: true, 5: true, 6: true, 7: true}}
		for _, d := range rows {
			rel := "·"
			if d.Relative != nil {
				rel = fmt.Sprintf("%+.1f%%", 100**d.Relative)
			}
			ref := num(d.Reference, d.Unit)
			if d.FromMemory {
				ref += "ᵐ"
			}
			g.add(d.Molecule, d.Quantity, d.Unit, ref, num(d.Uncertainty, d.Unit), num(d.Computed, d.Unit), signed(d.Signed, d.Unit), rel, strings.Join(d.Cautions, " "))
		}
		p.grid(g)
	}

	if len(t.Stats) > 0 {
		p.rule("accuracy and precision per level and kind")
		g := &grid{head: []string{"level", "kind", "unit", "N", "MSE", fmt.Sprintf("%.0f%% CI of MSE", 100*t.Settings.Confidence), "SD", "MAE", "RMS", "largest", "at", "flagged"},
			right: map[int]bool{3: true, 4: true, 6: true, 7: true, 8: true, 9: true, 11: true}}
		for _, s := range t.Stats {
			ci := "·"
			if s.CILow != nil {
				ci = "[" + signed(*s.CILow, s.Unit) + ", " + signed(*s.CIHigh, s.Unit) + "]"
			}
			g.add(s.Level, s.Kind, s.Unit, strconv.Itoa(s.N), signed(s.MSE, s.Unit), ci, num(s.SD, s.Unit), num(s.MAE, s.Unit), num(s.RMS, s.Unit), signed(s.MaxSigned, s.Unit), s.MaxAt, strconv.Itoa(s.Flagged))
		}
		p.grid(g)
	}

	if len(t.LevelDiffs) > 0 {
		p.rule("level against level  (paired over common entries)")
		for _, d := range t.LevelDiffs {
			ci := ""
			if d.MAECILow != nil {
				ci = fmt.Sprintf(", CI [%s, %s]", signed(*d.MAECILow, d.Unit), signed(*d.MAECIHigh, d.Unit))
			}
			mark := " "
			if d.Significant {
				mark = "▲"
			}
			p.line(" %s %s vs %s, %s (%d): MAE difference %s %s%s", mark, d.LevelA, d.LevelB, d.Kind, d.N, signed(d.MAEDiff, d.Unit), d.Unit, ci)
			p.line("     %s", d.Verdict)
		}
	}

	if len(t.Cautions) > 0 {
		p.rule("cautions")
		for _, c := range t.Cautions {
			where := strings.TrimSpace(strings.Join(nonEmpty(c.Molecule, c.Quantity, c.Level), " · "))
			if c.RecordID != "" && !strings.Contains(c.RecordID, "+") {
				where += " · record " + shortID(c.RecordID)
			}
			p.line(" ‼ %-11s %s", c.Code, where)
			p.wrapped("   ", "   ", c.Detail)
		}
	}

	if len(t.Excluded) > 0 {
		p.rule("records left out")
		g := &grid{head: []string{"record", "molecule", "level", "status", "reason"}}
		for _, x := range t.Excluded {
			g.add(shortID(x.RecordID), x.Molecule, x.Level, x.Status, x.Reason)
		}
		p.grid(g)
	}

	if len(t.Unmatched) > 0 {
		p.rule("entries without a value")
		g := &grid{head: []string{"entry", "level", "reason"}}
		for _, u := range t.Unmatched {
			g.add(u.EntryID, u.Level, u.Reason)
		}
		p.grid(g)
	}

	p.rule("what the caution codes mean")
	for _, c := range t.Legend {
		p.wrapped(fmt.Sprintf(" %-11s ", c.Code), strings.Repeat(" ", 13), c.Title+". "+c.Explain)
	}
	p.rule("read before use")
	for _, n := range t.Notes {
		p.wrapped(" · ", "   ", n)
	}
	p.line(" ᵐ marks a reference value recalled from its source, not transcribed.")
	return p.err
}

// when shortens an RFC 3339 time to the second, in UTC (ISO 8601, as every
// moltrail command prints times).
func when(s string) string {
	t, err := time.Parse(time.RFC3339Nano, s)
	if err != nil {
		return s
	}
	return t.UTC().Format("2006-01-02T15:04:05Z")
}

func nonEmpty(s ...string) []string {
	var out []string
	for _, x := range s {
		if x != "" {
			out = append(out, x)
		}
	}
	return out
}

// digits is the number of decimals shown per natural unit.
func digits(unit string) int {
	switch unit {
	case "pm", "deg", "kJ/mol":
		return 2
	case "D":
		return 4
	case "D·Å":
		return 3
	}
	return 4
}

func num(v float64, unit string) string { return strconv.FormatFloat(v, 'f', digits(unit), 64) }

func signed(v float64, unit string) string {
	s := strconv.FormatFloat(v, 'f', digits(unit), 64)
	if v >= 0 || strings.Trim(s, "-0.") == "" {
		return "+" + strings.TrimPrefix(s, "-")
	}
	return s
}

type printer struct {
	w   io.Writer
	err error
}

func (p *printer) line(f string, a ...any) {
	if p.err != nil {
		return
	}
	_, p.err = fmt.Fprintf(p.w, f+"\n", a...)
}

// wrapped prints text word-wrapped to 78 columns: the first line after
// first, the following lines after indent.
func (p *printer) wrapped(first, indent, text string) {
	const width = 78
	line := first
	n := utf8.RuneCountInString(line)
	empty := true
	for _, w := range strings.Fields(text) {
		wl := utf8.RuneCountInString(w)
		if !empty && n+1+wl > width {
			p.line("%s", line)
			line, n, empty = indent, utf8.RuneCountInString(indent), true
		}
		if !empty {
			line += " "
			n++
		}
		line += w
		n += wl
		empty = false
	}
	p.line("%s", line)
}

// rule prints a block title: a blank line, then "━━ title ━━━…" to 78 columns.
func (p *printer) rule(title string) {
	p.line("")
	s := "━━ " + title + " "
	n := 78 - utf8.RuneCountInString(s)
	if n < 3 {
		n = 3
	}
	p.line("%s%s", s, strings.Repeat("━", n))
}

type grid struct {
	head  []string
	rows  [][]string
	right map[int]bool
}

func (g *grid) add(cells ...string) { g.rows = append(g.rows, cells) }

func (p *printer) grid(g *grid) {
	w := make([]int, len(g.head))
	for i, h := range g.head {
		w[i] = utf8.RuneCountInString(h)
	}
	for _, r := range g.rows {
		for i, c := range r {
			if n := utf8.RuneCountInString(c); n > w[i] {
				w[i] = n
			}
		}
	}
	row := func(cells []string) string {
		var b strings.Builder
		b.WriteString(" ")
		for i, c := range cells {
			pad := strings.Repeat(" ", w[i]-utf8.RuneCountInString(c))
			if g.right[i] {
				b.WriteString(pad + c)
			} else {
				b.WriteString(c + pad)
			}
			if i < len(cells)-1 {
				b.WriteString("  ")
			}
		}
		return strings.TrimRight(b.String(), " ")
	}
	p.line("%s", row(g.head))
	var under []string
	for i := range g.head {
		under = append(under, strings.Repeat("┄", w[i]))
	}
	p.line("%s", row(under))
	for _, r := range g.rows {
		p.line("%s", row(r))
	}
}

// CSVHeader is the header row of WriteCSV.
var CSVHeader = []string{"entry_id", "level", "record_id", "molecule", "formula", "quantity", "kind", "unit",
	"reference", "uncertainty", "computed", "signed_deviation", "relative_deviation", "cautions",
	"reference_kind", "reference_from_memory", "reference_source"}

// WriteCSV writes one row per deviation (RFC 4180). Numbers are written in
// full precision; an absent relative deviation is an empty field.
func WriteCSV(w io.Writer, t *Table) error {
	cw := csv.NewWriter(w)
	if err := cw.Write(CSVHeader); err != nil {
		return err
	}
	f := func(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }
	for _, d := range t.Deviations {
		rel := ""
		if d.Relative != nil && !math.IsNaN(*d.Relative) {
			rel = f(*d.Relative)
		}
		if err := cw.Write([]string{d.EntryID, d.Level, d.RecordID, d.Molecule, d.Formula, d.Quantity, d.Kind, d.Unit,
			f(d.Reference), f(d.Uncertainty), f(d.Computed), f(d.Signed), rel, strings.Join(d.Cautions, ";"),
			d.RefKind, strconv.FormatBool(d.FromMemory), d.RefSource}); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}

// StatsCSVHeader is the header row of WriteStatsCSV.
var StatsCSVHeader = []string{"level", "kind", "unit", "n", "mean_signed_error", "mse_ci_low", "mse_ci_high", "ci_confidence",
	"standard_deviation", "mean_absolute_error", "rms_error", "max_abs_error", "max_signed_error", "max_at", "flagged"}

// WriteStatsCSV writes one row per level × kind.
func WriteStatsCSV(w io.Writer, t *Table) error {
	cw := csv.NewWriter(w)
	if err := cw.Write(StatsCSVHeader); err != nil {
		return err
	}
	f := func(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }
	for _, s := range t.Stats {
		lo, hi := "", ""
		if s.CILow != nil {
			lo, hi = f(*s.CILow), f(*s.CIHigh)
		}
		if err := cw.Write([]string{s.Level, s.Kind, s.Unit, strconv.Itoa(s.N), f(s.MSE), lo, hi, f(s.Confidence),
			f(s.SD), f(s.MAE), f(s.RMS), f(s.MaxAbs), f(s.MaxSigned), s.MaxAt, strconv.Itoa(s.Flagged)}); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}
