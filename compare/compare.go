package compare

import (
	"fmt"
	"maps"
	"math"
	"sort"
	"strings"

	"moltrail/archive"
	"moltrail/engine"
	"moltrail/engine/molecule"
)

// Options are the thresholds and bootstrap settings of a comparison. The
// zero value means the defaults (DefaultOptions).
type Options struct {
	// BootstrapSamples is the number of resamples for confidence intervals.
	BootstrapSamples int
	// Seed fixes the bootstrap random stream, so the output is deterministic.
	Seed uint64
	// Confidence is the coverage of the intervals (0.95).
	Confidence float64
	// DipoleFloorDebye, QuadFloorDA, EnergyFloorKJ: below these magnitudes a
	// dipole, quadrupole or energy difference is "near zero".
	DipoleFloorDebye float64
	QuadFloorDA      float64
	EnergyFloorKJ    float64
	// CancelDipole and CancelQuad: cancellation ratios above these are flagged.
	CancelDipole float64
	CancelQuad   float64
	// SCFMoments: a correlated record without moments of its own level
	// contributes its SCF density's moments under the SCF level's label
	// (archive.SCFLevelLabel, e.g. "HF/6-31G*//MP2(fc)/6-31G*"), never under
	// its own.
	SCFMoments bool
	// PropertyGeometry overrides the reference set's property-geometry
	// rule (GeometryRuleOptimised or GeometryRuleInput; "" = the set's).
	PropertyGeometry string
	// Lookup finds archived records outside the compared ones, to name the
	// level a borrowed geometry was optimised at (nil: only the records
	// compared are searched).
	Lookup archive.Lookup
}

// DefaultOptions are the settings used when a field of Options is zero.
var DefaultOptions = Options{
	BootstrapSamples: 2000,
	Seed:             20240917,
	Confidence:       0.95,
	DipoleFloorDebye: 0.3,
	QuadFloorDA:      0.5,
	EnergyFloorKJ:    1,
	CancelDipole:     50,
	CancelQuad:       20,
}

func (o Options) withDefaults() Options {
	d := DefaultOptions
	if o.BootstrapSamples > 0 {
		d.BootstrapSamples = o.BootstrapSamples
	}
	if o.Seed != 0 {
		d.Seed = o.Seed
	}
	if o.Confidence > 0 && o.Confidence < 1 {
		d.Confidence = o.Confidence
	}
	if o.DipoleFloorDebye > 0 {
		d.DipoleFloorDebye = o.DipoleFloorDebye
	}
	if o.QuadFloorDA > 0 {
		d.QuadFloorDA = o.QuadFloorDA
	}
	if o.EnergyFloorKJ > 0 {
		d.EnergyFloorKJ = o.EnergyFloorKJ
	}
	if o.CancelDipole > 0 {
		d.CancelDipole = o.CancelDipole
	}
	if o.CancelQuad > 0 {
		d.CancelQuad = o.CancelQuad
	}
	d.SCFMoments, d.PropertyGeometry, d.Lookup = o.SCFMoments, o.PropertyGeometry, o.Lookup
	return d
}

// molKey identifies a reference molecule: folded name, formula, charge.
type molKey string

func keyOf(m *RefMolecule) molKey {
	f, _ := ParseFormula(m.Formula)
	return molKey(normName(m.Name) + "|" + hill(f) + "|" + fmt.Sprint(m.Charge))
}

// hill writes element counts as a Hill formula (the engine's Formula).
func hill(c map[string]int) string {
	var m molecule.Molecule
	for s, n := range c {
		for ; n > 0; n-- {
			m.Atoms = append(m.Atoms, molecule.Atom{Symbol: s})
		}
	}
	return m.Formula()
}

// levelOf returns the level of a record, labelled by archive.LevelLabel
// (geometry-from links are followed with look).
func levelOf(r *archive.Record, look archive.Lookup) Level {
	fc := r.Input.Correlation != nil && r.Input.Correlation.FrozenCore
	l := Level{Label: archive.LevelLabel(r, look), Method: r.Input.Method, Reference: r.Input.Reference, Basis: r.Input.Basis.Name, FrozenCore: fc, Diffuse: hasDiffuse(r.Input.Basis.Name)}
	if g := archive.GeometryOf(r, look); g.Kind == archive.GeometryBorrowed {
		l.GeometryLevel = g.SourceLevel
	}
	return l
}

// hasDiffuse judges from a basis name whether it carries diffuse functions:
// the aug- prefix, a + in Pople names, or the D suffix of the def2 family.
func hasDiffuse(name string) bool {
	n := strings.ToLower(name)
	if strings.Contains(n, "aug-") || strings.Contains(n, "+") || strings.Contains(n, "diffuse") {
		return true
	}
	if strings.HasPrefix(n, "def2-") {
		base := strings.TrimSuffix(strings.TrimSuffix(n, "-ri"), "-jkfit")
		return strings.HasSuffix(base, "d")
	}
	return false
}

var methodRank = map[string]int{"hf": 0, "rhf": 1, "uhf": 2, "rohf": 3, "svwn5": 4, "blyp": 5, "pbe": 6, "b3lyp": 7, "b3lyp5": 8, "pbe0": 9, "mp2": 10, "scs-mp2": 11}

func levelLess(a, b Level) bool {
	ra, oka := methodRank[a.Method]
	rb, okb := methodRank[b.Method]
	if !oka {
		ra = 100
	}
	if !okb {
		rb = 100
	}
	if ra != rb {
		return ra < rb
	}
	if a.Basis != b.Basis {
		return strings.ToLower(a.Basis) < strings.ToLower(b.Basis)
	}
	return a.Label < b.Label
}

