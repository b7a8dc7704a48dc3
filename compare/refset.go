package compare

import (
	"bytes"
	"crypto/sha256"
	"embed"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"maps"
	"math"
	"os"
	"path"
	"reflect"
	"sort"
	"strings"
	"sync"
	"unicode"

	"moltrail/engine/molecule"
	"moltrail/internal/readfile"
	"moltrail/schemas"

	"github.com/santhosh-tekuri/jsonschema/v6"
)

// RefSetFormat is the value of the "format" key of a reference-set file.
const RefSetFormat = "moltrail-refset/1"

// RefSet is a reference set as read from its JSON file.
type RefSet struct {
	Format      string `json:"format"`
	Name        string `json:"name"`
	Description string `json:"description"`
	Source      string `json:"source"`
	// PropertyGeometry says at which geometry the set's properties and
	// energies are to be computed: GeometryRuleOptimised (the default)
	// or GeometryRuleInput.
	PropertyGeometry string  `json:"property_geometry,omitempty"`
	Entries          []Entry `json:"entries"`

	// Origin and SHA256 are filled by the reader.
	Origin string `json:"-"`
	SHA256 string `json:"-"`
}

// RefMolecule names the molecule an entry is about. Atoms lists the element
// symbol of every atom in order; quantity atom indices (from 0) refer to it,
// and a record matches only if its atoms carry the same elements in the
// same order, and the same charge and multiplicity (a multiplicity left
// out is the lowest the electron count allows: 1 or 2).
type RefMolecule struct {
	Name         string   `json:"name"`
	Aliases      []string `json:"aliases,omitempty"`
	Formula      string   `json:"formula"`
	Charge       int      `json:"charge,omitempty"`
	Multiplicity int      `json:"multiplicity,omitempty"`
	Atoms        []string `json:"atoms,omitempty"`
}

// Direction is a molecule-fixed direction: from the centroid of the atoms
// From to the centroid of the atoms To (indices into the entry's atoms).
type Direction struct {
	From []int `json:"from"`
	To   []int `json:"to"`
}

// Frame is a molecule-fixed axis frame: z along Z, x along the part of X
// orthogonal to z, y = z × x. X may be omitted when only zz is needed.
type Frame struct {
	Z Direction  `json:"z"`
	X *Direction `json:"x,omitempty"`
}

// Term is one species of an energy difference: Coefficient × E(Molecule).
type Term struct {
	Molecule    RefMolecule `json:"molecule"`
	Coefficient float64     `json:"coefficient"`
}

// Quantity says what an entry's value is.
type Quantity struct {
	Kind string `json:"kind"`
	// Atoms: bond_length i j; angle i j k (j at the vertex).
	Atoms []int `json:"atoms,omitempty"`
	// Axis: dipole_component, the component along this direction.
	Axis *Direction `json:"axis,omitempty"`
	// Frame, Component, Origin: quadrupole_component (traceless,
	// Buckingham), component "xx" … "yz" in Frame about Origin
	// ("centre-of-mass" or "centre-of-nuclear-charge").
	Frame     *Frame `json:"frame,omitempty"`
	Component string `json:"component,omitempty"`
	Origin    string `json:"origin,omitempty"`
	// Terms: energy_difference, Σ coefficient × E(term molecule).
	Terms []Term `json:"terms,omitempty"`
}

// Entry is one reference value.
type Entry struct {
	ID          string      `json:"id"`
	Molecule    RefMolecule `json:"molecule"`
	Quantity    Quantity    `json:"quantity"`
	Value       float64     `json:"value"`
	Unit        string      `json:"unit"`
	Uncertainty float64     `json:"uncertainty"`
	// Kind is "experiment" or "theory" (a theoretical benchmark).
	Kind   string `json:"kind"`
	Source string `json:"source"`
	// FromMemory marks a value recalled from the cited source, not transcribed.
	FromMemory bool   `json:"from_memory"`
	Note       string `json:"note,omitempty"`
	// Records are the ids of the archived records a theoretical value was
	// taken from (entries built from the archive); such records are cited
	// with the results and never compared with their own value.
	Records []string `json:"records,omitempty"`
}

// unitInfo converts one accepted unit to the natural unit of its dimension.
type unitInfo struct {
	dim    string // "length", "angle", "dipole", "quadrupole", "energy"
	factor float64
}

// Natural units by dimension.
var naturalUnit = map[string]string{
	"length": "pm", "angle": "deg", "dipole": "D", "quadrupole": "D·Å", "energy": "kJ/mol",
}

