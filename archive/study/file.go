// Package study runs a study: a matrix of molecules × levels of theory ×
// tasks described in one JSON file (layout: schemas/study.schema.json,
// format "moltrail-study/1"), against moltrail's archive.
//
// A study is parsed (Parse, Load), expanded into items (Plan) and run
// (Run). Running computes only what the archive lacks — an item whose input
// key is stored by the running code version is reused — in dependency
// order (a single point on a geometry optimised at another level waits for
// that optimisation), on a fixed number of workers. Every finished
// calculation is stored at once, in its own archive transaction, so an
// interrupted study (Ctrl-C, SIGKILL, power loss) loses at most the
// calculations that were running, and running the study again computes
// only the rest.
//
// The package uses the engine (to build jobs) and the archive (to look up
// and store records); comparisons and documents are made by the caller
// over the records a run returns.
package study

import (
	"bytes"
	"encoding/json"
	"fmt"
	"path/filepath"
	"reflect"
	"sort"
	"strings"
	"sync"

	"github.com/santhosh-tekuri/jsonschema/v6"

	"moltrail/engine"
	"moltrail/engine/basis"
	"moltrail/engine/molecule"
	"moltrail/internal/readfile"
	"moltrail/schemas"
)

// Format names the layout of study files read by this package.
const Format = "moltrail-study/1"

// File is the decoded study file, as written.
type File struct {
	Format      string          `json:"format"`
	Name        string          `json:"name"`
	Description string          `json:"description,omitempty"`
	Molecules   []MoleculeEntry `json:"molecules"`
	Levels      []LevelEntry    `json:"levels"`
	Tasks       []TaskEntry     `json:"tasks"`
	// Tags are stored with every record the study computes.
	Tags map[string]string `json:"tags,omitempty"`
	// ReferenceSet is what the study's results are compared with: a
	// built-in set name, "builtin", or a file path relative to the study file.
	ReferenceSet string          `json:"reference_set,omitempty"`
	Report       *ReportSettings `json:"report,omitempty"`
	// MemoryLimit is the memory each calculation may use ("6GiB", "800MB";
	// see engine.ParseMemorySize); empty = the engine's default shared among
	// the calculations run at once. It never changes a number.
	MemoryLimit string `json:"memory_limit,omitempty"`
}

// MoleculeEntry is one molecule: a molecule file (XYZ, extended XYZ, MDL
// molfile or SDF; path relative to the study file) or inline XYZ text.
type MoleculeEntry struct {
	File         string `json:"file,omitempty"`
	XYZ          string `json:"xyz,omitempty"`
	Name         string `json:"name,omitempty"`
	Charge       *int   `json:"charge,omitempty"`
	Multiplicity *int   `json:"multiplicity,omitempty"`
	// AllowCloseAtoms computes a molecule whose atoms are closer than the
	// physical minimum (see molecule.CloseFraction).
	AllowCloseAtoms bool `json:"allow_close_atoms,omitempty"`
}

// LevelEntry is one level of theory (method and basis) or, with Methods
// and BasisSets, the cross product of several; the settings apply to each.
type LevelEntry struct {
	// ID names the level in tasks; default "method/basis" as written.
	ID        string   `json:"id,omitempty"`
	Method    string   `json:"method,omitempty"`
	Basis     string   `json:"basis,omitempty"`
	Methods   []string `json:"methods,omitempty"`
	BasisSets []string `json:"basis_sets,omitempty"`
	// Angular is "spherical" or "cartesian" (default: the basis set's own).
	Angular string `json:"angular,omitempty"`
	// FrozenCore freezes the chemical core in correlated methods (in a
	// cross product it applies to the correlated methods only).
	FrozenCore bool `json:"frozen_core,omitempty"`
	// Grid is the DFT grid level name (DFT methods only).
	Grid string `json:"grid,omitempty"`
	// RelaxedProperties is the MP2-family relaxed-density route.
	RelaxedProperties string `json:"relaxed_properties,omitempty"`
	// MultipoleOrigin: centre-of-mass (default), centre-of-charge,
	// coordinate-origin, point:X,Y,Z (ångström) or atom:N (see engine.ParseOrigin).
	MultipoleOrigin string `json:"multipole_origin,omitempty"`
	// DensityFitting asks for density-fitted Coulomb and exchange (SCF and
	// DFT methods; in a cross product the correlated methods keep exact
	// integrals).
	DensityFitting *FitEntry `json:"density_fitting,omitempty"`
	SCF            *SCFEntry `json:"scf,omitempty"`
	Optimization   *OptEntry `json:"optimization,omitempty"`
	Comment        string    `json:"comment,omitempty"`
}

