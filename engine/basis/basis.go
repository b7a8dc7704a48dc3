// Package basis is moltrail's Gaussian basis-set library: the embedded sets
// (Basis Set Exchange data as redistributed in Debian's psi4-data 1.3.2,
// one JSON file per set under data/, each carrying its literature
// references), user-supplied sets in the same JSON layout
// (schemas/basis.schema.json), look-up by name or alias, and the shells of a
// basis placed on a molecule with normalised contraction coefficients.
//
// Function order within a shell. Cartesian: lexicographic in (lx, ly, lz)
// descending, i.e. xx, xy, xz, yy, yz, zz for d. Spherical (real solid
// harmonics, l ≥ 2 only; s and p keep x, y, z in both representations):
// m = −l, …, 0, …, +l.
package basis

import (
	"bytes"
	"crypto/sha256"
	"embed"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"sort"
	"strings"
	"sync"

	"moltrail/engine/molecule"
	"moltrail/internal/readfile"
)

//go:embed data/*.json
var dataFS embed.FS

// Angular says whether a shell uses Cartesian or spherical functions.
type Angular string

const (
	Spherical Angular = "spherical"
	Cartesian Angular = "cartesian"
)

// ShellData is one contracted shell of an element as the JSON stores it.
type ShellData struct {
	L            int       `json:"l"`
	Exponents    []float64 `json:"exponents"`
	Coefficients []float64 `json:"coefficients"`
}

// Set is a basis set definition: a name and shells per element.
type Set struct {
	Name       string                 `json:"name"`
	Aliases    []string               `json:"aliases"`
	Role       string                 `json:"role"`
	Angular    Angular                `json:"angular"`
	Source     string                 `json:"source"`
	References []string               `json:"references"`
	Elements   map[string][]ShellData `json:"elements"`

	// SHA256 is the hex SHA-256 of the set's file bytes exactly as read.
	SHA256 string `json:"-"`
	// File names the embedded file ("builtin:cc-pvdz.json") or the user path.
	File string `json:"-"`

	raw []byte
}

type indexEntry struct {
	Name    string   `json:"name"`
	Aliases []string `json:"aliases"`
	File    string   `json:"file"`
	Role    string   `json:"role"`
	Angular Angular  `json:"angular"`
	Elems   []string `json:"elements"`
}

var index = func() []indexEntry {
	b, err := dataFS.ReadFile("data/index.json")
	if err != nil {
		panic("basis: embedded index missing: " + err.Error())
	}
	var idx []indexEntry
	if err := json.Unmarshal(b, &idx); err != nil {
		panic("basis: embedded index unreadable: " + err.Error())
	}
	return idx
}()

// Normalize maps a basis name to its look-up key: lower case, and the
// polarisation spellings (d) → *, (d,p) → **.
func Normalize(name string) string {
	s := strings.ToLower(strings.TrimSpace(name))
	s = strings.ReplaceAll(s, " ", "")
	s = strings.ReplaceAll(s, "(d,p)", "**")
	s = strings.ReplaceAll(s, "(d)", "*")
	return s
}

// Info summarises one library entry.
type Info struct {
	Name     string
	Aliases  []string
	Role     string
	Angular  Angular
	Elements []string
	File     string
}

// Library lists the built-in sets in library order.
func Library() []Info {
	out := make([]Info, 0, len(index))
	for _, e := range index {
		out = append(out, Info{Name: e.Name, Aliases: e.Aliases, Role: e.Role, Angular: e.Angular, Elements: e.Elems, File: e.File})
	}
	return out
}

// Builtin returns the built-in set with this name or alias (case-insensitive).
func Builtin(name string) (*Set, error) {
	s, err := builtinShared(name)
	if err != nil {
		return nil, err
	}
	return s.clone(), nil
}

// LoadShared is Load, except that a built-in set is the library's own
// parsed copy, shared by every caller: it must not be changed. It serves
// callers that only read a set's name, hash and element list (building
// many jobs), where a copy per call would cost more than the job.
func LoadShared(nameOrPath string) (*Set, error) {
	if isPath(nameOrPath) {
		return ReadFile(nameOrPath)
	}
	return builtinShared(nameOrPath)
}

