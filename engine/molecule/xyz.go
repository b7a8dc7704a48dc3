package molecule

import (
	"bufio"
	"fmt"
	"io"
	"math"
	"os"
	"strconv"
	"strings"
)

// DuplicateToleranceAngstrom: two atoms closer than this are reported as a
// duplicated position (a copy-paste slip, never a real structure).
const DuplicateToleranceAngstrom = 1e-3

// ReadXYZFile reads an XYZ file; errors name the file and line.
func ReadXYZFile(path string) (*Molecule, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("cannot open molecule file: %w", err)
	}
	defer f.Close()
	m, err := ParseXYZ(f, path)
	if err != nil {
		return nil, err
	}
	return m, nil
}

// ParseXYZ reads the XYZ layout: an atom count, a comment line (the
// molecule's name when not empty), then one `Symbol x y z` line per atom in
// ångström. Blank lines after the last atom are allowed; anything else is an
// error naming the source and line. Charge and multiplicity are left at 0
// (multiplicity 0 means "the default").
func ParseXYZ(r io.Reader, source string) (*Molecule, error) {
	sc := bufio.NewScanner(r)
	sc.Buffer(make([]byte, 1<<16), 1<<20)
	var lines []string
	for sc.Scan() {
		lines = append(lines, strings.TrimRight(sc.Text(), "\r"))
	}
	if err := sc.Err(); err != nil {
		return nil, fmt.Errorf("%s: %w", source, err)
	}
	if len(lines) == 0 || strings.TrimSpace(lines[0]) == "" {
		return nil, fmt.Errorf("%s:1: expected the atom count on the first line, found an empty line", source)
	}
	n, err := strconv.Atoi(strings.TrimSpace(lines[0]))
	if err != nil || n < 1 {
		return nil, fmt.Errorf("%s:1: the first line must be a positive atom count, found %q", source, strings.TrimSpace(lines[0]))
	}
	if len(lines) < 2 {
		return nil, fmt.Errorf("%s:2: missing the comment line after the atom count", source)
	}
	m := &Molecule{Name: strings.TrimSpace(lines[1])}
	for i := 0; i < n; i++ {
		ln := i + 3
		if ln > len(lines) || strings.TrimSpace(lines[ln-1]) == "" {
			return nil, fmt.Errorf("%s:%d: the count line promises %d atoms but only %d atom lines follow", source, ln, n, i)
		}
		f := strings.Fields(lines[ln-1])
		if len(f) != 4 {
			return nil, fmt.Errorf("%s:%d: expected `Symbol x y z`, found %d fields", source, ln, len(f))
		}
		el, err := Lookup(f[0])
		if err != nil {
			return nil, fmt.Errorf("%s:%d: %v", source, ln, err)
		}
		var pos [3]float64
		for k := 0; k < 3; k++ {
			v, err := strconv.ParseFloat(f[k+1], 64)
			if err != nil {
				return nil, fmt.Errorf("%s:%d: coordinate %c %q is not a number", source, ln, "xyz"[k], f[k+1])
			}
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, fmt.Errorf("%s:%d: coordinate %c is %s, which is not a position", source, ln, "xyz"[k], f[k+1])
			}
			pos[k] = v * AngstromBohr
		}
		for j, b := range m.Atoms {
			if Dist(b.PosBohr, pos)*BohrAngstrom < DuplicateToleranceAngstrom {
				return nil, fmt.Errorf("%s:%d: atom %d (%s) sits on the position of atom %d (%s, line %d)", source, ln, i+1, el.Symbol, j+1, b.Symbol, j+3)
			}
		}
		m.Atoms = append(m.Atoms, Atom{Symbol: el.Symbol, Z: el.Z, PosBohr: pos})
	}
	for ln := n + 3; ln <= len(lines); ln++ {
		if strings.TrimSpace(lines[ln-1]) != "" {
			return nil, fmt.Errorf("%s:%d: the count line promises %d atoms but more atom lines follow", source, ln, n)
		}
	}
	return m, nil
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