// SCFEntry overrides SCF settings (absent fields keep the engine's defaults).
type SCFEntry struct {
	EnergyTolHartree  *float64 `json:"energy_tol_hartree,omitempty"`
	DensityTol        *float64 `json:"density_rms_tol,omitempty"`
	GradientTol       *float64 `json:"orbital_gradient_tol,omitempty"`
	MaxIter           *int     `json:"max_iterations,omitempty"`
	Guess             string   `json:"guess,omitempty"`
	DIISSize          *int     `json:"diis_size,omitempty"`
	SchwarzThreshold  *float64 `json:"schwarz_threshold,omitempty"`
	LevelShiftHartree *float64 `json:"level_shift_hartree,omitempty"`
}

// FitEntry is a level's density-fitting request.
type FitEntry struct {
	// SCFSet names the auxiliary set; "" or "auto" = the library's match
	// for the orbital basis.
	SCFSet           string   `json:"scf_set,omitempty"`
	MetricCutoff     *float64 `json:"metric_eigenvalue_cutoff,omitempty"`
	SchwarzThreshold *float64 `json:"three_centre_schwarz_threshold,omitempty"`
}

// OptEntry overrides geometry-optimisation criteria.
type OptEntry struct {
	MaxForce         *float64 `json:"max_force_hartree_per_bohr,omitempty"`
	RMSForce         *float64 `json:"rms_force_hartree_per_bohr,omitempty"`
	MaxStep          *float64 `json:"max_step_bohr,omitempty"`
	EnergyChange     *float64 `json:"energy_change_hartree,omitempty"`
	MaxSteps         *int     `json:"max_steps,omitempty"`
	TrustRadiusBohr  *float64 `json:"trust_radius_bohr,omitempty"`
	GradientMethod   string   `json:"gradient_method,omitempty"`
	FiniteDiffStepAU *float64 `json:"finite_difference_step_bohr,omitempty"`
	// Frequencies adds harmonic frequencies at the optimised geometry.
	Frequencies bool `json:"frequencies,omitempty"`
	// SymmetryTolAngstrom: the tolerance of the point group kept (0: none).
	SymmetryTolAngstrom *float64 `json:"symmetry_tolerance_angstrom,omitempty"`
}

// TaskEntry asks for one kind of calculation for molecules × levels.
type TaskEntry struct {
	// Task is "optimize" (minimise, then properties at the final geometry),
	// "energy" (energy and properties at one geometry) or "frequencies"
	// (energy, properties and harmonic frequencies at one geometry).
	Task string `json:"task"`
	// Levels and Molecules restrict the task (ids and names; empty = all).
	Levels    []string `json:"levels,omitempty"`
	Molecules []string `json:"molecules,omitempty"`
	// GeometryFrom names a level whose optimised geometry the task starts
	// from (the optimisation at that level is run first, added if no task
	// asks for it); empty = the molecule's geometry as given.
	GeometryFrom string `json:"geometry_from,omitempty"`
}

// ReportSettings are the study's document settings.
type ReportSettings struct {
	Title       string `json:"title,omitempty"`
	Author      string `json:"author,omitempty"`
	Affiliation string `json:"affiliation,omitempty"`
	Date        string `json:"date,omitempty"`
	// Output is the document path, relative to the study file.
	Output string `json:"output,omitempty"`
}