// recMol is a record seen as a molecule: geometry (Å), elements, formula.
type recMol struct {
	rec     *archive.Record
	level   Level
	symbols []string
	geomA   [][3]float64
	counts  map[string]int
	// geometry is the record's geometry source kind (archive.GeometryOf).
	geometry string
	// scfView: this is the SCF density of a correlated record, standing
	// for its own level (archive.SCFLevelLabel) and for moments only.
	scfView bool
}

func newRecMol(r *archive.Record, look archive.Lookup) *recMol {
	m := &recMol{rec: r, level: levelOf(r, look), counts: map[string]int{}, geometry: archive.GeometryOf(r, look).Kind}
	if len(r.Results.GeometryAngstrom) > 0 {
		for _, a := range r.Results.GeometryAngstrom {
			m.symbols = append(m.symbols, a.Symbol)
			m.geomA = append(m.geomA, a.XYZ)
		}
	} else {
		for _, a := range r.Input.Molecule.Atoms {
			m.symbols = append(m.symbols, a.Symbol)
			m.geomA = append(m.geomA, [3]float64{a.Bohr[0] * molecule.BohrAngstrom, a.Bohr[1] * molecule.BohrAngstrom, a.Bohr[2] * molecule.BohrAngstrom})
		}
	}
	for _, s := range m.symbols {
		m.counts[s]++
	}
	return m
}

func shortID(id string) string {
	if len(id) > 12 {
		return id[:12]
	}
	return id
}

// checkIdentity verifies that a record named like a reference molecule
// really is it. A different formula under the same name is an error (the
// pairing would be wrong); a different charge or multiplicity means a
// different species of the same atoms (an ion, another spin state), which
// is returned as a reason to leave the record out.
func checkIdentity(entryID string, m *RefMolecule, rm *recMol) (other string, err error) {
	want, _ := ParseFormula(m.Formula)
	r := rm.rec
	if !maps.Equal(want, rm.counts) {
		return "", fmt.Errorf("entry %q (%s, %s): record %s is named %q but its atoms make %s: the names match, the molecules do not; rename the record's molecule or leave it out with a selection flag",
			entryID, m.Name, m.Formula, shortID(r.ID), r.Input.Molecule.Name, hill(rm.counts))
	}
	if r.Input.Molecule.Charge != m.Charge {
		return fmt.Sprintf("charge %+d, but the reference molecule %s has charge %+d", r.Input.Molecule.Charge, m.Name, m.Charge), nil
	}
	mult := m.Multiplicity
	if mult == 0 {
		mult = lowestMultiplicity(rm.counts, m.Charge)
	}
	if mult != 0 && r.Input.Molecule.Multiplicity != mult {
		return fmt.Sprintf("multiplicity %d, but the reference molecule %s has multiplicity %d", r.Input.Molecule.Multiplicity, m.Name, mult), nil
	}
	return "", nil
}

// lowestMultiplicity is the multiplicity a reference molecule that states
// none is taken to have: the lowest its electron count allows (1 for an
// even count, 2 for an odd one), the same default as a calculation's. It
// is 0 when an element is unknown.
func lowestMultiplicity(counts map[string]int, charge int) int {
	electrons := -charge
	for sym, n := range counts {
		el, err := molecule.Lookup(sym)
		if err != nil {
			return 0
		}
		electrons += el.Z * n
	}
	return (electrons%2+2)%2 + 1
}

// checkAtoms verifies atom by atom that the record's atoms carry the
// elements the entry lists, in the same order.
func checkAtoms(e *Entry, rm *recMol) error {
	if len(e.Molecule.Atoms) == 0 {
		return nil
	}
	if len(rm.symbols) != len(e.Molecule.Atoms) {
		return fmt.Errorf("entry %q (%s): record %s has %d atoms, the entry lists %d", e.ID, e.Molecule.Name, shortID(rm.rec.ID), len(rm.symbols), len(e.Molecule.Atoms))
	}
	for i, s := range e.Molecule.Atoms {
		if !strings.EqualFold(rm.symbols[i], s) {
			return fmt.Errorf("entry %q (%s): record %s has %s as atom %d where the entry expects %s (entry atom order: %s; record: %s): reorder the record's geometry or the entry's atoms so that indices agree",
				e.ID, e.Molecule.Name, shortID(rm.rec.ID), rm.symbols[i], i, s, strings.Join(e.Molecule.Atoms, " "), strings.Join(rm.symbols, " "))
		}
	}
	return nil
}

func usesAtomOrder(kind string) bool {
	switch kind {
	case KindBondLength, KindAngle, KindDipoleAxis, KindQuadrupole:
		return true
	}
	return false
}

func purposeOf(kind string) string {
	switch kind {
	case KindBondLength, KindAngle:
		return PurposeStructure
	case KindEnergy, KindEnergyDelta:
		return PurposeEnergy
	}
	return PurposeProperties
}

// correlated reports whether a method's numbers come from a correlated
// wavefunction on top of its SCF reference (MP2 family, coupled cluster):
// such a level's moments are its own density's or none.
func correlated(method string) bool {
	f := engine.Methods[method].Family
	return f != "" && f != "hf" && f != "dft"
}

// geometryRule is the property-geometry rule in force.
func geometryRule(set *RefSet, o Options) string {
	if o.PropertyGeometry != "" {
		return o.PropertyGeometry
	}
	if set.PropertyGeometry != "" {
		return set.PropertyGeometry
	}
	return GeometryRuleOptimised
}

