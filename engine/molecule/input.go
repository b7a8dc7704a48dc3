package molecule

import (
	"bufio"
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
)

// Limits of the molecule readers. A file or a molecule beyond them is
// refused before any work is done: the readers never hold more than
// MaxFileBytes of a file, and the atom count is checked against MaxAtoms as
// soon as the file states it.
const (
	// MaxAtoms is the largest molecule moltrail accepts. The engine keeps
	// dense matrices over all basis functions, so far smaller molecules
	// already exhaust an ordinary machine; the limit only stops input that
	// could never be computed from consuming memory while it is read.
	MaxAtoms = 1000
	// MaxFileBytes is the most a molecule file may hold (16 MiB).
	MaxFileBytes = 16 << 20
	// MaxLineBytes is the longest line a molecule file may have.
	MaxLineBytes = 64 << 10
)

// Formats read by ReadFile and Read.
const (
	InputXYZ         = "xyz"
	InputExtendedXYZ = "extended-xyz"
	InputMolfile     = "mdl-molfile"
	InputSDF         = "sdf"
)

// FormatsRead is the sentence that names what the readers accept.
const FormatsRead = "moltrail reads XYZ and extended XYZ (.xyz, .extxyz) and MDL molfile/SDF V2000 (.mol, .sdf) files"

// Input is a molecule read from a file, with what the file said about it.
type Input struct {
	Mol    *Molecule
	Format string
	// ChargeGiven is true when the file states the total charge (a molfile's
	// formal charges, an extended XYZ "charge=" key); Mol.Charge holds it.
	ChargeGiven bool
	// MultiplicityGiven is true when the file states the multiplicity.
	MultiplicityGiven bool
	// Notes are plain-word remarks on what was read or left out.
	Notes []string
}

// ReadFile reads a molecule file in any format the readers accept, chosen
// by the file's extension or, for other names, by its content. At most
// MaxFileBytes are read.
func ReadFile(path string) (*Input, error) {
	f, err := os.Open(path)
	if err != nil {
		var pe *os.PathError
		if errors.As(err, &pe) {
			err = pe.Err
		}
		return nil, fmt.Errorf("molecule file %s: %v", path, err)
	}
	defer f.Close()
	if fi, err := f.Stat(); err == nil {
		if fi.IsDir() {
			return nil, fmt.Errorf("molecule file %s is a directory", path)
		}
		if fi.Mode().IsRegular() && fi.Size() > MaxFileBytes {
			return nil, fmt.Errorf("molecule file %s holds %d bytes; molecule files may hold at most %d MiB", path, fi.Size(), MaxFileBytes>>20)
		}
	}
	return Read(f, path)
}

// Read reads a molecule from r. source names it in errors; its extension,
// when it has a known one, chooses the format, else the content does.
func Read(r io.Reader, source string) (*Input, error) {
	lr := newLineReader(r, source)
	switch strings.ToLower(filepath.Ext(source)) {
	case ".xyz", ".extxyz":
		return readXYZ(lr)
	case ".mol", ".sdf", ".sd", ".mdl":
		return readMolfile(lr)
	}
	head, err := lr.peek(5)
	if err != nil {
		return nil, err
	}
	switch {
	case len(head) > 0 && isCount(head[0]):
		return readXYZ(lr)
	case len(head) >= 4 && molfileCounts(head[3]):
		return readMolfile(lr)
	case looksLikeZMatrix(head):
		return nil, fmt.Errorf("%s looks like a Z-matrix (internal coordinates), which moltrail does not read: %s; convert it to Cartesian coordinates first", source, FormatsRead)
	}
	return nil, fmt.Errorf("%s is not a molecule file moltrail can read: %s", source, FormatsRead)
}

// ParseXYZ reads an XYZ or extended XYZ molecule (see readXYZ) and returns
// the molecule alone.
func ParseXYZ(r io.Reader, source string) (*Molecule, error) {
	in, err := readXYZ(newLineReader(r, source))
	if err != nil {
		return nil, err
	}
	return in.Mol, nil
}