// Study is a parsed, checked study.
type Study struct {
	File
	// Origin names where the study was read from (a path or "builtin:NAME").
	Origin string
	// Dir is the directory relative paths are resolved against ("" for
	// embedded studies).
	Dir string
	// MemoryLimitBytes is MemoryLimit read (0 when not given).
	MemoryLimitBytes int64
	molecules        []*Molecule
	levels           []*Level
}

// Molecule is one molecule of a study, ready for the engine.
type Molecule struct {
	Name string
	Mol  *molecule.Molecule
	// Notes are the molecule reader's remarks (ignored columns and the like).
	Notes      []string
	allowClose bool
}

// Level is one expanded level of theory.
type Level struct {
	// ID is the name tasks use; Label the display form ("mp2/cc-pVTZ").
	ID    string
	Label string
	// Request is the engine request without molecule and task.
	Request engine.Request
	family  string
	// opt overrides the engine's optimisation defaults for the method.
	opt *OptEntry
}

// Molecules returns the study's molecules in file order.
func (s *Study) Molecules() []*Molecule { return s.molecules }

// Levels returns the expanded levels in file order.
func (s *Study) Levels() []*Level { return s.levels }

// Reader reads a file named in a study (a path relative to the study).
type Reader func(name string) ([]byte, error)

// MaxFileBytes bounds a study file (the molecule files it names are
// bounded by the molecule readers).
const MaxFileBytes = 16 << 20

// Load reads and checks a study file from disk.
func Load(path string) (*Study, error) {
	b, err := readfile.Read(path, MaxFileBytes)
	if err != nil {
		return nil, fmt.Errorf("study file: %v", err)
	}
	dir := filepath.Dir(path)
	read := func(name string) ([]byte, error) {
		if !filepath.IsAbs(name) {
			name = filepath.Join(dir, name)
		}
		return molecule.ReadFileBytes(name)
	}
	s, err := Parse(b, path, read)
	if err != nil {
		return nil, err
	}
	s.Dir = dir
	return s, nil
}

var (
	schemaOnce sync.Once
	schema     *jsonschema.Schema
	schemaErr  error
)

// Parse decodes and checks study bytes. origin names them in errors; read
// resolves the XYZ files the study names (nil: files are not allowed).
func Parse(b []byte, origin string, read Reader) (*Study, error) {
	var f File
	loc := locate(b)
	if loc != nil {
		if err := loc.unknownKey(reflect.TypeOf(f)); err != nil {
			return nil, fmt.Errorf("study %s: %v", origin, err)
		}
	}
	dec := json.NewDecoder(bytes.NewReader(b))
	dec.DisallowUnknownFields()
	if err := dec.Decode(&f); err != nil {
		return nil, fmt.Errorf("study %s: %v", origin, jsonErr(b, err))
	}
	if len(bytes.TrimSpace(b[dec.InputOffset():])) > 0 {
		return nil, fmt.Errorf("study %s: %s: data after the closing brace", origin, at(b, int(dec.InputOffset())))
	}
	s := &Study{File: f, Origin: origin}
	if err := s.build(read); err != nil {
		return nil, fmt.Errorf("study %s: %v", origin, loc.place(err))
	}
	// The schema is the published description of the layout; the checks
	// above give the clearer messages, this one catches anything they miss.
	schemaOnce.Do(func() { schema, schemaErr = schemas.Compile("study.schema.json") })
	if schemaErr != nil {
		return nil, schemaErr
	}
	if err := schemas.ValidateBytes(schema, b); err != nil {
		return nil, fmt.Errorf("study %s does not follow schemas/study.schema.json: %v", origin, loc.place(err))
	}
	return s, nil
}

// jsonErr adds the line and column to a JSON syntax or type error.
func jsonErr(b []byte, err error) error {
	var off int64 = -1
	switch e := err.(type) {
	case *json.SyntaxError:
		off = e.Offset
	case *json.UnmarshalTypeError:
		off = e.Offset
	}
	if off < 0 || off > int64(len(b)) {
		return err
	}
	return fmt.Errorf("%s: %v", at(b, int(off)), err)
}