func builtinShared(name string) (*Set, error) {
	key := Normalize(name)
	for _, e := range index {
		match := Normalize(e.Name) == key
		for _, a := range e.Aliases {
			match = match || Normalize(a) == key
		}
		if !match {
			continue
		}
		if s, ok := builtinSets.Load(e.File); ok {
			return s.(*Set), nil
		}
		b, err := dataFS.ReadFile("data/" + e.File)
		if err != nil {
			return nil, fmt.Errorf("basis %q: embedded file %s missing: %w", e.Name, e.File, err)
		}
		s, err := parse(b, "builtin:"+e.File)
		if err != nil {
			return nil, err
		}
		builtinSets.Store(e.File, s)
		return s, nil
	}
	var names []string
	for _, e := range index {
		names = append(names, e.Name)
	}
	return nil, fmt.Errorf("basis %q is not in the library (known: %s); a file of your own can be given by path", name, strings.Join(names, ", "))
}

// builtinSets holds each embedded set parsed once (file name → *Set);
// callers get copies, so none can change another's.
var builtinSets sync.Map

// clone is a deep copy of the set.
func (s *Set) clone() *Set {
	c := *s
	c.Aliases = append([]string(nil), s.Aliases...)
	c.References = append([]string(nil), s.References...)
	c.raw = append([]byte(nil), s.raw...)
	c.Elements = make(map[string][]ShellData, len(s.Elements))
	for el, shells := range s.Elements {
		cs := make([]ShellData, len(shells))
		for i, sh := range shells {
			cs[i] = ShellData{L: sh.L, Exponents: append([]float64(nil), sh.Exponents...), Coefficients: append([]float64(nil), sh.Coefficients...)}
		}
		c.Elements[el] = cs
	}
	return &c
}

// Load resolves a basis by library name/alias, or, when the argument names
// an existing file (or ends in .json), reads that file.
func Load(nameOrPath string) (*Set, error) {
	if isPath(nameOrPath) {
		return ReadFile(nameOrPath)
	}
	return Builtin(nameOrPath)
}

// isPath reports whether a basis argument names a file rather than a
// library entry.
func isPath(nameOrPath string) bool {
	return strings.HasSuffix(strings.ToLower(nameOrPath), ".json") || strings.ContainsRune(nameOrPath, os.PathSeparator)
}

// ReadFile reads a user-supplied basis file in the library's JSON layout.
func ReadFile(path string) (*Set, error) {
	b, err := readfile.Read(path, MaxFileBytes)
	if err != nil {
		return nil, fmt.Errorf("cannot read basis file: %w", err)
	}
	return parse(b, path)
}