// units lists every accepted unit spelling (compared case-sensitively after
// trimming) with its factor to the natural unit.
var units = map[string]unitInfo{
	"pm": {"length", 1}, "angstrom": {"length", 100}, "Å": {"length", 100}, "bohr": {"length", 100 * molecule.BohrAngstrom},
	"deg": {"angle", 1}, "degree": {"angle", 1}, "°": {"angle", 1}, "rad": {"angle", 180 / math.Pi},
	"D": {"dipole", 1}, "debye": {"dipole", 1}, "e·a0": {"dipole", molecule.DebyePerAU}, "au-dipole": {"dipole", molecule.DebyePerAU},
	"D·Å": {"quadrupole", 1}, "buckingham": {"quadrupole", 1}, "e·a0²": {"quadrupole", molecule.BuckinghamPerAU}, "au-quadrupole": {"quadrupole", molecule.BuckinghamPerAU},
	"kJ/mol": {"energy", 1}, "kcal/mol": {"energy", molecule.CalorieJoule}, "hartree": {"energy", molecule.KJPerMolPerHartree},
	"Eh": {"energy", molecule.KJPerMolPerHartree}, "eV": {"energy", molecule.KJPerMolPerHartree / molecule.HartreeEV},
}

var kindDim = map[string]string{
	KindBondLength: "length", KindAngle: "angle", KindDipoleNorm: "dipole", KindDipoleAxis: "dipole",
	KindQuadrupole: "quadrupole", KindEnergy: "energy", KindEnergyDelta: "energy",
}

// NaturalUnit returns the unit in which deviations of a quantity kind are given.
func NaturalUnit(kind string) string { return naturalUnit[kindDim[kind]] }

func unitNames(dim string) string {
	var out []string
	for k, u := range units {
		if u.dim == dim {
			out = append(out, k)
		}
	}
	sort.Strings(out)
	return strings.Join(out, ", ")
}

//go:embed refsets/*.json
var builtinFS embed.FS

// BuiltinNames lists the names of the embedded reference sets.
func BuiltinNames() []string {
	ents, err := builtinFS.ReadDir("refsets")
	if err != nil {
		return nil
	}
	var out []string
	for _, e := range ents {
		out = append(out, strings.TrimSuffix(e.Name(), ".json"))
	}
	sort.Strings(out)
	return out
}

// Builtin returns an embedded reference set by name; "builtin" (or "all")
// returns every embedded set merged into one.
func Builtin(name string) (*RefSet, error) {
	n := strings.ToLower(strings.TrimSpace(name))
	if n == "builtin" || n == "all" {
		return builtinAll()
	}
	b, err := builtinFS.ReadFile(path.Join("refsets", n+".json"))
	if err != nil {
		return nil, fmt.Errorf("reference set %q is not built in (built-in sets: %s, or builtin for all)", name, strings.Join(BuiltinNames(), ", "))
	}
	return ParseRefSet(b, "builtin:"+n)
}

func builtinAll() (*RefSet, error) {
	all := &RefSet{Format: RefSetFormat, Name: "builtin", Origin: "builtin"}
	var descr, src []string
	h := sha256.New()
	for _, n := range BuiltinNames() {
		s, err := Builtin(n)
		if err != nil {
			return nil, err
		}
		if s.PropertyGeometry != "" {
			if all.PropertyGeometry != "" && all.PropertyGeometry != s.PropertyGeometry {
				return nil, fmt.Errorf("built-in sets disagree on property_geometry (%s: %q, before: %q)", s.Name, s.PropertyGeometry, all.PropertyGeometry)
			}
			all.PropertyGeometry = s.PropertyGeometry
		}
		descr = append(descr, s.Name+": "+s.Description)
		src = append(src, s.Source)
		all.Entries = append(all.Entries, s.Entries...)
		h.Write([]byte(s.SHA256))
	}
	all.Description = strings.Join(descr, " ")
	all.Source = strings.Join(src, "; ")
	all.SHA256 = hex.EncodeToString(h.Sum(nil))
	if err := all.check(); err != nil {
		return nil, err
	}
	return all, nil
}