// Compare matches records with the reference set and builds the Table.
// Records that are nil or belong to no reference molecule are ignored;
// records that match a molecule but did not converge are listed in
// Table.Excluded. An error means a record and an entry claim the same
// molecule but disagree (formula, charge or atom order): such a pairing is
// never made silently.
func Compare(set *RefSet, records []*archive.Record, opt Options) (*Table, error) {
	if set == nil {
		return nil, fmt.Errorf("no reference set given")
	}
	o := opt.withDefaults()
	switch o.PropertyGeometry {
	case "", GeometryRuleOptimised, GeometryRuleInput:
	default:
		return nil, fmt.Errorf("property-geometry rule %q is not known (%s or %s)", o.PropertyGeometry, GeometryRuleOptimised, GeometryRuleInput)
	}
	look := archive.Either(archive.LookupIn(records), o.Lookup)
	t := &Table{
		RefSet: RefSetInfo{Name: set.Name, Description: set.Description, Source: set.Source, Origin: set.Origin, SHA256: set.SHA256, Entries: len(set.Entries)},
		Settings: Settings{
			BootstrapSamples: o.BootstrapSamples, BootstrapSeed: o.Seed, Confidence: o.Confidence,
			DipoleFloorDebye: o.DipoleFloorDebye, QuadFloorDA: o.QuadFloorDA, EnergyFloorKJ: o.EnergyFloorKJ,
			CancelDipole: o.CancelDipole, CancelQuad: o.CancelQuad,
		},
		Levels: []Level{}, Records: []RecordInfo{}, Picked: []Pick{}, Deviations: []Deviation{}, Stats: []Stats{}, LevelDiffs: []LevelDiff{},
		Cautions: []Caution{}, Excluded: []Excluded{}, Unmatched: []Unmatched{},
	}

	// Every reference molecule (entries and energy terms), by key, with the
	// folded names a record may carry.
	type refMol struct {
		mol   RefMolecule
		entry string // first entry that names it, for messages
	}
	mols := map[molKey]*refMol{}
	keys := map[*RefMolecule]molKey{} // computed once per molecule of the set
	byName := map[string][]molKey{}
	addMol := func(m *RefMolecule, entryID string) {
		k := keyOf(m)
		keys[m] = k
		if _, ok := mols[k]; ok {
			return
		}
		mols[k] = &refMol{mol: *m, entry: entryID}
		for _, n := range m.names() {
			byName[n] = appendUnique(byName[n], k)
		}
	}
	for i := range set.Entries {
		e := &set.Entries[i]
		if e.Quantity.Kind == KindEnergyDelta {
			for j := range e.Quantity.Terms {
				addMol(&e.Quantity.Terms[j].Molecule, e.ID)
			}
			continue
		}
		addMol(&e.Molecule, e.ID)
	}

	// Records by reference molecule and level; non-converged ones excluded.
	type slot struct {
		key   molKey
		level string
	}
	cands := map[slot][]*recMol{}
	levels := map[string]Level{}
	seenRec := map[string]bool{}
	refRec := map[string]string{} // record id → the entry it is the source of
	for _, e := range set.Entries {
		for _, id := range e.Records {
			if _, ok := refRec[id]; !ok {
				t.ReferenceRecords = append(t.ReferenceRecords, id)
			}
			refRec[id] = e.ID
		}
	}
	for _, r := range records {
		if r == nil || seenRec[r.ID] {
			continue
		}
		seenRec[r.ID] = true
		if eid, ok := refRec[r.ID]; ok {
			t.Excluded = append(t.Excluded, Excluded{RecordID: r.ID, Molecule: r.Input.Molecule.Name, Formula: r.Formula(), Level: archive.LevelLabel(r, look), Status: r.Status,
				Reason: "the source of reference entry " + eid + ": not compared with its own value"})
			continue
		}
		named := byName[normName(r.Input.Molecule.Name)]
		if len(named) == 0 {
			continue
		}
		rm := newRecMol(r, look)
		t.Records = append(t.Records, RecordInfo{RecordID: r.ID, Level: rm.level.Label, Geometry: archive.GeometryWords(r, look), GeometryKind: archive.GeometryOf(r, look).Kind})
		status := r.Status
		if status == "" {
			status = r.Results.Status
		}
		if status != engine.StatusConverged {
			reason := "status " + status + ": only converged records are compared"
			if r.Results.Error != "" {
				reason += " (" + r.Results.Error + ")"
			}
			t.Excluded = append(t.Excluded, Excluded{RecordID: r.ID, Molecule: r.Input.Molecule.Name, Formula: hill(rm.counts), Level: rm.level.Label, Status: status, Reason: reason})
			continue
		}
		// A name can be shared by molecules that differ in charge (an ion
		// and its parent): the record belongs to the one whose formula and
		// charge it has; if none fits, the first names the error.
		var matched []molKey
		var firstErr error
		var others []string
		for _, k := range named {
			rmol := mols[k]
			other, err := checkIdentity(rmol.entry, &rmol.mol, rm)
			if err != nil {
				if firstErr == nil {
					firstErr = err
				}
				continue
			}
			if other != "" {
				others = append(others, other)
				continue
			}
			matched = append(matched, k)
		}
		if len(matched) == 0 {
			if firstErr != nil {
				return nil, firstErr
			}
			t.Excluded = append(t.Excluded, Excluded{RecordID: r.ID, Molecule: r.Input.Molecule.Name, Formula: hill(rm.counts), Level: rm.level.Label, Status: status,
				Reason: "a different species under a reference molecule's name: " + strings.Join(others, "; ")})
			continue
		}
		levels[rm.level.Label] = rm.level
		for _, k := range matched {
			s := slot{k, rm.level.Label}
			cands[s] = append(cands[s], rm)
		}
		if v := scfView(rm, look, o); v != nil {
			levels[v.level.Label] = v.level
			for _, k := range matched {
				s := slot{k, v.level.Label}
				cands[s] = append(cands[s], v)
			}
		}
	}
	for _, l := range levels {
		t.Levels = append(t.Levels, l)
	}
	sort.Slice(t.Records, func(i, j int) bool { return t.Records[i].RecordID < t.Records[j].RecordID })
	sort.Slice(t.Levels, func(i, j int) bool { return levelLess(t.Levels[i], t.Levels[j]) })
	sort.Slice(t.Excluded, func(i, j int) bool {
		if t.Excluded[i].Molecule != t.Excluded[j].Molecule {
			return t.Excluded[i].Molecule < t.Excluded[j].Molecule
		}
		return t.Excluded[i].RecordID < t.Excluded[j].RecordID
	})

	// Picking: newest usable record per molecule × level × purpose.
	type pslot struct {
		key     molKey
		level   string
		purpose string
	}
	picks := map[pslot]*recMol{}
	rule := geometryRule(set, o)
	t.Settings.PropertyGeometry, t.Settings.SCFMoments = rule, o.SCFMoments
	pickFor := func(k molKey, level, purpose string) (*recMol, string) {
		ps := pslot{k, level, purpose}
		if rm, ok := picks[ps]; ok {
			return rm, ""
		}
		all := cands[slot{k, level}]
		var usable []*recMol
		skipped := map[string]int{}
		for _, rm := range all {
			switch {
			case purpose == PurposeStructure && (rm.geometry != archive.GeometryOptimised || rm.scfView):
				skipped[rm.geometry]++
				continue
			case purpose == PurposeEnergy && rm.scfView:
				continue
			case purpose != PurposeStructure && !geometryAllowed(rule, rm.geometry):
				skipped[rm.geometry]++
				continue
			}
			usable = append(usable, rm)
		}
		if len(usable) == 0 {
			return nil, unusable(purpose, rule, skipped)
		}
		sort.Slice(usable, func(i, j int) bool {
			a, b := usable[i].rec, usable[j].rec
			if a.Run.StartUTC != b.Run.StartUTC {
				return a.Run.StartUTC > b.Run.StartUTC
			}
			return a.ID < b.ID
		})
		rm := usable[0]
		picks[ps] = rm
		what := "converged records at " + geometryPhrase(rule)
		if purpose == PurposeStructure {
			what = "converged geometry optimisations"
		}
		reason := "the only one of the " + what
		if len(usable) > 1 {
			reason = fmt.Sprintf("newest of %d %s", len(usable), what)
		}
		m := mols[k].mol
		t.Picked = append(t.Picked, Pick{Molecule: m.Name, Formula: m.Formula, Level: level, Purpose: purpose, RecordID: rm.rec.ID,
			DateUTC: rm.rec.Run.StartUTC, Candidates: len(usable), Reason: reason})
		return rm, ""
	}

	checkedAtoms := map[string]bool{}
	for _, lv := range t.Levels {
		for i := range set.Entries {
			e := &set.Entries[i]
			var dev *Deviation
			var ctx *devContext
			var why string
			var err error
			if e.Quantity.Kind == KindEnergyDelta {
				dev, ctx, why = energyDelta(e, lv.Label, func(m *RefMolecule) (*recMol, string) {
					return pickFor(keys[m], lv.Label, PurposeEnergy)
				})
			} else {
				rm, reason := pickFor(keys[&e.Molecule], lv.Label, purposeOf(e.Quantity.Kind))
				if rm == nil {
					// Only molecules that have records at this level are listed:
					// a set usually covers more molecules than a study.
					if len(cands[slot{keys[&e.Molecule], lv.Label}]) > 0 {
						t.Unmatched = append(t.Unmatched, Unmatched{EntryID: e.ID, Molecule: e.Molecule.Name, Quantity: e.Quantity.Kind, Level: lv.Label, Reason: reason})
					}
					continue
				}
				ck := e.ID + "|" + rm.rec.ID
				if usesAtomOrder(e.Quantity.Kind) && !checkedAtoms[ck] {
					if err := checkAtoms(e, rm); err != nil {
						return nil, err
					}
					checkedAtoms[ck] = true
				}
				dev, ctx, err = evaluate(e, rm)
				if err != nil {
					why = err.Error()
				}
			}
			if dev == nil {
				if why != "" {
					t.Unmatched = append(t.Unmatched, Unmatched{EntryID: e.ID, Molecule: e.Molecule.Name, Quantity: e.Quantity.Kind, Level: lv.Label, Reason: why})
				}
				continue
			}
			dev.Level = lv.Label
			t.Deviations = append(t.Deviations, *dev)
			t.attachCautions(len(t.Deviations)-1, e, ctx, lv, o)
		}
	}
	t.levelCautions(o)
	t.statistics(o)
	t.levelDiffs(o)
	t.excludedCautions()
	t.Legend = Legend()
	t.Notes = standardNotes(t)
	return t, nil
}