func (s *Study) build(read Reader) error {
	if s.Format != Format {
		return fmt.Errorf("format is %q; this build reads %q", s.Format, Format)
	}
	if strings.TrimSpace(s.Name) == "" {
		return fmt.Errorf("name is empty")
	}
	if s.MemoryLimit != "" {
		b, err := engine.ParseMemorySize(s.MemoryLimit)
		if err != nil {
			return fmt.Errorf("memory_limit: %v", err)
		}
		s.MemoryLimitBytes = b
	}
	names := map[string]int{}
	for i, e := range s.File.Molecules {
		m, err := e.load(read)
		if err != nil {
			return fmt.Errorf("molecules[%d]: %v", i, err)
		}
		k := fold(m.Name)
		if j, dup := names[k]; dup {
			return fmt.Errorf("molecules[%d]: the name %q is used by molecules[%d] too; give one of them a \"name\"", i, m.Name, j)
		}
		names[k] = i
		s.molecules = append(s.molecules, m)
	}
	ids := map[string]int{}
	for i, e := range s.File.Levels {
		lv, err := e.expand()
		if err != nil {
			return fmt.Errorf("levels[%d]: %v", i, err)
		}
		for _, l := range lv {
			k := fold(l.ID)
			if j, dup := ids[k]; dup {
				return fmt.Errorf("levels[%d]: level %q is defined by levels[%d] too; give one of them an \"id\"", i, l.ID, j)
			}
			ids[k] = i
			s.levels = append(s.levels, l)
		}
	}
	for k := range s.Tags {
		if strings.TrimSpace(k) == "" {
			return fmt.Errorf("tags: a tag key is empty")
		}
	}
	for i, t := range s.Tasks {
		if err := s.checkTask(t); err != nil {
			return fmt.Errorf("tasks[%d]: %v", i, err)
		}
	}
	return nil
}

func fold(s string) string { return strings.ToLower(strings.TrimSpace(s)) }

func (e MoleculeEntry) load(read Reader) (*Molecule, error) {
	var in *molecule.Input
	var err error
	switch {
	case e.File != "" && e.XYZ != "":
		return nil, fmt.Errorf("give either \"file\" or \"xyz\", not both")
	case e.File != "":
		if read == nil {
			return nil, fmt.Errorf("file %q: this study cannot name files", e.File)
		}
		b, err := read(e.File)
		if err != nil {
			return nil, fmt.Errorf("file %q: %v", e.File, err)
		}
		in, err = molecule.Read(bytes.NewReader(b), e.File)
		if err != nil {
			return nil, err
		}
	case e.XYZ != "":
		in = &molecule.Input{}
		if in.Mol, err = molecule.ParseXYZ(strings.NewReader(e.XYZ), "inline xyz"); err != nil {
			return nil, err
		}
	default:
		return nil, fmt.Errorf("give \"file\" (a molecule file relative to the study) or \"xyz\" (the XYZ text)")
	}
	m := in.Mol
	if e.Name != "" {
		m.Name = strings.TrimSpace(e.Name)
	}
	if m.Name == "" && e.File != "" {
		m.Name = strings.TrimSuffix(filepath.Base(e.File), filepath.Ext(e.File))
	}
	if m.Name == "" {
		return nil, fmt.Errorf("the molecule has no name: give \"name\" or a comment line in the XYZ text")
	}
	if e.Charge != nil {
		m.Charge = *e.Charge
	}
	if e.Multiplicity != nil {
		m.Multiplicity = *e.Multiplicity
	}
	if err := m.Check(); err != nil {
		return nil, fmt.Errorf("molecule %q: %v", m.Name, err)
	}
	return &Molecule{Name: m.Name, Mol: m, Notes: in.Notes, allowClose: e.AllowCloseAtoms}, nil
}