// LoadRefSet resolves a --refs argument: a built-in set name, "builtin",
// or the path of a reference-set file.
func LoadRefSet(arg string) (*RefSet, error) {
	n := strings.ToLower(strings.TrimSpace(arg))
	if n == "builtin" || n == "all" {
		return builtinAll()
	}
	for _, b := range BuiltinNames() {
		if n == b {
			return Builtin(b)
		}
	}
	if _, err := os.Stat(arg); err != nil && !strings.ContainsAny(arg, `/\`) && !strings.HasSuffix(n, ".json") {
		return nil, fmt.Errorf("reference set %q is neither a built-in set (builtin, %s) nor a file", arg, strings.Join(BuiltinNames(), ", "))
	}
	return ReadRefSet(arg)
}

// MaxRefSetBytes bounds a reference-set file.
const MaxRefSetBytes = 16 << 20

// ReadRefSet reads and checks a reference-set file.
func ReadRefSet(file string) (*RefSet, error) {
	b, err := readfile.Read(file, MaxRefSetBytes)
	if err != nil {
		return nil, fmt.Errorf("reference set: %v", err)
	}
	return ParseRefSet(b, file)
}

var (
	refSchemaOnce sync.Once
	refSchema     *jsonschema.Schema
	refSchemaErr  error
)

func compiledRefSchema() (*jsonschema.Schema, error) {
	refSchemaOnce.Do(func() { refSchema, refSchemaErr = schemas.Compile("refset.schema.json") })
	return refSchema, refSchemaErr
}

// ParseRefSet decodes and checks reference-set bytes; origin names them in errors.
func ParseRefSet(b []byte, origin string) (*RefSet, error) {
	var s RefSet
	dec := json.NewDecoder(bytes.NewReader(b))
	dec.DisallowUnknownFields()
	if err := dec.Decode(&s); err != nil {
		return nil, fmt.Errorf("reference set %s: %v", origin, jsonErr(b, err))
	}
	if len(bytes.TrimSpace(b[dec.InputOffset():])) > 0 {
		return nil, fmt.Errorf("reference set %s: data after the closing brace", origin)
	}
	s.Origin = origin
	sum := sha256.Sum256(b)
	s.SHA256 = hex.EncodeToString(sum[:])
	if err := s.check(); err != nil {
		return nil, err
	}
	// The schema is the published description of the layout; the checks
	// above give the clearer messages, this one catches anything they miss.
	sch, err := compiledRefSchema()
	if err != nil {
		return nil, err
	}
	if err := schemas.ValidateBytes(sch, b); err != nil {
		return nil, fmt.Errorf("reference set %s does not follow schemas/refset.schema.json: %v", origin, err)
	}
	return &s, nil
}

// jsonErr words a JSON decoding error with the line where it can: the
// field of a value of the wrong type, a syntax error, a truncated file.
func jsonErr(b []byte, err error) error {
	var off int64 = -1
	switch e := err.(type) {
	case *json.SyntaxError:
		off = e.Offset
	case *json.UnmarshalTypeError:
		off = e.Offset
		if e.Field != "" {
			err = fmt.Errorf("%q must be a JSON %s, not a JSON %s", e.Field, jsonType(e.Type.Kind()), e.Value)
		}
	}
	if errors.Is(err, io.ErrUnexpectedEOF) || errors.Is(err, io.EOF) {
		return fmt.Errorf("the file ends in the middle of its JSON (truncated?)")
	}
	if off < 0 || off > int64(len(b)) {
		return err
	}
	line := 1 + bytes.Count(b[:off], []byte("\n"))
	return fmt.Errorf("line %d: %v", line, strings.TrimPrefix(err.Error(), "json: "))
}

// jsonType names the JSON type that decodes into a Go kind.
func jsonType(k reflect.Kind) string {
	switch k {
	case reflect.String:
		return "string"
	case reflect.Bool:
		return "boolean"
	case reflect.Slice, reflect.Array:
		return "array"
	case reflect.Struct, reflect.Map:
		return "object"
	case reflect.Int, reflect.Int8, reflect.Int16, reflect.Int32, reflect.Int64, reflect.Uint, reflect.Uint8, reflect.Uint16, reflect.Uint32, reflect.Uint64:
		return "integer"
	}
	return "number"
}

// check validates the set and every entry; errors name the entry.
func (s *RefSet) check() error {
	if s.Format != RefSetFormat {
		return fmt.Errorf("reference set %s: format is %q, expected %q", s.Origin, s.Format, RefSetFormat)
	}
	if strings.TrimSpace(s.Name) == "" {
		return fmt.Errorf("reference set %s: name is empty", s.Origin)
	}
	if len(s.Entries) == 0 {
		return fmt.Errorf("reference set %s: no entries", s.Origin)
	}
	switch s.PropertyGeometry {
	case "", GeometryRuleOptimised, GeometryRuleInput:
	default:
		return fmt.Errorf("reference set %s: property_geometry %q is not known (%s or %s)", s.Origin, s.PropertyGeometry, GeometryRuleOptimised, GeometryRuleInput)
	}
	seen := map[string]int{}
	for i := range s.Entries {
		e := &s.Entries[i]
		where := fmt.Sprintf("reference set %s: entry %d", s.Origin, i)
		if e.ID != "" {
			where = fmt.Sprintf("reference set %s: entry %q", s.Origin, e.ID)
		}
		if strings.TrimSpace(e.ID) == "" {
			return fmt.Errorf("%s: id is empty", where)
		}
		if j, ok := seen[e.ID]; ok {
			return fmt.Errorf("%s: id is used twice (entries %d and %d)", where, j, i)
		}
		seen[e.ID] = i
		if err := e.check(); err != nil {
			return fmt.Errorf("%s (%s): %v", where, e.Molecule.Name, err)
		}
	}
	return nil
}

func (e *Entry) check() error {
	dim, ok := kindDim[e.Quantity.Kind]
	if !ok {
		return fmt.Errorf("quantity kind %q is not known (%s)", e.Quantity.Kind, strings.Join(kindList(), ", "))
	}
	u, ok := units[strings.TrimSpace(e.Unit)]
	if !ok {
		return fmt.Errorf("unit %q is not known for %s (use one of: %s)", e.Unit, e.Quantity.Kind, unitNames(dim))
	}
	if u.dim != dim {
		return fmt.Errorf("unit %q is a %s unit but %s needs a %s unit (%s)", e.Unit, u.dim, e.Quantity.Kind, dim, unitNames(dim))
	}
	if math.IsNaN(e.Value) || math.IsInf(e.Value, 0) {
		return fmt.Errorf("value is not a finite number")
	}
	if !(e.Uncertainty >= 0) || math.IsInf(e.Uncertainty, 0) {
		return fmt.Errorf("uncertainty %g must be a finite number ≥ 0", e.Uncertainty)
	}
	switch e.Kind {
	case "experiment", "theory":
	default:
		return fmt.Errorf("kind %q is not known (experiment or theory)", e.Kind)
	}
	if strings.TrimSpace(e.Source) == "" {
		return fmt.Errorf("source is empty: every reference value needs its publication or handbook")
	}
	q := e.Quantity
	if q.Kind == KindEnergyDelta {
		if len(q.Terms) < 2 {
			return fmt.Errorf("an energy_difference needs at least two terms")
		}
		for t, term := range q.Terms {
			if _, err := term.Molecule.counts(false); err != nil {
				return fmt.Errorf("term %d: %v", t, err)
			}
			if term.Coefficient == 0 || math.IsNaN(term.Coefficient) || math.IsInf(term.Coefficient, 0) {
				return fmt.Errorf("term %d (%s): coefficient must be a finite non-zero number", t, term.Molecule.Name)
			}
		}
		return nil
	}
	needAtoms := q.Kind != KindEnergy && q.Kind != KindDipoleNorm
	if _, err := e.Molecule.counts(needAtoms); err != nil {
		return err
	}
	if e.Value < 0 && (q.Kind == KindBondLength || q.Kind == KindAngle || q.Kind == KindDipoleNorm) {
		return fmt.Errorf("a %s cannot be negative (value %g)", q.Kind, e.Value)
	}
	n := len(e.Molecule.Atoms)
	idx := func(what string, list []int, want int) error {
		if want > 0 && len(list) != want {
			return fmt.Errorf("%s needs %d atom indices, found %d", what, want, len(list))
		}
		if len(list) == 0 {
			return fmt.Errorf("%s needs at least one atom index", what)
		}
		used := map[int]bool{}
		for _, a := range list {
			if a < 0 || a >= n {
				return fmt.Errorf("%s: atom index %d is out of range: the molecule lists %d atoms (indices 0–%d)", what, a, n, n-1)
			}
			if used[a] {
				return fmt.Errorf("%s: atom index %d appears twice", what, a)
			}
			used[a] = true
		}
		return nil
	}
	dir := func(what string, d *Direction) error {
		if d == nil {
			return fmt.Errorf("%s is missing", what)
		}
		if err := idx(what+".from", d.From, 0); err != nil {
			return err
		}
		if err := idx(what+".to", d.To, 0); err != nil {
			return err
		}
		return nil
	}
	switch q.Kind {
	case KindBondLength:
		return idx("bond_length atoms", q.Atoms, 2)
	case KindAngle:
		return idx("angle atoms", q.Atoms, 3)
	case KindDipoleAxis:
		return dir("axis", q.Axis)
	case KindQuadrupole:
		if q.Frame == nil {
			return fmt.Errorf("quadrupole_component needs a frame")
		}
		if err := dir("frame.z", &q.Frame.Z); err != nil {
			return err
		}
		c := q.Component
		switch c {
		case "zz":
		case "xx", "yy", "xy", "xz", "yz":
			if err := dir("frame.x (needed for component "+c+")", q.Frame.X); err != nil {
				return err
			}
		default:
			return fmt.Errorf("quadrupole component %q is not known (xx, yy, zz, xy, xz, yz)", c)
		}
		switch q.Origin {
		case "centre-of-mass", "centre-of-nuclear-charge":
		default:
			return fmt.Errorf("quadrupole origin %q is not known (centre-of-mass or centre-of-nuclear-charge)", q.Origin)
		}
	}
	return nil
}

func kindList() []string {
	var out []string
	for k := range kindDim {
		out = append(out, k)
	}
	sort.Strings(out)
	return out
}

// counts parses the molecule's formula, checks its element symbols and, if
// atoms are listed (or required), that they agree with the formula.
func (m *RefMolecule) counts(needAtoms bool) (map[string]int, error) {
	if strings.TrimSpace(m.Name) == "" {
		return nil, fmt.Errorf("molecule name is empty")
	}
	f, err := ParseFormula(m.Formula)
	if err != nil {
		return nil, fmt.Errorf("molecule %q: %v", m.Name, err)
	}
	if needAtoms && len(m.Atoms) == 0 {
		return nil, fmt.Errorf("molecule %q: atoms are not listed, but the quantity refers to atoms by index", m.Name)
	}
	if len(m.Atoms) > 0 {
		got := map[string]int{}
		for i, s := range m.Atoms {
			el, err := molecule.Lookup(s)
			if err != nil {
				return nil, fmt.Errorf("molecule %q: atom %d: %v", m.Name, i, err)
			}
			if el.Symbol != s {
				return nil, fmt.Errorf("molecule %q: atom %d: write the element symbol as %q", m.Name, i, el.Symbol)
			}
			got[s]++
		}
		if !maps.Equal(got, f) {
			return nil, fmt.Errorf("molecule %q: atoms %s do not add up to the formula %s", m.Name, strings.Join(m.Atoms, " "), m.Formula)
		}
	}
	return f, nil
}

// ParseFormula reads a plain formula such as "H2O" or "CH3Cl" into element counts.
func ParseFormula(s string) (map[string]int, error) {
	s = strings.TrimSpace(s)
	if s == "" {
		return nil, fmt.Errorf("formula is empty")
	}
	out := map[string]int{}
	r := []rune(s)
	for i := 0; i < len(r); {
		if !unicode.IsUpper(r[i]) {
			return nil, fmt.Errorf("formula %q: expected an element symbol at position %d", s, i+1)
		}
		j := i + 1
		for j < len(r) && unicode.IsLower(r[j]) {
			j++
		}
		sym := string(r[i:j])
		el, err := molecule.Lookup(sym)
		if err != nil || el.Symbol != sym {
			return nil, fmt.Errorf("formula %q: %q is not an element symbol moltrail knows (H to Kr)", s, sym)
		}
		k := j
		for k < len(r) && unicode.IsDigit(r[k]) {
			k++
		}
		n := 1
		if k > j {
			fmt.Sscanf(string(r[j:k]), "%d", &n)
			if n < 1 {
				return nil, fmt.Errorf("formula %q: count of %s must be at least 1", s, sym)
			}
		}
		out[sym] += n
		i = k
	}
	return out, nil
}

// normName folds a molecule name for matching: lower case, without spaces,
// hyphens, underscores, commas and apostrophes.
func normName(s string) string {
	var b strings.Builder
	for _, r := range strings.ToLower(strings.TrimSpace(s)) {
		switch r {
		case ' ', '-', '_', ',', '\'', '\t':
			continue
		}
		b.WriteRune(r)
	}
	return b.String()
}

// names returns the folded names a record may carry to match this molecule:
// the name, the aliases and the formula as written.
func (m *RefMolecule) names() []string {
	out := []string{normName(m.Name), normName(m.Formula)}
	for _, a := range m.Aliases {
		out = append(out, normName(a))
	}
	return out
}

// Names reports whether a molecule name (as a record carries it) names a
// molecule of the set, so callers can skip loading records that cannot match.
func (s *RefSet) Names(name string) bool {
	n := normName(name)
	for i := range s.Entries {
		e := &s.Entries[i]
		mols := []*RefMolecule{&e.Molecule}
		for j := range e.Quantity.Terms {
			mols = append(mols, &e.Quantity.Terms[j].Molecule)
		}
		for _, m := range mols {
			for _, k := range m.names() {
				if k == n {
					return true
				}
			}
		}
	}
	return false
}