func appendUnique(s []molKey, k molKey) []molKey {
	for _, x := range s {
		if x == k {
			return s
		}
	}
	return append(s, k)
}

// devContext carries what the caution checks need beyond the Deviation.
type devContext struct {
	rec *recMol
	// signed: the quantity has a meaningful sign.
	signed bool
	// precision is the numerical precision the record's settings guarantee
	// for this quantity, in the natural unit (0 = unknown).
	precision     float64
	precisionHow  string
	cancelRatio   float64
	cancelDetail  string
	originDetail  string
	originCaution bool
}

// ---- evaluation of one entry on one record ----

func sub(a, b [3]float64) [3]float64 { return [3]float64{a[0] - b[0], a[1] - b[1], a[2] - b[2]} }
func dot(a, b [3]float64) float64    { return a[0]*b[0] + a[1]*b[1] + a[2]*b[2] }
func norm(a [3]float64) float64      { return math.Sqrt(dot(a, a)) }
func scale(a [3]float64, s float64) [3]float64 {
	return [3]float64{a[0] * s, a[1] * s, a[2] * s}
}
func cross(a, b [3]float64) [3]float64 {
	return [3]float64{a[1]*b[2] - a[2]*b[1], a[2]*b[0] - a[0]*b[2], a[0]*b[1] - a[1]*b[0]}
}

