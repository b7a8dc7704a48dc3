package engine

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"moltrail/engine/molecule"
)

// OriginForms names the multipole-origin forms ParseOrigin reads.
const OriginForms = "centre-of-mass, centre-of-charge, coordinate-origin, point:X,Y,Z (ångström) or atom:N (1-based index, or a label such as O1)"

// ParseOrigin reads a multipole origin as a user writes it: one of the
// kinds centre-of-mass, centre-of-charge and coordinate-origin;
// point:X,Y,Z with the point in ångström; or atom:N, with N the 1-based atom
// number or a label (symbol and number, as in "O1"). An atom given by label
// is checked against the molecule when the job is made.
func ParseOrigin(text string) (*OriginSpec, error) {
	t := strings.TrimSpace(text)
	kind, arg, hasArg := strings.Cut(t, ":")
	kind = strings.ToLower(strings.TrimSpace(kind))
	switch kind {
	case "centre-of-mass", "centre-of-charge", "coordinate-origin":
		if hasArg {
			return nil, fmt.Errorf("multipole origin %q: %s takes no value", text, kind)
		}
		return &OriginSpec{Kind: kind}, nil
	case "point":
		if !hasArg || strings.TrimSpace(arg) == "" {
			return nil, fmt.Errorf("multipole origin %q: a point needs its coordinates, point:X,Y,Z in ångström", text)
		}
		f := strings.Split(arg, ",")
		if len(f) != 3 {
			return nil, fmt.Errorf("multipole origin %q: a point needs three coordinates, point:X,Y,Z in ångström", text)
		}
		o := &OriginSpec{Kind: "point"}
		for k, s := range f {
			v, err := strconv.ParseFloat(strings.TrimSpace(s), 64)
			if err != nil || math.IsNaN(v) || math.IsInf(v, 0) || math.Abs(v) > molecule.MaxCoordinateAngstrom {
				return nil, fmt.Errorf("multipole origin %q: coordinate %c %q is not a number of ångström", text, "xyz"[k], strings.TrimSpace(s))
			}
			o.Point[k] = v * molecule.AngstromBohr
		}
		return o, nil
	case "atom":
		a := strings.TrimSpace(arg)
		if !hasArg || a == "" {
			return nil, fmt.Errorf("multipole origin %q: an atom origin needs the atom, atom:N (1-based) or a label such as atom:O1", text)
		}
		sym := strings.TrimRight(a, "0123456789")
		n, err := strconv.Atoi(a[len(sym):])
		if err != nil || n < 1 || n > molecule.MaxAtoms {
			return nil, fmt.Errorf("multipole origin %q: %q is not an atom number (1-based) or a label such as O1", text, a)
		}
		o := &OriginSpec{Kind: "atom", Atom: n - 1}
		if sym != "" {
			el, err := molecule.Lookup(sym)
			if err != nil {
				return nil, fmt.Errorf("multipole origin %q: %v", text, err)
			}
			o.symbol = el.Symbol
		}
		return o, nil
	}
	return nil, fmt.Errorf("multipole origin %q is not known: give %s", text, OriginForms)
}

// check tests the origin against the job's molecule.
func (o OriginSpec) check(m *molecule.Molecule) error {
	switch o.Kind {
	case "centre-of-mass", "centre-of-charge", "coordinate-origin":
	case "point":
		for k, v := range o.Point {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return fmt.Errorf("multipole_origin.point_bohr[%d] is not finite", k)
			}
		}
	case "atom":
		if o.Atom < 0 || o.Atom >= len(m.Atoms) {
			return fmt.Errorf("multipole origin: atom %d does not exist (the molecule has %d atoms)", o.Atom+1, len(m.Atoms))
		}
		if o.symbol != "" && m.Atoms[o.Atom].Symbol != o.symbol {
			return fmt.Errorf("multipole origin: atom %s does not exist (atom %d is %s)", fmt.Sprintf("%s%d", o.symbol, o.Atom+1), o.Atom+1, m.Label(o.Atom))
		}
	default:
		return fmt.Errorf("multipole_origin.kind %q is not known (centre-of-mass, centre-of-charge, coordinate-origin, point, atom)", o.Kind)
	}
	return nil
}

// OriginLabel describes a job's multipole origin in words (for messages).
func (j *Job) OriginLabel() string {
	o := j.Origin
	switch o.Kind {
	case "centre-of-mass":
		return "the centre of mass"
	case "centre-of-charge":
		return "the centre of nuclear charge"
	case "coordinate-origin":
		return "the origin of the input coordinates"
	case "point":
		return fmt.Sprintf("the point (%.4f, %.4f, %.4f) Å", o.Point[0]*molecule.BohrAngstrom, o.Point[1]*molecule.BohrAngstrom, o.Point[2]*molecule.BohrAngstrom)
	case "atom":
		if o.Atom >= 0 && o.Atom < len(j.Molecule.Atoms) {
			return fmt.Sprintf("the nucleus of atom %s%d", j.Molecule.Atoms[o.Atom].Symbol, o.Atom+1)
		}
	}
	return o.Kind
}
