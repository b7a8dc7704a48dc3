package molecule

import (
	"fmt"
	"sort"
	"strconv"
	"strings"
	"unicode/utf8"
)

// DuplicateToleranceAngstrom: two atoms closer than this are reported as a
// duplicated position (a copy-paste slip, never a real structure).
const DuplicateToleranceAngstrom = 1e-3

// ReadXYZFile reads an XYZ or extended XYZ file; errors name the file and line.
func ReadXYZFile(path string) (*Molecule, error) {
	in, err := ReadFile(path)
	if err != nil {
		return nil, err
	}
	return in.Mol, nil
}

// readXYZ reads the XYZ layout: an atom count, a comment line, then one
// `Symbol x y z` line per atom in ångström (the symbol may also be an
// atomic number). Columns after x y z are ignored, with a note.
//
// The comment line: `key=value` words among charge, multiplicity (or mult)
// and name are read as such (charge and multiplicity as integers); the other
// words are the molecule's name. A comment line of the extended XYZ layout
// (a Properties or Lattice key, or nothing but key=value words) gives the
// name only through a name key; its Properties key names the columns (the
// species or Z column and the 3 pos columns are used, the others ignored),
// a Lattice or periodic pbc is ignored with a note (the structure is an
// isolated molecule), and other keys are ignored with a note.
//
// Blank lines after the last atom are allowed; a second structure (another
// count line) or any other text is an error naming the source and line.
// Charge and multiplicity not given are left at 0 (multiplicity 0 means
// "the default").
func readXYZ(l *lineReader) (*Input, error) {
	first, ln, ok, err := l.next()
	if err != nil {
		return nil, err
	}
	if !ok || strings.TrimSpace(first) == "" {
		return nil, l.errf(1, "expected the atom count on the first line, found %s", emptyOrEnd(ok))
	}
	n, err := strconv.Atoi(strings.TrimSpace(first))
	if err != nil || n < 1 {
		return nil, l.errf(ln, "the first line must be a positive atom count, found %q", clip(strings.TrimSpace(first)))
	}
	if n > MaxAtoms {
		return nil, l.errf(ln, "%s", tooMany(n))
	}
	comment, ln, ok, err := l.next()
	if err != nil {
		return nil, err
	}
	if !ok {
		return nil, l.errf(2, "missing the comment line after the atom count")
	}
	if !utf8.ValidString(comment) {
		return nil, l.errf(ln, "the comment line is not valid UTF-8 text")
	}
	in := &Input{Mol: &Molecule{}, Format: InputXYZ}
	cols, err := readComment(in, comment, func(f string, a ...any) error { return l.errf(ln, f, a...) })
	if err != nil {
		return nil, err
	}
	var extraLines []int
	for i := 0; i < n; i++ {
		s, ln, ok, err := l.next()
		if err != nil {
			return nil, err
		}
		if !ok || strings.TrimSpace(s) == "" {
			return nil, l.errf(ln, "the count line promises %d atoms but only %d atom lines follow", n, i)
		}
		f := strings.Fields(s)
		if cols.total > 0 && len(f) != cols.total {
			return nil, l.errf(ln, "the Properties key describes %d columns, found %d", cols.total, len(f))
		}
		if len(f) < 4 {
			return nil, l.errf(ln, "expected `Symbol x y z`, found %d fields", len(f))
		}
		if cols.total == 0 && len(f) > 4 {
			extraLines = append(extraLines, ln)
		}
		el, err := element(f[cols.species], cols.byZ)
		if err != nil {
			return nil, l.errf(ln, "%v", err)
		}
		var pos [3]float64
		for k := 0; k < 3; k++ {
			v, err := coordinate(f[cols.pos+k])
			if err != nil {
				return nil, l.errf(ln, "coordinate %c %v", "xyz"[k], err)
			}
			pos[k] = v
		}
		if err := addAtom(in.Mol, el, pos, func(j int) string { return fmt.Sprintf("line %d", j+3) }); err != nil {
			return nil, l.errf(ln, "%v", err)
		}
	}
	if len(extraLines) > 0 {
		in.Notes = append(in.Notes, fmt.Sprintf("columns after x y z (%s) were ignored", lineSpan(extraLines)))
	}
	for {
		s, ln, ok, err := l.next()
		if err != nil {
			return nil, err
		}
		if !ok {
			break
		}
		t := strings.TrimSpace(s)
		if t == "" {
			continue
		}
		if isCount(t) {
			return nil, l.errf(ln, "a second structure begins here; moltrail reads files that hold one structure")
		}
		return nil, l.errf(ln, "the count line promises %d atoms but more atom lines follow", n)
	}
	return in, nil
}

// columns says where the species and positions stand in an atom line.
type columns struct {
	species, pos int
	byZ          bool // the species column holds atomic numbers
	total        int  // columns per line from a Properties key (0 = free)
}

// known comment-line keys of our own reading.
var nameKeys = map[string]bool{"charge": true, "multiplicity": true, "mult": true, "name": true}