func centroid(g [][3]float64, idx []int) [3]float64 {
	var c [3]float64
	for _, i := range idx {
		for k := 0; k < 3; k++ {
			c[k] += g[i][k]
		}
	}
	return scale(c, 1/float64(len(idx)))
}

// direction returns the unit vector of d in the record's geometry.
func direction(g [][3]float64, d Direction) ([3]float64, error) {
	v := sub(centroid(g, d.To), centroid(g, d.From))
	n := norm(v)
	if n < 1e-8 {
		return v, fmt.Errorf("the axis from atoms %v to atoms %v has zero length in this geometry", d.From, d.To)
	}
	return scale(v, 1/n), nil
}

// frame returns the orthonormal frame (x, y, z) of f; x is needed only if needX.
func frame(g [][3]float64, f *Frame, needX bool) (x, y, z [3]float64, err error) {
	z, err = direction(g, f.Z)
	if err != nil {
		return
	}
	if !needX {
		return
	}
	xv, err := direction(g, *f.X)
	if err != nil {
		return
	}
	xv = sub(xv, scale(z, dot(xv, z)))
	n := norm(xv)
	if n < 1e-6 {
		err = fmt.Errorf("frame x direction is parallel to z in this geometry")
		return
	}
	x = scale(xv, 1/n)
	y = cross(z, x)
	return
}

func (m *recMol) molecule() *molecule.Molecule {
	mol := &molecule.Molecule{Name: m.rec.Input.Molecule.Name, Charge: m.rec.Input.Molecule.Charge, Multiplicity: m.rec.Input.Molecule.Multiplicity}
	for i, s := range m.symbols {
		a, err := molecule.NewAtom(s, m.geomA[i][0]*molecule.AngstromBohr, m.geomA[i][1]*molecule.AngstromBohr, m.geomA[i][2]*molecule.AngstromBohr)
		if err != nil {
			continue
		}
		mol.Atoms = append(mol.Atoms, a)
	}
	return mol
}

// props returns the properties block of the density that stands for the
// record's level: the level's own (relaxed) density when there is one; the
// SCF density for an SCF level or an SCF view; else nil.
func (m *recMol) props() *engine.Properties {
	r := &m.rec.Results
	switch {
	case m.scfView:
		return r.SCFProperties
	case r.LevelProperties != nil:
		return r.LevelProperties
	case correlated(m.rec.Input.Method):
		return nil
	}
	return r.SCFProperties
}

// noMoments says why a record has no moments at its level.
func (m *recMol) noMoments(what string) string {
	if correlated(m.rec.Input.Method) && !m.scfView {
		return fmt.Sprintf("no %s at %s: record %s was run without relaxed properties, and the SCF density's moments it holds are not this level's (compare's SCF-moments option compares them under the label %s)",
			what, m.level.Label, shortID(m.rec.ID), archive.SCFLevelLabel(m.rec, nil))
	}
	return fmt.Sprintf("record %s has no %s", shortID(m.rec.ID), what)
}

// moments returns the dipole (D), traceless quadrupole (D·Å, as a 3×3
// tensor) and origin (Å) of the density that stands for the record's
// level, nil where there is none. Records without a properties block
// (written by hand or by older builds) give their contract keys, except
// for a correlated level, whose contract keys may hold the SCF moments.
func (m *recMol) moments() (mu *[3]float64, theta *[3][3]float64, originA [3]float64) {
	r := &m.rec.Results
	if p := m.props(); p != nil {
		d := p.DipoleDebye
		mu = &d
		q := p.QuadrupoleBuckingham
		if len(p.Quadrupole.TotalAU) == 6 || q != (engine.Quadrupole{}) {
			th := tensor(q)
			theta = &th
		}
		originA = scale(p.OriginBohr, molecule.BohrAngstrom)
		return
	}
	if correlated(m.rec.Input.Method) {
		return nil, nil, originA
	}
	mu = r.DipoleDebye
	if r.QuadrupoleBuckingham != nil {
		th := tensor(*r.QuadrupoleBuckingham)
		theta = &th
	}
	originA = scale(r.MultipoleOriginBohr, molecule.BohrAngstrom)
	return
}

// scfView returns the SCF-density view of a correlated record that holds
// no moments of its own level, when the options ask for one (else nil).
func scfView(rm *recMol, look archive.Lookup, o Options) *recMol {
	r := rm.rec
	if !o.SCFMoments || !correlated(r.Input.Method) || r.Results.LevelProperties != nil || r.Results.SCFProperties == nil {
		return nil
	}
	v := *rm
	v.scfView = true
	ref := r.Input.Reference
	if ref == "rhf" || ref == "" {
		ref = "hf"
	}
	v.level = Level{Label: archive.SCFLevelLabel(r, look), Method: ref, Reference: r.Input.Reference, Basis: r.Input.Basis.Name,
		Diffuse: rm.level.Diffuse, SCFOf: rm.level.Label}
	if g := archive.GeometryOf(r, look); g.Kind == archive.GeometryBorrowed {
		v.level.GeometryLevel = g.SourceLevel
	} else if g.Kind == archive.GeometryOptimised {
		v.level.GeometryLevel = rm.level.Label
	}
	return &v
}

