package archive

import (
	"strings"

	"moltrail/engine"
)

// Level labels. Every place moltrail names a record's level of theory —
// run, show, list, trace, diff, compare, the JSON label fields and the
// report — takes it from LevelLabel, so one record has one name
// everywhere. The label is the trade's notation:
//
//	HF/6-31G*                      RHF on a closed shell (method hf or rhf)
//	UHF/6-31G*, ROHF/6-31G*        open-shell references say so
//	MP2(fc)/cc-pVDZ, UMP2/cc-pVDZ  frozen core; an MP2 on a UHF reference
//	SCS-MP2/cc-pVTZ, UB3LYP/6-31G*
//	MP2(fc)/cc-pVDZ//HF/6-31G*     a single point on the optimised
//	                               structure of another level (A//B)
//	DF-HF/cc-pVDZ, DF-UB3LYP/...   density-fitted Coulomb and exchange
//
// The angular type of the basis functions (Cartesian or spherical) is not
// part of the label; it is printed beside it where it matters.
//
// To name a new method or a variant of one (integral fitting, coupled
// cluster), extend methodLabel: it is the only place that turns a job's
// settings into the method part of the label.

// Lookup returns the archived record with a full id, or nil when it is not
// at hand. LevelLabel uses it to follow geometry-from links.
type Lookup func(id string) *Record

// LookupIn is a Lookup over records already in memory.
func LookupIn(recs []*Record) Lookup {
	m := make(map[string]*Record, len(recs))
	for _, r := range recs {
		if r != nil {
			m[r.ID] = r
		}
	}
	return func(id string) *Record { return m[id] }
}

// Lookup returns a Lookup that reads from the store (nil for an id it
// does not hold or cannot read).
func (s *Store) Lookup() Lookup {
	return func(id string) *Record {
		r, _, err := s.Get(id)
		if err != nil {
			return nil
		}
		return r
	}
}

// Either tries the lookups in order.
func Either(ls ...Lookup) Lookup {
	return func(id string) *Record {
		for _, l := range ls {
			if l == nil {
				continue
			}
			if r := l(id); r != nil {
				return r
			}
		}
		return nil
	}
}

// methodNames are the printed names of the engine's methods (without the
// reference prefix). A method missing here prints in upper case.
var methodNames = map[string]string{
	"hf": "HF", "rhf": "HF", "uhf": "HF", "rohf": "HF",
	"mp2": "MP2", "scs-mp2": "MP2", "ccsd": "CCSD", "ccsd(t)": "CCSD(T)",
	"svwn5": "SVWN5", "blyp": "BLYP", "pbe": "PBE", "b3lyp": "B3LYP", "b3lyp5": "B3LYP5", "pbe0": "PBE0",
}

// methodLabel is the method part of a job's level label: the reference
// prefix of an open shell (U, RO), the method, the spin-component scaling
// and the frozen core.
func methodLabel(j *engine.Job) string {
	name, ok := methodNames[j.Method]
	if !ok {
		name = strings.ToUpper(j.Method)
	}
	switch j.Reference {
	case "uhf", "uks":
		name = "U" + name
	case "rohf", "roks":
		name = "RO" + name
	}
	if j.Method == "scs-mp2" {
		name = "SCS-" + name
	}
	if j.Fitting != nil {
		name = "DF-" + name
	}
	if j.Correlation != nil && j.Correlation.FrozenCore {
		name += "(fc)"
	}
	return name
}

// JobLevel is the level of theory of a job alone, method/basis, e.g.
// "MP2(fc)/cc-pVDZ": the level at which its numbers are computed, without
// saying where its geometry came from.
func JobLevel(j *engine.Job) string {
	return methodLabel(j) + "/" + j.Basis.Name
}

// Geometry source kinds.
const (
	// GeometryOptimised: the record optimised its own structure.
	GeometryOptimised = "optimised"
	// GeometryInput: a single point at the geometry given as input.
	GeometryInput = "input"
	// GeometryBorrowed: a single point on the final geometry of another
	// record (Source), itself optimised at SourceLevel.
	GeometryBorrowed = "borrowed"
	// GeometryUnresolved: a single point on another record's geometry
	// whose record is not at hand.
	GeometryUnresolved = "unresolved"
)

