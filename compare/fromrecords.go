package compare

import (
	"fmt"
	"math"
	"strings"

	"moltrail/archive"
	"moltrail/engine/molecule"
)

// Reference entries from archived records: theoretical benchmark values
// (kind "theory") whose source is the record id and level, with a stated
// uncertainty, and the records themselves listed in Entry.Records so that
// compare and the report cite them.

// Uncertainty rules of entries built from records.
const (
	UncertaintyExtrapolation = "the change of the last extrapolation step (|CBS − largest basis|)"
	UncertaintyFiniteField   = "the finite-field error estimate of the dipole"
	UncertaintyGiven         = "given by the set's author"
)

// FromRecord builds the entry of one quantity of a record: "total_energy"
// (hartree) or "dipole_magnitude" (D). given (≥ 0) is the uncertainty in
// the entry's unit when the record does not carry one: derived
// extrapolations carry the change of their last step, finite-field
// dipoles their error estimate. A negative given means none was given.
func FromRecord(r *archive.Record, kind string, given float64, look archive.Lookup) (Entry, error) {
	level := archive.LevelLabel(r, look)
	if r.Status != "converged" {
		return Entry{}, fmt.Errorf("record %s has status %s; only converged records give reference values", shortID(r.ID), r.Status)
	}
	e := Entry{Molecule: refMolecule(r), Kind: "theory", Records: []string{r.ID}}
	e.Source = fmt.Sprintf("moltrail record %s, %s", r.ID, level)
	if d := r.Derivation; d != nil {
		var in []string
		for _, x := range d.Inputs {
			in = append(in, shortID(x.ID))
		}
		e.Source += fmt.Sprintf(" (derived by %s from records %s)", d.Recipe, strings.Join(in, ", "))
	}
	unc, rule := -1.0, ""
	switch kind {
	case KindEnergy:
		e.Quantity = Quantity{Kind: KindEnergy}
		e.Value, e.Unit = r.Results.EnergyHartree, "hartree"
		if d := r.Derivation; d != nil {
			for _, v := range d.Values {
				if v.Name == "extrapolation_change_hartree" {
					unc, rule = math.Abs(v.Value), UncertaintyExtrapolation
				}
			}
		}
	case KindDipoleNorm:
		dp := r.Results.DipoleDebye
		if dp == nil {
			return Entry{}, fmt.Errorf("record %s has no dipole", shortID(r.ID))
		}
		e.Quantity = Quantity{Kind: KindDipoleNorm}
		e.Value, e.Unit = math.Sqrt(dp[0]*dp[0]+dp[1]*dp[1]+dp[2]*dp[2]), "D"
		if lp := r.Results.LevelProperties; lp != nil && lp.FiniteFieldErrorDebye > 0 {
			unc, rule = lp.FiniteFieldErrorDebye, UncertaintyFiniteField
		}
	default:
		return Entry{}, fmt.Errorf("quantity %q cannot be taken from a record (total_energy or dipole_magnitude)", kind)
	}
	if given >= 0 {
		unc, rule = given, UncertaintyGiven
	}
	if unc < 0 {
		return Entry{}, fmt.Errorf("record %s (%s) carries no uncertainty for its %s: state one", shortID(r.ID), level, kind)
	}
	e.Uncertainty = unc
	e.Note = "uncertainty: " + rule
	e.ID = entryID(r.Input.Molecule.Name, kind, level)
	return e, nil
}

// Term of an energy difference built from records.
type RecordTerm struct {
	Coefficient float64
	Record      *archive.Record
}

