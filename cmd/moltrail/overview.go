package main

import (
	"fmt"
	"io"
	"sort"
	"strings"

	"moltrail/engine"
)

// overview is what the archive holds per molecule and level: the
// `list --overview` table.
type overview struct {
	Molecules []string       `json:"molecules"`
	Levels    []string       `json:"levels"`
	Cells     []overviewCell `json:"cells"`
}

// overviewCell counts one molecule's records at one level (the level at
// which they were computed, whatever geometry they used).
type overviewCell struct {
	Molecule     string   `json:"molecule"`
	Level        string   `json:"level"`
	Optimised    int      `json:"optimised"`
	SinglePoints int      `json:"single_points"`
	Failed       int      `json:"failed"`
	NotConverged int      `json:"not_converged"`
	Records      []string `json:"records"`
}

// buildOverview groups the rows by molecule (alphabetical) and level (in
// the order they first appear, which is the archive's time order).
func buildOverview(rows []listRow) overview {
	ov := overview{Molecules: []string{}, Levels: []string{}, Cells: []overviewCell{}}
	cells := map[[2]string]*overviewCell{}
	seenLevel := map[string]bool{}
	seenMol := map[string]bool{}
	for _, r := range rows {
		lv := r.JobLevel + angularMark(r.Angular)
		if !seenLevel[lv] {
			seenLevel[lv] = true
			ov.Levels = append(ov.Levels, lv)
		}
		if !seenMol[r.Molecule] {
			seenMol[r.Molecule] = true
			ov.Molecules = append(ov.Molecules, r.Molecule)
		}
		k := [2]string{r.Molecule, lv}
		c := cells[k]
		if c == nil {
			c = &overviewCell{Molecule: r.Molecule, Level: lv}
			cells[k] = c
		}
		c.Records = append(c.Records, r.ID)
		switch {
		case r.Status == engine.StatusFailed:
			c.Failed++
		case r.Status == engine.StatusNotConverged:
			c.NotConverged++
		case r.Task == "optimize":
			c.Optimised++
		default:
			c.SinglePoints++
		}
	}
	sort.Slice(ov.Molecules, func(i, j int) bool {
		a, b := strings.ToLower(ov.Molecules[i]), strings.ToLower(ov.Molecules[j])
		if a != b {
			return a < b
		}
		return ov.Molecules[i] < ov.Molecules[j]
	})
	for _, m := range ov.Molecules {
		for _, l := range ov.Levels {
			if c := cells[[2]string{m, l}]; c != nil {
				ov.Cells = append(ov.Cells, *c)
			}
		}
	}
	return ov
}

// text is the cell as printed: "opt", "sp×2", "opt sp (1 failed)", "·".
func (c *overviewCell) text() string {
	if c == nil {
		return "·"
	}
	count := func(word string, n int) string {
		if n == 1 {
			return word
		}
		return fmt.Sprintf("%s×%d", word, n)
	}
	var parts []string
	if c.Optimised > 0 {
		parts = append(parts, count("opt", c.Optimised))
	}
	if c.SinglePoints > 0 {
		parts = append(parts, count("sp", c.SinglePoints))
	}
	s := strings.Join(parts, " ")
	var bad []string
	if c.Failed > 0 {
		bad = append(bad, fmt.Sprintf("%d failed", c.Failed))
	}
	if c.NotConverged > 0 {
		bad = append(bad, fmt.Sprintf("%d not converged", c.NotConverged))
	}
	if len(bad) > 0 {
		if s != "" {
			s += " "
		}
		s += "(" + strings.Join(bad, ", ") + ")"
	}
	return s
}

func writeOverview(w io.Writer, ov overview) {
	if len(ov.Cells) == 0 {
		fmt.Fprintln(w, "no records match")
		return
	}
	at := map[[2]string]*overviewCell{}
	n := 0
	for i := range ov.Cells {
		c := &ov.Cells[i]
		at[[2]string{c.Molecule, c.Level}] = c
		n += len(c.Records)
	}
	t := &table{head: append([]string{"molecule"}, ov.Levels...)}
	for _, m := range ov.Molecules {
		row := []string{m}
		for _, l := range ov.Levels {
			row = append(row, at[[2]string{m, l}].text())
		}
		t.add(row...)
	}
	t.write(w)
	fmt.Fprintf(w, "%d record(s), %d molecule(s) × %d level(s). opt: a converged optimisation; sp: a converged single point (at any geometry; `moltrail list` shows which); ·: none; ° marks Cartesian d/f functions\n",
		n, len(ov.Molecules), len(ov.Levels))
}