// lineReader hands out the lines of a file one at a time, refusing binary
// data, lines over MaxLineBytes and files over MaxFileBytes.
type lineReader struct {
	r      *bufio.Reader
	source string
	n      int      // lines handed out
	bytes  int      // bytes consumed
	ahead  []string // lines read by peek, not yet handed out
	eof    bool
}

func newLineReader(r io.Reader, source string) *lineReader {
	return &lineReader{r: bufio.NewReaderSize(r, 64<<10), source: source}
}

// errf formats an error at line ln of the source.
func (l *lineReader) errf(ln int, format string, a ...any) error {
	return fmt.Errorf("%s:%d: %s", l.source, ln, fmt.Sprintf(format, a...))
}

// raw reads one physical line (without its line end).
func (l *lineReader) raw() (string, bool, error) {
	if l.eof {
		return "", false, nil
	}
	var buf []byte
	for {
		chunk, err := l.r.ReadSlice('\n')
		if bytes.IndexByte(chunk, 0) >= 0 {
			return "", false, l.errf(l.n+len(l.ahead)+1, "the file holds binary data (a NUL byte): this is not a molecule file")
		}
		buf = append(buf, chunk...)
		if len(buf) > MaxLineBytes+2 {
			return "", false, l.errf(l.n+len(l.ahead)+1, "the line is longer than %d KiB: this is not a molecule file", MaxLineBytes>>10)
		}
		if err == bufio.ErrBufferFull {
			continue
		}
		if err == io.EOF {
			l.eof = true
			if len(buf) == 0 {
				return "", false, nil
			}
			break
		}
		if err != nil {
			return "", false, fmt.Errorf("%s: %v", l.source, err)
		}
		break
	}
	l.bytes += len(buf)
	if l.bytes > MaxFileBytes {
		return "", false, fmt.Errorf("%s is larger than %d MiB; molecule files may hold at most %d MiB", l.source, MaxFileBytes>>20, MaxFileBytes>>20)
	}
	s := strings.TrimRight(string(buf), "\r\n")
	return s, true, nil
}

// next returns the next line and its 1-based number; ok is false at the end.
func (l *lineReader) next() (string, int, bool, error) {
	if len(l.ahead) > 0 {
		s := l.ahead[0]
		l.ahead = l.ahead[1:]
		l.n++
		return s, l.n, true, nil
	}
	s, ok, err := l.raw()
	if !ok || err != nil {
		return "", l.n + 1, false, err
	}
	l.n++
	return s, l.n, true, nil
}

// peek returns up to k upcoming lines without handing them out.
func (l *lineReader) peek(k int) ([]string, error) {
	for len(l.ahead) < k {
		s, ok, err := l.raw()
		if err != nil {
			return nil, err
		}
		if !ok {
			break
		}
		l.ahead = append(l.ahead, s)
	}
	return l.ahead[:min(k, len(l.ahead))], nil
}

func isCount(s string) bool {
	_, err := strconv.Atoi(strings.TrimSpace(s))
	return err == nil
}

// looksLikeZMatrix: a lone element symbol, then a symbol with a reference
// atom and a distance.
func looksLikeZMatrix(head []string) bool {
	var lines [][]string
	for _, h := range head {
		if f := strings.Fields(h); len(f) > 0 {
			lines = append(lines, f)
		}
	}
	if len(lines) < 2 || len(lines[0]) != 1 || len(lines[1]) < 3 {
		return false
	}
	if _, err := Lookup(strings.TrimRight(lines[0][0], "0123456789")); err != nil {
		return false
	}
	_, err := strconv.Atoi(lines[1][1])
	return err == nil
}

