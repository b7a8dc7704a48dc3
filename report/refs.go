package report

import (
	"regexp"
	"strings"

	"moltrail/engine/molecule"
)

// A basis file's "references" are the header lines of the data it was
// taken from: library stamps, a column heading, and per-element citations
// that may run over several lines ("Li - Ne: T.H. Dunning, …"). citations
// drops the stamps, joins continuation lines, and keeps the citations
// whose element prefix covers an element in use (or cannot be read, so
// that nothing is dropped on a guess).

var (
	refStamp  = regexp.MustCompile(`(?i)(basis set exchange|\bEMSL\b|^elements\s+references|^-{3,}|^merged from|^updated\s)`)
	refPrefix = regexp.MustCompile(`^([A-Z][A-Za-z0-9 ,\-()]*?)\s*:\s*(.*)$`)
	rangePart = regexp.MustCompile(`^([A-Z][a-z]?)\s*(?:-\s*([A-Z][a-z]?))?$`)
)

// citations returns the cleaned citations relevant to the elements used
// (all of them when used is empty).
func citations(lines []string, used map[int]bool) []string {
	type entry struct {
		prefix, text string
	}
	var es []entry
	for _, l := range lines {
		l = strings.TrimSpace(l)
		if l == "" || refStamp.MatchString(l) {
			continue
		}
		if m := refPrefix.FindStringSubmatch(l); m != nil && looksLikeElements(m[1]) {
			es = append(es, entry{prefix: strings.TrimSpace(m[1]), text: m[2]})
			continue
		}
		if len(es) == 0 {
			es = append(es, entry{text: l})
			continue
		}
		es[len(es)-1].text += " " + l
	}
	var out []string
	seen := map[string]bool{}
	for _, e := range es {
		t := strings.Join(strings.Fields(e.text), " ")
		if t == "" || (len(used) > 0 && e.prefix != "" && !covers(e.prefix, used)) {
			continue
		}
		if !seen[t] {
			seen[t] = true
			out = append(out, t)
		}
	}
	return out
}

// looksLikeElements reports whether a prefix names elements ("H", "Li - Ne",
// "H, Li - Ne", "Li, Be, Na, and Mg", "K,Ca - ", "H He Li …").
func looksLikeElements(p string) bool {
	parts := splitElems(p)
	if len(parts) == 0 {
		return false
	}
	for _, q := range parts {
		m := rangePart.FindStringSubmatch(q)
		if m == nil {
			return false
		}
		if _, err := molecule.Lookup(m[1]); err != nil {
			return false
		}
	}
	return true
}

func splitElems(p string) []string {
	p = strings.ReplaceAll(p, " and ", ",")
	var out []string
	for _, q := range strings.Split(p, ",") {
		q = strings.TrimSpace(strings.TrimSuffix(strings.TrimSpace(q), "-"))
		if q == "" {
			continue
		}
		if !strings.Contains(q, "-") && strings.Contains(q, " ") {
			out = append(out, strings.Fields(q)...)
			continue
		}
		out = append(out, q)
	}
	return out
}

// covers reports whether the element prefix includes a used element; a
// prefix it cannot read counts as covering.
func covers(p string, used map[int]bool) bool {
	for _, q := range splitElems(p) {
		m := rangePart.FindStringSubmatch(q)
		if m == nil {
			return true
		}
		a, err := molecule.Lookup(m[1])
		if err != nil {
			return true
		}
		lo, hi := a.Z, a.Z
		if m[2] != "" {
			b, err := molecule.Lookup(m[2])
			if err != nil {
				return true
			}
			hi = b.Z
		}
		for z := lo; z <= hi; z++ {
			if used[z] {
				return true
			}
		}
	}
	return false
}