// geometryAllowed applies the property-geometry rule to a record's
// geometry source.
func geometryAllowed(rule, geometry string) bool {
	if rule == GeometryRuleInput {
		return geometry == archive.GeometryInput
	}
	return geometry == archive.GeometryOptimised || geometry == archive.GeometryBorrowed
}

func geometryPhrase(rule string) string {
	if rule == GeometryRuleInput {
		return "the input geometry"
	}
	return "an optimised structure"
}

// unusable says why no record of a molecule at a level serves a purpose.
func unusable(purpose, rule string, skipped map[string]int) string {
	n := 0
	for _, c := range skipped {
		n += c
	}
	if n == 0 {
		return "no converged record at this level"
	}
	if purpose == PurposeStructure {
		return fmt.Sprintf("no converged geometry optimisation at this level (%d single-point record(s) not used: a single point does not optimise its geometry)", n)
	}
	if rule == GeometryRuleInput {
		return fmt.Sprintf("no single point at the input geometry at this level (%d record(s) at an optimised structure not used: the comparison takes properties at the input geometry)", n)
	}
	return fmt.Sprintf("no record at an optimised structure at this level (%d single point(s) at the input geometry not used: the comparison takes properties at each level's optimised structure; optimise, or compare with the input-geometry rule)", n)
}

func tensor(q engine.Quadrupole) [3][3]float64 {
	return [3][3]float64{{q.XX, q.XY, q.XZ}, {q.XY, q.YY, q.YZ}, {q.XZ, q.YZ, q.ZZ}}
}

// eAngToDebye converts e·Å to debye.
var eAngToDebye = molecule.DebyePerAU / molecule.BohrAngstrom

// shiftQuadrupole moves a traceless quadrupole (D·Å) of a system with
// dipole mu (D, about the old origin) and total charge q (e) from the old
// origin to newO (both Å): with d = newO − oldO,
// Θ'ij = Θij − 3/2 (μi dj + μj di) + δij μ·d + q (3/2 di dj − ½ d² δij).
func shiftQuadrupole(theta [3][3]float64, mu [3]float64, q float64, oldO, newO [3]float64) [3][3]float64 {
	d := sub(newO, oldO)
	md := dot(mu, d)
	dd := dot(d, d)
	var out [3][3]float64
	for i := 0; i < 3; i++ {
		for j := 0; j < 3; j++ {
			v := theta[i][j] - 1.5*(mu[i]*d[j]+mu[j]*d[i])
			v += q * eAngToDebye * 1.5 * d[i] * d[j]
			if i == j {
				v += md - q*eAngToDebye*0.5*dd
			}
			out[i][j] = v
		}
	}
	return out
}

func project(theta [3][3]float64, a, b [3]float64) float64 {
	s := 0.0
	for i := 0; i < 3; i++ {
		for j := 0; j < 3; j++ {
			s += a[i] * theta[i][j] * b[j]
		}
	}
	return s
}

func vec(x, y, z [3]float64, c byte) [3]float64 {
	switch c {
	case 'x':
		return x
	case 'y':
		return y
	}
	return z
}

var subscript = map[string]string{"xx": "xx", "yy": "yy", "zz": "zz", "xy": "xy", "xz": "xz", "yz": "yz"}

func atomLabel(m *RefMolecule, idx []int) string {
	var parts []string
	for _, i := range idx {
		parts = append(parts, fmt.Sprintf("%s%d", m.Atoms[i], i+1))
	}
	return strings.Join(parts, "+")
}

// quantityLabel is the display label of an entry's quantity.
func quantityLabel(e *Entry) string {
	q := e.Quantity
	m := &e.Molecule
	switch q.Kind {
	case KindBondLength:
		return fmt.Sprintf("r(%s%d–%s%d)", m.Atoms[q.Atoms[0]], q.Atoms[0]+1, m.Atoms[q.Atoms[1]], q.Atoms[1]+1)
	case KindAngle:
		return fmt.Sprintf("∠(%s%d–%s%d–%s%d)", m.Atoms[q.Atoms[0]], q.Atoms[0]+1, m.Atoms[q.Atoms[1]], q.Atoms[1]+1, m.Atoms[q.Atoms[2]], q.Atoms[2]+1)
	case KindDipoleNorm:
		return "|μ|"
	case KindDipoleAxis:
		return fmt.Sprintf("μ(%s→%s)", atomLabel(m, q.Axis.From), atomLabel(m, q.Axis.To))
	case KindQuadrupole:
		org := "c.m."
		if q.Origin == "centre-of-nuclear-charge" {
			org = "c.n.c."
		}
		return fmt.Sprintf("Θ%s[%s]", subscript[q.Component], org)
	case KindEnergy:
		return "E"
	case KindEnergyDelta:
		var parts []string
		for _, t := range q.Terms {
			parts = append(parts, fmt.Sprintf("%+g %s", t.Coefficient, t.Molecule.Formula))
		}
		return "ΔE(" + strings.Join(parts, " ") + ")"
	}
	return q.Kind
}

func baseDeviation(e *Entry) *Deviation {
	u := units[strings.TrimSpace(e.Unit)]
	return &Deviation{
		EntryID: e.ID, Molecule: e.Molecule.Name, Formula: e.Molecule.Formula, Quantity: quantityLabel(e),
		Kind: e.Quantity.Kind, Unit: NaturalUnit(e.Quantity.Kind),
		Reference: e.Value * u.factor, Uncertainty: e.Uncertainty * u.factor,
		RefKind: e.Kind, RefSource: e.Source, FromMemory: e.FromMemory, Cautions: []string{},
	}
}