// GeometrySource says where a record's final geometry comes from.
type GeometrySource struct {
	Kind string `json:"kind"`
	// Source is the record whose geometry was taken (the end of the chain
	// of geometry-from links), for borrowed and unresolved geometries.
	Source string `json:"source_record,omitempty"`
	// SourceLevel is the level at which Source optimised it (borrowed).
	SourceLevel string `json:"source_level,omitempty"`
	// FromInput is set when the chain ends in a single point at an input
	// geometry: the geometry is an input one, passed on by Source.
	FromInput bool `json:"from_input,omitempty"`
}

// GeometryOf follows the record's geometry-from links to the record that
// made its geometry. An optimisation made its own (whatever it started
// from); a single point without a link used its input geometry.
func GeometryOf(r *Record, look Lookup) GeometrySource {
	if r.Input.Task == "optimize" {
		return GeometrySource{Kind: GeometryOptimised}
	}
	cur := r
	for depth := 0; depth < 32; depth++ {
		id := geometryLink(cur)
		if id == "" {
			if cur == r {
				return GeometrySource{Kind: GeometryInput}
			}
			return GeometrySource{Kind: GeometryInput, Source: cur.ID, FromInput: true}
		}
		var next *Record
		if look != nil {
			next = look(id)
		}
		if next == nil {
			return GeometrySource{Kind: GeometryUnresolved, Source: id}
		}
		if next.Input.Task == "optimize" {
			return GeometrySource{Kind: GeometryBorrowed, Source: next.ID, SourceLevel: JobLevel(&next.Input)}
		}
		cur = next
	}
	return GeometrySource{Kind: GeometryUnresolved, Source: geometryLink(cur)}
}

func geometryLink(r *Record) string {
	for _, l := range r.Lineage {
		if l.Relation == GeometryFrom {
			return l.ID
		}
	}
	// A derived record is at the geometry of its (first) input.
	if d := r.Derivation; d != nil && len(d.Inputs) > 0 {
		return d.Inputs[0].ID
	}
	return ""
}

// LevelLabel is the record's level of theory in the trade's notation,
// with "//B" when it is a single point on a structure optimised at level
// B ("MP2(fc)/cc-pVDZ//HF/6-31G*"). When the record whose geometry it
// used is not at hand (look is nil or does not find it), the label names
// that record instead of a level: "MP2/cc-pVDZ//record 3f2a9c1d7e0b".
func LevelLabel(r *Record, look Lookup) string {
	own := JobLevel(&r.Input)
	g := GeometryOf(r, look)
	switch g.Kind {
	case GeometryBorrowed:
		return own + "//" + g.SourceLevel
	case GeometryUnresolved:
		return own + "//record " + short(g.Source)
	}
	return own
}

// GeometryWords describes a record's geometry source in a phrase that
// completes "the geometry …" ("was optimised at this level", …).
func GeometryWords(r *Record, look Lookup) string {
	g := GeometryOf(r, look)
	switch g.Kind {
	case GeometryOptimised:
		return "was optimised at this level"
	case GeometryBorrowed:
		return "is the structure optimised at " + g.SourceLevel + " (record " + short(g.Source) + ")"
	case GeometryUnresolved:
		return "is the final geometry of record " + short(g.Source) + ", which is not at hand"
	}
	if g.FromInput {
		return "is the input geometry of record " + short(g.Source)
	}
	return "is the geometry given as input"
}

// SCFLevelLabel is the label of a correlated record's SCF density: the
// reference method at the record's basis, on the record's geometry —
// "HF/6-31G*//MP2(fc)/6-31G*" for the HF density of an MP2 optimisation,
// "UHF/cc-pVDZ//HF/6-31G*" for that of a UMP2 single point on an HF
// structure, plain "HF/6-31G*" at an input geometry.
func SCFLevelLabel(r *Record, look Lookup) string {
	ref := engine.Job{Method: r.Input.Reference, Reference: r.Input.Reference, Basis: r.Input.Basis}
	if ref.Method == "rhf" || ref.Method == "" {
		ref.Method = "hf"
	}
	own := JobLevel(&ref)
	g := GeometryOf(r, look)
	switch g.Kind {
	case GeometryOptimised:
		if l := JobLevel(&r.Input); l != own {
			return own + "//" + l
		}
	case GeometryBorrowed:
		if g.SourceLevel != own {
			return own + "//" + g.SourceLevel
		}
	case GeometryUnresolved:
		return own + "//record " + short(g.Source)
	}
	return own
}