func (e LevelEntry) expand() ([]*Level, error) {
	single := e.Method != "" || e.Basis != ""
	cross := len(e.Methods) > 0 || len(e.BasisSets) > 0
	switch {
	case single && cross:
		return nil, fmt.Errorf("give either \"method\" and \"basis\" or \"methods\" and \"basis_sets\", not both")
	case single && (e.Method == "" || e.Basis == ""):
		return nil, fmt.Errorf("a level needs both \"method\" and \"basis\"")
	case cross && (len(e.Methods) == 0 || len(e.BasisSets) == 0):
		return nil, fmt.Errorf("a cross product needs both \"methods\" and \"basis_sets\"")
	case !single && !cross:
		return nil, fmt.Errorf("give \"method\" and \"basis\", or \"methods\" and \"basis_sets\"")
	case cross && e.ID != "":
		return nil, fmt.Errorf("\"id\" names a single level; the levels of a cross product are named method/basis")
	}
	methods, sets := e.Methods, e.BasisSets
	if single {
		methods, sets = []string{e.Method}, []string{e.Basis}
	}
	var out []*Level
	for _, m := range methods {
		for _, b := range sets {
			l, err := e.level(m, b, single)
			if err != nil {
				return nil, err
			}
			out = append(out, l)
		}
	}
	return out, nil
}

func (e LevelEntry) level(method, basisName string, single bool) (*Level, error) {
	mname := fold(method)
	info, ok := engine.Methods[mname]
	if !ok {
		return nil, fmt.Errorf("method %q is not known (known: %s)", method, strings.Join(engine.MethodNames(), ", "))
	}
	set, err := basis.Load(basisName)
	if err != nil {
		return nil, err
	}
	r := engine.Request{Method: mname, Basis: basisName, Grid: e.Grid, RelaxedProps: e.RelaxedProperties}
	if e.FrozenCore {
		if !info.Correlated() && single {
			return nil, fmt.Errorf("frozen_core applies to correlated methods (mp2, scs-mp2, ccsd, ccsd(t)), not to %s", mname)
		}
		r.FrozenCore = info.Correlated()
	}
	if e.Grid != "" && info.Family != "dft" && single {
		return nil, fmt.Errorf("grid applies to DFT methods, not to %s", mname)
	}
	if e.RelaxedProperties != "" && !info.Correlated() && single {
		return nil, fmt.Errorf("relaxed_properties applies to correlated methods, not to %s", mname)
	}
	if info.Family != "dft" {
		r.Grid = ""
	}
	if !info.Correlated() {
		r.RelaxedProps = ""
	}
	switch e.Angular {
	case "":
	case "spherical":
		r.Angular = basis.Spherical
	case "cartesian":
		r.Angular = basis.Cartesian
	default:
		return nil, fmt.Errorf("angular %q is not spherical or cartesian", e.Angular)
	}
	if e.MultipoleOrigin != "" {
		o, err := engine.ParseOrigin(e.MultipoleOrigin)
		if err != nil {
			return nil, err
		}
		r.Origin = o
	}
	if f := e.DensityFitting; f != nil {
		if info.Correlated() && single {
			return nil, fmt.Errorf("density_fitting covers the SCF and DFT methods; %s runs with exact integrals", mname)
		}
		if !info.Correlated() {
			r.Fitting = &engine.FittingRequest{SCFSet: f.SCFSet}
			setF(&r.Fitting.MetricCutoff, f.MetricCutoff)
			setF(&r.Fitting.SchwarzThreshold, f.SchwarzThreshold)
		}
	}
	if e.SCF != nil {
		sc := engine.DefaultSCF
		e.SCF.apply(&sc)
		r.SCF = &sc
	}

	label := mname
	if r.FrozenCore {
		label += "(fc)"
	}
	label += "/" + set.Name
	if r.Fitting != nil {
		label += " (fitted)"
	}
	id := e.ID
	if id == "" {
		id = mname + "/" + strings.TrimSpace(basisName)
		if r.Fitting != nil {
			id += "/fitted"
		}
	} else {
		// A named level is shown by its name: several may share method and basis.
		label = strings.TrimSpace(id) + " (" + label + ")"
	}
	return &Level{ID: strings.TrimSpace(id), Label: label, Request: r, family: info.Family, opt: e.Optimization}, nil
}