// evaluate computes an entry's quantity from one record.
func evaluate(e *Entry, rm *recMol) (*Deviation, *devContext, error) {
	d := baseDeviation(e)
	d.RecordID = rm.rec.ID
	ctx := &devContext{rec: rm}
	q := e.Quantity
	g := rm.geomA
	job := &rm.rec.Input
	switch q.Kind {
	case KindBondLength:
		d.Computed = norm(sub(g[q.Atoms[1]], g[q.Atoms[0]])) * 100
		if o := job.Opt; o != nil {
			// A residual force F on a bond of stiffness k ≈ 0.3 Eh/bohr²
			// leaves it off its minimum by about F/k; the step criterion
			// bounds the last move.
			dr := math.Max(o.MaxForce/0.3, o.MaxStep) * molecule.BohrAngstrom * 100
			ctx.precision, ctx.precisionHow = dr, fmt.Sprintf("optimisation criteria (max force %.0e Eh/bohr, max step %.0e bohr)", o.MaxForce, o.MaxStep)
		}
	case KindAngle:
		a := sub(g[q.Atoms[0]], g[q.Atoms[1]])
		b := sub(g[q.Atoms[2]], g[q.Atoms[1]])
		c := dot(a, b) / (norm(a) * norm(b))
		c = math.Max(-1, math.Min(1, c))
		d.Computed = math.Acos(c) * 180 / math.Pi
		if o := job.Opt; o != nil {
			// Bending stiffness ≈ 0.15 Eh/rad² with arms of ≈ 1.8 bohr.
			dth := math.Max(o.MaxForce*1.8/0.15, o.MaxStep/1.8) * 180 / math.Pi
			ctx.precision, ctx.precisionHow = dth, fmt.Sprintf("optimisation criteria (max force %.0e Eh/bohr, max step %.0e bohr)", o.MaxForce, o.MaxStep)
		}
	case KindDipoleNorm, KindDipoleAxis:
		mu, _, _ := rm.moments()
		if mu == nil {
			return nil, nil, fmt.Errorf("%s", rm.noMoments("dipole moment"))
		}
		if q.Kind == KindDipoleNorm {
			d.Computed = norm(*mu)
		} else {
			u, err := direction(g, *q.Axis)
			if err != nil {
				return nil, nil, fmt.Errorf("entry %q: %v", e.ID, err)
			}
			d.Computed = dot(*mu, u)
			ctx.signed = true
		}
		ctx.precision, ctx.precisionHow = dipolePrecision(rm)
		ctx.cancelRatio, ctx.cancelDetail = dipoleCancellation(rm, *mu)
		if job.Molecule.Charge != 0 {
			ctx.originCaution = true
			_, _, o := rm.moments()
			ctx.originDetail = fmt.Sprintf("the dipole of an ion depends on the origin; this one is about %s at (%.4f, %.4f, %.4f) Å", originName(job.Origin.Kind), o[0], o[1], o[2])
		}
	case KindQuadrupole:
		mu, theta, oldO := rm.moments()
		if theta == nil || mu == nil {
			return nil, nil, fmt.Errorf("%s", rm.noMoments("quadrupole moment"))
		}
		mol := rm.molecule()
		var newO [3]float64
		if q.Origin == "centre-of-nuclear-charge" {
			newO = scale(mol.CentreOfNuclearCharge(), molecule.BohrAngstrom)
		} else {
			newO = scale(mol.CentreOfMass(), molecule.BohrAngstrom)
		}
		th := shiftQuadrupole(*theta, *mu, float64(job.Molecule.Charge), oldO, newO)
		needX := q.Component != "zz"
		x, y, z, err := frame(g, q.Frame, needX)
		if err != nil {
			return nil, nil, fmt.Errorf("entry %q: %v", e.ID, err)
		}
		a, b := vec(x, y, z, q.Component[0]), vec(x, y, z, q.Component[1])
		d.Computed = project(th, a, b)
		ctx.signed = true
		ctx.precision, ctx.precisionHow = dipolePrecision(rm)
		ctx.precision *= 2 // a second moment spreads over about twice the length scale
		// Nuclear part about the same origin, same component.
		nuc := nuclearQuadrupole(mol, newO)
		nq := project(nuc, a, b)
		ctx.cancelRatio = math.Abs(nq) / math.Max(math.Abs(d.Computed), 1e-9)
		ctx.cancelDetail = fmt.Sprintf("nuclear part %+.3f D·Å, electronic part %+.3f D·Å, total %+.3f D·Å about the %s", nq, d.Computed-nq, d.Computed, originName(q.Origin))
		shift := norm(sub(newO, oldO))
		if norm(*mu) > 0.01 || job.Molecule.Charge != 0 {
			ctx.originCaution = true
			how := "the record's own origin"
			if shift > 1e-6 {
				how = fmt.Sprintf("shifted %.4f Å from the record's origin (%s) using its dipole", shift, originName(job.Origin.Kind))
			}
			ctx.originDetail = fmt.Sprintf("|μ| = %.3f D, so the quadrupole depends on the origin: compared about the %s (%s), as the reference states", norm(*mu), originName(q.Origin), how)
		}
	case KindEnergy:
		d.Computed = rm.rec.Results.EnergyHartree * molecule.KJPerMolPerHartree
		ctx.precision = rm.rec.Input.SCF.EnergyTolHartree * molecule.KJPerMolPerHartree
		ctx.precisionHow = fmt.Sprintf("SCF energy tolerance %.0e Eh", rm.rec.Input.SCF.EnergyTolHartree)
	default:
		return nil, nil, fmt.Errorf("entry %q: quantity kind %q cannot be computed", e.ID, q.Kind)
	}
	d.Signed = d.Computed - d.Reference
	return d, ctx, nil
}