// parseDecimal reads a coordinate written as a plain decimal number
// ([sign] digits [. digits] [e|E [sign] digits]). Hexadecimal floats,
// Fortran "D" exponents, digit separators, Inf and NaN are refused.
func parseDecimal(s string) (float64, error) {
	i := 0
	if i < len(s) && (s[i] == '+' || s[i] == '-') {
		i++
	}
	digits := 0
	for i < len(s) && s[i] >= '0' && s[i] <= '9' {
		i++
		digits++
	}
	if i < len(s) && s[i] == '.' {
		i++
		for i < len(s) && s[i] >= '0' && s[i] <= '9' {
			i++
			digits++
		}
	}
	if digits == 0 {
		return 0, errNotDecimal
	}
	if i < len(s) && (s[i] == 'e' || s[i] == 'E') {
		i++
		if i < len(s) && (s[i] == '+' || s[i] == '-') {
			i++
		}
		ed := 0
		for i < len(s) && s[i] >= '0' && s[i] <= '9' {
			i++
			ed++
		}
		if ed == 0 {
			return 0, errNotDecimal
		}
	}
	if i != len(s) {
		return 0, errNotDecimal
	}
	return strconv.ParseFloat(s, 64)
}

var errNotDecimal = errors.New("not a decimal number")

// MaxCoordinateAngstrom bounds the coordinates the readers accept.
const MaxCoordinateAngstrom = 1e6

// coordinate reads one coordinate in ångström and returns it in bohr; the
// error completes the phrase "coordinate x …".
func coordinate(s string) (float64, error) {
	v, err := parseDecimal(s)
	if err == errNotDecimal {
		switch strings.ToLower(strings.TrimLeft(s, "+-")) {
		case "nan", "inf", "infinity":
			return 0, fmt.Errorf("is %s, which is not a position", s)
		}
		return 0, fmt.Errorf("%q is not a number in decimal notation", clip(s))
	}
	if err != nil || math.Abs(v) > MaxCoordinateAngstrom {
		return 0, fmt.Errorf("%q is beyond ±%g Å", clip(s), MaxCoordinateAngstrom)
	}
	return v * AngstromBohr, nil
}

// addAtom appends an atom at pos (bohr), refusing a position already taken.
func addAtom(m *Molecule, el Element, pos [3]float64, where func(int) string) error {
	for j, b := range m.Atoms {
		if Dist(b.PosBohr, pos)*BohrAngstrom < DuplicateToleranceAngstrom {
			return fmt.Errorf("atom %d (%s) sits on the position of atom %d (%s, %s)", len(m.Atoms)+1, el.Symbol, j+1, b.Symbol, where(j))
		}
	}
	m.Atoms = append(m.Atoms, Atom{Symbol: el.Symbol, Z: el.Z, PosBohr: pos})
	return nil
}

// tooMany is the sentence for an atom count over MaxAtoms.
func tooMany(n int) string {
	return fmt.Sprintf("the file promises %d atoms; moltrail accepts molecules of at most %d atoms", n, MaxAtoms)
}

// lineSpan names a list of line numbers compactly ("lines 3–5", "line 7").
func lineSpan(lines []int) string {
	if len(lines) == 1 {
		return fmt.Sprintf("line %d", lines[0])
	}
	return fmt.Sprintf("lines %d–%d", lines[0], lines[len(lines)-1])
}

// ReadFileBytes returns the bytes of a molecule file, refusing one over
// MaxFileBytes (reading at most that much, also from a device or pipe).
func ReadFileBytes(path string) ([]byte, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	if fi, err := f.Stat(); err == nil && fi.IsDir() {
		return nil, fmt.Errorf("%s is a directory", path)
	}
	var b []byte
	chunk := make([]byte, 64<<10)
	for len(b) <= MaxFileBytes {
		n, err := f.Read(chunk)
		if bytes.IndexByte(chunk[:n], 0) >= 0 {
			return nil, fmt.Errorf("%s holds binary data (a NUL byte): it is not a molecule file", path)
		}
		b = append(b, chunk[:n]...)
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, err
		}
	}
	if len(b) > MaxFileBytes {
		return nil, fmt.Errorf("%s is larger than %d MiB; molecule files may hold at most %d MiB", path, MaxFileBytes>>20, MaxFileBytes>>20)
	}
	return b, nil
}