func parse(b []byte, file string) (*Set, error) {
	var s Set
	dec := json.NewDecoder(strings.NewReader(string(b)))
	dec.DisallowUnknownFields()
	if err := dec.Decode(&s); err != nil {
		var te *json.UnmarshalTypeError
		var se *json.SyntaxError
		switch {
		case errors.As(err, &te):
			return nil, fmt.Errorf("basis file %s: field %q holds a JSON %s where the basis layout needs %s", file, te.Field, te.Value, jsonKind(te.Type.Kind().String()))
		case errors.As(err, &se):
			return nil, fmt.Errorf("basis file %s: not valid JSON at byte %d: %v", file, se.Offset, err)
		case errors.Is(err, io.ErrUnexpectedEOF) || errors.Is(err, io.EOF):
			return nil, fmt.Errorf("basis file %s: the JSON is cut short", file)
		}
		return nil, fmt.Errorf("basis file %s: not a basis set in moltrail's JSON layout: %v", file, err)
	}
	if len(bytes.TrimSpace(b[dec.InputOffset():])) > 0 {
		return nil, fmt.Errorf("basis file %s: data after the closing brace of the basis set", file)
	}
	if s.Name == "" {
		return nil, fmt.Errorf("basis file %s: field \"name\" is missing", file)
	}
	switch s.Angular {
	case Spherical, Cartesian:
	case "":
		return nil, fmt.Errorf("basis file %s: field \"angular\" is missing (spherical or cartesian)", file)
	default:
		return nil, fmt.Errorf("basis file %s: field \"angular\" is %q, expected spherical or cartesian", file, s.Angular)
	}
	if len(s.Elements) == 0 {
		return nil, fmt.Errorf("basis file %s: no elements", file)
	}
	for el, shells := range s.Elements {
		if _, err := molecule.Lookup(el); err != nil {
			return nil, fmt.Errorf("basis file %s: elements.%s: %v", file, el, err)
		}
		for i, sh := range shells {
			where := fmt.Sprintf("basis file %s: elements.%s[%d]", file, el, i)
			if sh.L < 0 || sh.L > maxFileL {
				return nil, fmt.Errorf("%s: angular momentum l=%d is outside 0–%d", where, sh.L, maxFileL)
			}
			if len(sh.Exponents) == 0 || len(sh.Exponents) != len(sh.Coefficients) {
				return nil, fmt.Errorf("%s: %d exponents but %d coefficients", where, len(sh.Exponents), len(sh.Coefficients))
			}
			if len(sh.Exponents) > MaxPrimitives {
				return nil, fmt.Errorf("%s: %d primitives in one shell; at most %d are accepted", where, len(sh.Exponents), MaxPrimitives)
			}
			for k, a := range sh.Exponents {
				if !(a > 0) || math.IsInf(a, 0) {
					return nil, fmt.Errorf("%s: exponent %d is %v, it must be positive and finite", where, k, a)
				}
				if c := sh.Coefficients[k]; math.IsNaN(c) || math.IsInf(c, 0) {
					return nil, fmt.Errorf("%s: coefficient %d is %v", where, k, c)
				}
			}
		}
	}
	sum := sha256.Sum256(b)
	s.SHA256 = hex.EncodeToString(sum[:])
	s.File = file
	s.raw = b
	return &s, nil
}

// MaxL is the highest angular momentum the engine computes with (g
// functions). Files may hold higher shells (h, i) for elements the engine
// then refuses when a molecule needs them.
const MaxL = 4

const maxFileL = 6

// MaxPrimitives bounds the primitives of one contracted shell (the largest
// contraction of the built-in library has 21). The integral work grows
// with the fourth power of the count, so a file with thousands would run
// for hours.
const MaxPrimitives = 40

// MaxFileBytes bounds a basis file read from disk.
const MaxFileBytes = 16 << 20

// Covers reports the first element of the molecule the set lacks, or "".
func (s *Set) Covers(m *molecule.Molecule) string {
	for _, a := range m.Atoms {
		if _, ok := s.Elements[a.Symbol]; !ok {
			return a.Symbol
		}
	}
	return ""
}

// ElementSymbols lists the elements the set defines, by atomic number.
func (s *Set) ElementSymbols() []string {
	var out []string
	for el := range s.Elements {
		out = append(out, el)
	}
	sort.Slice(out, func(i, j int) bool {
		a, _ := molecule.Lookup(out[i])
		b, _ := molecule.Lookup(out[j])
		return a.Z < b.Z
	})
	return out
}

// ParseBytes reads a basis set from JSON bytes in the library layout;
// source names the origin in error messages.
func ParseBytes(b []byte, source string) (*Set, error) { return parse(b, source) }

// RawBytes returns the exact file bytes a set was read from (for inlining a
// user-supplied set into a job).
func RawBytes(s *Set) ([]byte, error) {
	if s.raw == nil {
		return nil, fmt.Errorf("basis %q: original bytes not kept", s.Name)
	}
	return s.raw, nil
}

// jsonKind names a Go kind the way a JSON author thinks of it.
func jsonKind(k string) string {
	switch k {
	case "struct", "map":
		return "an object"
	case "slice", "array":
		return "an array"
	case "string":
		return "a string"
	case "int", "int64", "float64":
		return "a number"
	case "bool":
		return "true or false"
	}
	return k
}