// readComment reads the comment line into in (name, charge, multiplicity,
// notes) and returns the column layout of the atom lines.
func readComment(in *Input, comment string, errf func(string, ...any) error) (columns, error) {
	cols := columns{species: 0, pos: 1}
	words := commentWords(comment)
	ext := false
	allKV := len(words) > 0
	for _, w := range words {
		if w.hasValue {
			if w.key == "Properties" || w.key == "Lattice" {
				ext = true
			}
		} else {
			allKV = false
		}
	}
	ext = ext || allKV
	if ext {
		in.Format = InputExtendedXYZ
	}
	var name []string
	var ignored []string
	keyed := false
	for _, w := range words {
		key := w.key
		if !w.hasValue {
			if ext {
				ignored = append(ignored, key)
				continue
			}
			name = append(name, w.text)
			continue
		}
		switch lk := strings.ToLower(key); {
		case lk == "charge":
			v, err := strconv.Atoi(w.value)
			if err != nil {
				return cols, errf("the comment line's charge=%s is not an integer", clip(w.value))
			}
			in.Mol.Charge, in.ChargeGiven, keyed = v, true, true
		case lk == "multiplicity" || lk == "mult":
			v, err := strconv.Atoi(w.value)
			if err != nil || v < 1 {
				return cols, errf("the comment line's %s=%s is not a positive integer", key, clip(w.value))
			}
			in.Mol.Multiplicity, in.MultiplicityGiven, keyed = v, true, true
		case lk == "name":
			in.Mol.Name, keyed = strings.TrimSpace(w.value), true
		case ext && key == "Properties":
			c, err := propertyColumns(w.value)
			if err != nil {
				return cols, errf("Properties=%s: %v", clip(w.value), err)
			}
			cols = c
		case ext && key == "Lattice":
			in.Notes = append(in.Notes, "the Lattice of the extended XYZ comment line was ignored: the structure is treated as an isolated molecule")
		case ext && key == "pbc":
			if strings.ContainsAny(w.value, "Tt") {
				in.Notes = append(in.Notes, "the periodic boundary conditions (pbc) of the extended XYZ comment line were ignored: the structure is treated as an isolated molecule")
			}
		case ext:
			ignored = append(ignored, key)
		default:
			name = append(name, w.text)
		}
	}
	switch {
	case !ext && !keyed:
		in.Mol.Name = strings.TrimSpace(comment)
	case !ext && len(name) > 0:
		in.Mol.Name = strings.Join(name, " ")
	}
	if len(ignored) > 0 {
		sort.Strings(ignored)
		in.Notes = append(in.Notes, "comment-line keys not used: "+strings.Join(ignored, ", "))
	}
	return cols, nil
}

// commentWord is one word of a comment line: key=value (value unquoted) or plain text.
type commentWord struct {
	text, key, value string
	hasValue         bool
}

// commentWords splits a comment line at white space outside double quotes.
func commentWords(s string) []commentWord {
	var out []commentWord
	var cur strings.Builder
	inQuote, started := false, false
	flush := func() {
		if !started {
			return
		}
		t := cur.String()
		w := commentWord{text: t, key: t}
		if k, v, ok := strings.Cut(t, "="); ok && k != "" && !strings.Contains(k, "\"") {
			w.key, w.hasValue = k, true
			if len(v) >= 2 && v[0] == '"' && v[len(v)-1] == '"' {
				v = v[1 : len(v)-1]
			}
			w.value = v
		}
		out = append(out, w)
		cur.Reset()
		started = false
	}
	for _, r := range s {
		switch {
		case r == '"':
			inQuote = !inQuote
			cur.WriteRune(r)
			started = true
		case !inQuote && (r == ' ' || r == '\t'):
			flush()
		default:
			cur.WriteRune(r)
			started = true
		}
	}
	flush()
	return out
}

// propertyColumns reads an extended XYZ Properties value
// (name:type:count triples) into the column layout.
func propertyColumns(v string) (columns, error) {
	p := strings.Split(v, ":")
	if len(p)%3 != 0 {
		return columns{}, fmt.Errorf("expected name:type:count triples")
	}
	c := columns{species: -1, pos: -1}
	for i := 0; i < len(p); i += 3 {
		name, typ := p[i], strings.ToUpper(p[i+1])
		cnt, err := strconv.Atoi(p[i+2])
		if err != nil || cnt < 1 || cnt > 64 {
			return columns{}, fmt.Errorf("the count of %q is not a number from 1 to 64", name)
		}
		switch {
		case strings.EqualFold(name, "species") && typ == "S" && cnt == 1:
			c.species, c.byZ = c.total, false
		case name == "Z" && typ == "I" && cnt == 1 && c.species < 0:
			c.species, c.byZ = c.total, true
		case strings.EqualFold(name, "pos") && typ == "R" && cnt == 3:
			c.pos = c.total
		}
		c.total += cnt
	}
	if c.species < 0 || c.pos < 0 {
		return columns{}, fmt.Errorf("it needs a species:S:1 (or Z:I:1) and a pos:R:3 column")
	}
	return c, nil
}

// element reads an element symbol (or, when it is a number, an atomic number).
func element(s string, byZ bool) (Element, error) {
	if z, err := strconv.Atoi(s); err == nil {
		return ByZ(z)
	}
	if byZ {
		return Element{}, fmt.Errorf("the Z column holds %q, not an atomic number", clip(s))
	}
	return Lookup(clip(s))
}

func emptyOrEnd(ok bool) string {
	if ok {
		return "an empty line"
	}
	return "the end of the file"
}

// clip shortens text quoted in an error (at a character boundary).
func clip(s string) string {
	if len(s) <= 40 {
		return s
	}
	for i := range s {
		if i >= 40 {
			return s[:i] + "…"
		}
	}
	return s
}

// FormatXYZ writes the molecule in the XYZ layout (ångström, 10 decimals).
func FormatXYZ(m *Molecule) string {
	var b strings.Builder
	fmt.Fprintf(&b, "%d\n%s\n", len(m.Atoms), m.Name)
	for _, a := range m.Atoms {
		fmt.Fprintf(&b, "%-2s %16.10f %16.10f %16.10f\n", a.Symbol,
			a.PosBohr[0]*BohrAngstrom, a.PosBohr[1]*BohrAngstrom, a.PosBohr[2]*BohrAngstrom)
	}
	return b.String()
}