func originName(kind string) string {
	switch kind {
	case "centre-of-mass":
		return "centre of mass"
	case "centre-of-nuclear-charge", "centre-of-charge":
		return "centre of nuclear charge"
	case "coordinate-origin":
		return "coordinate origin"
	case "point":
		return "given point"
	case "atom":
		return "nucleus of the given atom"
	}
	return kind
}

// energyDelta evaluates Σ c E(term) at one level; pick finds each term's record.
func energyDelta(e *Entry, level string, pick func(*RefMolecule) (*recMol, string)) (*Deviation, *devContext, string) {
	d := baseDeviation(e)
	ctx := &devContext{signed: true}
	var ids []string
	sum := 0.0
	prec := 0.0
	for i := range e.Quantity.Terms {
		t := &e.Quantity.Terms[i]
		rm, why := pick(&t.Molecule)
		if rm == nil {
			return nil, nil, fmt.Sprintf("term %s: %s", t.Molecule.Name, why)
		}
		ids = append(ids, rm.rec.ID)
		sum += t.Coefficient * rm.rec.Results.EnergyHartree
		prec += math.Abs(t.Coefficient) * rm.rec.Input.SCF.EnergyTolHartree
		if ctx.rec == nil {
			ctx.rec = rm
		}
	}
	d.RecordID = strings.Join(ids, "+")
	d.Computed = sum * molecule.KJPerMolPerHartree
	d.Signed = d.Computed - d.Reference
	ctx.precision = prec * molecule.KJPerMolPerHartree
	ctx.precisionHow = "sum of the SCF energy tolerances of the terms"
	return d, ctx, ""
}

// dipolePrecision estimates how well the SCF convergence criteria pin the
// dipole: the error of a first-order property is linear in the orbital
// gradient; 10 × the gradient tolerance (au) is a generous bound. A
// finite-field estimate stored with the record is added.
func dipolePrecision(rm *recMol) (float64, string) {
	g := rm.rec.Input.SCF.GradientTol
	p := 10 * g * molecule.DebyePerAU
	how := fmt.Sprintf("10 × orbital-gradient tolerance %.0e au", g)
	if lp := rm.rec.Results.LevelProperties; lp != nil && lp.FiniteFieldErrorDebye > 0 {
		p += lp.FiniteFieldErrorDebye
		how += fmt.Sprintf(" + finite-field error estimate %.1e D", lp.FiniteFieldErrorDebye)
	}
	return p, how
}

// dipoleCancellation measures how far the total dipole is a small residue
// of large opposing contributions. The split into nuclear and electronic
// parts depends on the origin (about the centre of nuclear charge the
// nuclear part vanishes, and the centre of mass is close to it for most
// molecules), so an origin-free scale is used: the nuclear charges' arms
// along the dipole direction, measured from their own centre,
// A = Σ_A Z_A |(R_A − R_Z)·û|. The electrons must cancel all of A but |μ|;
// the ratio A/|μ| is reported (for water ≈ 5, for carbon monoxide > 100).
func dipoleCancellation(rm *recMol, mu [3]float64) (float64, string) {
	mol := rm.molecule()
	if len(mol.Atoms) < 2 {
		return 0, ""
	}
	cz := scale(mol.CentreOfNuclearCharge(), molecule.BohrAngstrom)
	mag := norm(mu)
	var u [3]float64
	if mag > 1e-9 {
		u = scale(mu, 1/mag)
	} else {
		// No direction: use the longest atom–centre direction.
		best := 0.0
		for i := range rm.geomA {
			v := sub(rm.geomA[i], cz)
			if n := norm(v); n > best {
				best, u = n, scale(v, 1/n)
			}
		}
	}
	arm := 0.0
	for i, a := range mol.Atoms {
		arm += float64(a.Z) * math.Abs(dot(sub(rm.geomA[i], cz), u))
	}
	armD := arm * eAngToDebye
	ratio := armD / math.Max(mag, 1e-9)
	detail := fmt.Sprintf("nuclear charges span %.1f D along the dipole axis (Σ Z·|arm| from their centre); the total is |μ| = %.3f D, ratio %.0f", armD, mag, ratio)
	if p := rm.props(); p != nil && len(p.Dipole.NuclearAU) == 3 && len(p.Dipole.ElectronicAU) == 3 {
		n := [3]float64{p.Dipole.NuclearAU[0], p.Dipole.NuclearAU[1], p.Dipole.NuclearAU[2]}
		el := [3]float64{p.Dipole.ElectronicAU[0], p.Dipole.ElectronicAU[1], p.Dipole.ElectronicAU[2]}
		detail += fmt.Sprintf("; the record's own split about its origin (%s): nuclear %.3f D, electronic %.3f D", originName(p.OriginKind), norm(n)*molecule.DebyePerAU, norm(el)*molecule.DebyePerAU)
	}
	return ratio, detail
}

// nuclearQuadrupole is ½ Σ Z (3 r r − r² δ) about origin o (Å), in D·Å.
func nuclearQuadrupole(mol *molecule.Molecule, o [3]float64) [3][3]float64 {
	var th [3][3]float64
	for _, a := range mol.Atoms {
		r := sub(scale(a.PosBohr, molecule.BohrAngstrom), o)
		rr := dot(r, r)
		for i := 0; i < 3; i++ {
			for j := 0; j < 3; j++ {
				v := 3 * r[i] * r[j]
				if i == j {
					v -= rr
				}
				th[i][j] += 0.5 * float64(a.Z) * v * eAngToDebye
			}
		}
	}
	return th
}