func (c *SCFEntry) apply(s *engine.SCFSettings) {
	setF(&s.EnergyTolHartree, c.EnergyTolHartree)
	setF(&s.DensityTol, c.DensityTol)
	setF(&s.GradientTol, c.GradientTol)
	setI(&s.MaxIter, c.MaxIter)
	if c.Guess != "" {
		s.Guess = c.Guess
	}
	setI(&s.DIISSize, c.DIISSize)
	setF(&s.SchwarzThreshold, c.SchwarzThreshold)
	setF(&s.LevelShiftHartree, c.LevelShiftHartree)
}

func (c *OptEntry) apply(o *engine.OptSettings) {
	setF(&o.MaxForce, c.MaxForce)
	setF(&o.RMSForce, c.RMSForce)
	setF(&o.MaxStep, c.MaxStep)
	setF(&o.EnergyChange, c.EnergyChange)
	setI(&o.MaxSteps, c.MaxSteps)
	setF(&o.TrustRadiusBohr, c.TrustRadiusBohr)
	if c.GradientMethod != "" {
		o.GradientMethod = c.GradientMethod
	}
	setF(&o.FiniteDiffStepAU, c.FiniteDiffStepAU)
	setF(&o.SymmetryTolAngstrom, c.SymmetryTolAngstrom)
}

func setF(dst *float64, v *float64) {
	if v != nil {
		*dst = *v
	}
}

func setI(dst *int, v *int) {
	if v != nil {
		*dst = *v
	}
}

// level finds a level by id (case-insensitive).
func (s *Study) level(id string) *Level {
	for _, l := range s.levels {
		if fold(l.ID) == fold(id) {
			return l
		}
	}
	return nil
}

func (s *Study) molecule(name string) *Molecule {
	for _, m := range s.molecules {
		if fold(m.Name) == fold(name) {
			return m
		}
	}
	return nil
}

func (s *Study) levelIDs() string {
	var out []string
	for _, l := range s.levels {
		out = append(out, l.ID)
	}
	return strings.Join(out, ", ")
}

func (s *Study) checkTask(t TaskEntry) error {
	switch t.Task {
	case "optimize", "energy", "frequencies":
	default:
		return fmt.Errorf("task %q is not known (optimize, energy or frequencies)", t.Task)
	}
	for _, id := range t.Levels {
		if s.level(id) == nil {
			return fmt.Errorf("level %q is not defined (levels: %s)", id, s.levelIDs())
		}
	}
	for _, n := range t.Molecules {
		if s.molecule(n) == nil {
			var all []string
			for _, m := range s.molecules {
				all = append(all, m.Name)
			}
			sort.Strings(all)
			return fmt.Errorf("molecule %q is not in the study (molecules: %s)", n, strings.Join(all, ", "))
		}
	}
	if t.GeometryFrom != "" {
		if s.level(t.GeometryFrom) == nil {
			return fmt.Errorf("geometry_from: level %q is not defined (levels: %s)", t.GeometryFrom, s.levelIDs())
		}
		if t.Task == "optimize" {
			for _, l := range s.taskLevels(t) {
				if fold(l.ID) == fold(t.GeometryFrom) {
					return fmt.Errorf("an optimisation at level %q cannot start from its own optimised geometry", l.ID)
				}
			}
		}
	}
	return nil
}

func (s *Study) taskLevels(t TaskEntry) []*Level {
	if len(t.Levels) == 0 {
		return s.levels
	}
	var out []*Level
	for _, id := range t.Levels {
		out = append(out, s.level(id))
	}
	return out
}

func (s *Study) taskMolecules(t TaskEntry) []*Molecule {
	if len(t.Molecules) == 0 {
		return s.molecules
	}
	var out []*Molecule
	for _, n := range t.Molecules {
		out = append(out, s.molecule(n))
	}
	return out
}

// ResolvePath resolves a path named in the study (reference set, report
// output) against the study's directory.
func (s *Study) ResolvePath(p string) string {
	if p == "" || filepath.IsAbs(p) || s.Dir == "" {
		return p
	}
	return filepath.Join(s.Dir, p)
}