// FromDifference builds an energy_difference entry Σ c·E(record) (a
// reaction or isomer energy, kJ/mol) from records of one level. Its
// uncertainty is given (kJ/mol, ≥ 0) or, when every record carries one
// (see FromRecord), √Σ (c·u)².
func FromDifference(id string, terms []RecordTerm, given float64, look archive.Lookup) (Entry, error) {
	if len(terms) < 2 {
		return Entry{}, fmt.Errorf("%s: an energy difference needs at least two records", id)
	}
	var level string
	e := Entry{ID: id, Kind: "theory", Unit: "kJ/mol", Quantity: Quantity{Kind: KindEnergyDelta}}
	var sum, uu float64
	carried := true
	var parts []string
	for i, t := range terms {
		if t.Coefficient == 0 {
			return Entry{}, fmt.Errorf("%s: term %d has coefficient 0", id, i+1)
		}
		one, err := FromRecord(t.Record, KindEnergy, -1, look)
		if err != nil {
			if one, err = FromRecord(t.Record, KindEnergy, 0, look); err != nil {
				return Entry{}, fmt.Errorf("%s: %v", id, err)
			}
			carried = false
		}
		l := archive.LevelLabel(t.Record, look)
		if i == 0 {
			level = l
		} else if l != level {
			return Entry{}, fmt.Errorf("%s: records %s and %s are at different levels (%s, %s)", id, shortID(terms[0].Record.ID), shortID(t.Record.ID), level, l)
		}
		sum += t.Coefficient * one.Value
		u := t.Coefficient * one.Uncertainty * molecule.KJPerMolPerHartree
		uu += u * u
		e.Quantity.Terms = append(e.Quantity.Terms, Term{Molecule: one.Molecule, Coefficient: t.Coefficient})
		e.Records = append(e.Records, t.Record.ID)
		parts = append(parts, fmt.Sprintf("%+g × %s", t.Coefficient, shortID(t.Record.ID)))
	}
	e.Molecule = e.Quantity.Terms[0].Molecule
	e.Value = sum * molecule.KJPerMolPerHartree
	e.Source = fmt.Sprintf("moltrail records, %s: %s", level, strings.Join(parts, " "))
	switch {
	case given >= 0:
		e.Uncertainty, e.Note = given, "uncertainty: "+UncertaintyGiven
	case carried:
		e.Uncertainty, e.Note = math.Sqrt(uu), "uncertainty: √Σ (c·u)² of the records' own uncertainties ("+UncertaintyExtrapolation+")"
	default:
		return Entry{}, fmt.Errorf("%s: not every record carries an uncertainty: state one", id)
	}
	return e, nil
}

// refMolecule is the reference-set description of a record's molecule.
func refMolecule(r *archive.Record) RefMolecule {
	m := RefMolecule{Name: r.Input.Molecule.Name, Formula: r.Formula(), Charge: r.Input.Molecule.Charge, Multiplicity: r.Input.Molecule.Multiplicity}
	for _, a := range r.Input.Molecule.Atoms {
		m.Atoms = append(m.Atoms, a.Symbol)
	}
	return m
}

func entryID(mol, kind, level string) string {
	s := strings.ToLower(mol + "-" + kind + "-" + level)
	return strings.Map(func(r rune) rune {
		if r == ' ' || r == '/' {
			return '-'
		}
		return r
	}, s)
}

// NewTheorySet wraps entries built from records into a reference set.
func NewTheorySet(name, description string, entries []Entry) (*RefSet, error) {
	if strings.TrimSpace(name) == "" {
		return nil, fmt.Errorf("the reference set needs a name")
	}
	if len(entries) == 0 {
		return nil, fmt.Errorf("no entries: name records, a level or differences")
	}
	seen := map[string]bool{}
	for _, e := range entries {
		if seen[e.ID] {
			return nil, fmt.Errorf("entry id %q is used twice", e.ID)
		}
		seen[e.ID] = true
	}
	if description == "" {
		description = "Theoretical reference values taken from archived moltrail records; each entry names its record and level."
	}
	// A value computed at one geometry is compared with calculations at
	// the same geometry: single points at the geometry given as input.
	return &RefSet{Format: RefSetFormat, Name: name, Description: description, PropertyGeometry: GeometryRuleInput,
		Source: "moltrail archive records (theory); every entry names its record id, level and uncertainty rule", Entries: entries}, nil
}
