// Package molecule holds what moltrail knows about a molecule before any
// basis set is attached: elements H–Kr with their most-abundant-isotope
// masses, CODATA 2018 constants and unit conversions, geometries in bohr,
// the strict XYZ reader, nuclear repulsion, the Hill formula, electron
// counts and the charge/multiplicity consistency check.
//
// Inside the engine everything is in atomic units; coordinates are bohr.
package molecule

import (
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"
)

// Atom is one nucleus: its element and position in bohr.
type Atom struct {
	Symbol  string
	Z       int
	PosBohr [3]float64
}

// Molecule is a set of nuclei with a total charge and spin multiplicity.
// Coordinates are used exactly as given: moltrail never re-centres or
// re-orients a molecule.
type Molecule struct {
	Name         string
	Atoms        []Atom
	Charge       int
	Multiplicity int
}

// NewAtom builds an atom from a symbol and a position in bohr.
func NewAtom(symbol string, xBohr, yBohr, zBohr float64) (Atom, error) {
	e, err := Lookup(symbol)
	if err != nil {
		return Atom{}, err
	}
	return Atom{Symbol: e.Symbol, Z: e.Z, PosBohr: [3]float64{xBohr, yBohr, zBohr}}, nil
}

// MustAtom is NewAtom for literals in tests and built-in data; it panics on an unknown symbol.
func MustAtom(symbol string, xBohr, yBohr, zBohr float64) Atom {
	a, err := NewAtom(symbol, xBohr, yBohr, zBohr)
	if err != nil {
		panic(err)
	}
	return a
}

// NuclearCharge is the sum of the atomic numbers.
func (m *Molecule) NuclearCharge() int {
	n := 0
	for _, a := range m.Atoms {
		n += a.Z
	}
	return n
}

// Electrons is the electron count: nuclear charge minus the molecular charge.
func (m *Molecule) Electrons() int { return m.NuclearCharge() - m.Charge }

// DefaultMultiplicity is the lowest multiplicity consistent with the electron count.
func (m *Molecule) DefaultMultiplicity() int {
	if m.Electrons()%2 == 0 {
		return 1
	}
	return 2
}

// Check verifies that the molecule has atoms, a positive electron count and a
// multiplicity that the electron count allows. A zero multiplicity is
// replaced by the default.
func (m *Molecule) Check() error {
	if len(m.Atoms) == 0 {
		return fmt.Errorf("molecule %q has no atoms", m.Name)
	}
	if len(m.Atoms) > MaxAtoms {
		return fmt.Errorf("molecule %q has %d atoms; moltrail accepts molecules of at most %d atoms", m.Name, len(m.Atoms), MaxAtoms)
	}
	ne := m.Electrons()
	if ne < 1 {
		return fmt.Errorf("charge %+d leaves %d electrons on %s (nuclear charge %d): at least one electron is needed", m.Charge, ne, m.Formula(), m.NuclearCharge())
	}
	if m.Multiplicity == 0 {
		m.Multiplicity = m.DefaultMultiplicity()
	}
	mult := m.Multiplicity
	if mult < 1 {
		return fmt.Errorf("multiplicity %d is impossible: it must be 1 or more", mult)
	}
	unpaired := mult - 1
	if unpaired > ne {
		return fmt.Errorf("multiplicity %d needs %d unpaired electrons but %s with charge %+d has only %d electrons", mult, unpaired, m.Formula(), m.Charge, ne)
	}
	if (ne-unpaired)%2 != 0 {
		return fmt.Errorf("multiplicity %d is impossible with %d electrons (%s, charge %+d): an %s electron count needs an %s multiplicity", mult, ne, m.Formula(), m.Charge, parity(ne), parity(ne+1))
	}
	return nil
}

func parity(n int) string {
	if n%2 == 0 {
		return "even"
	}
	return "odd"
}

// AlphaBeta returns the numbers of alpha and beta electrons (alpha ≥ beta).
func (m *Molecule) AlphaBeta() (nAlpha, nBeta int) {
	ne := m.Electrons()
	unpaired := m.Multiplicity - 1
	nBeta = (ne - unpaired) / 2
	return nBeta + unpaired, nBeta
}

// Distance returns the distance between atoms i and j in bohr.
func (m *Molecule) Distance(i, j int) float64 {
	return Dist(m.Atoms[i].PosBohr, m.Atoms[j].PosBohr)
}

// Dist is the Euclidean distance between two points.
func Dist(a, b [3]float64) float64 {
	dx, dy, dz := a[0]-b[0], a[1]-b[1], a[2]-b[2]
	return math.Sqrt(dx*dx + dy*dy + dz*dz)
}

// NuclearRepulsion is Σ_{A<B} Z_A Z_B / R_AB in hartree.
func (m *Molecule) NuclearRepulsion() float64 {
	e := 0.0
	for i := range m.Atoms {
		for j := 0; j < i; j++ {
			e += float64(m.Atoms[i].Z*m.Atoms[j].Z) / m.Distance(i, j)
		}
	}
	return e
}

// Formula is the Hill formula: C first, then H, then the rest alphabetically;
// without carbon, all elements alphabetically. Counts of one are omitted.
func (m *Molecule) Formula() string {
	counts := map[string]int{}
	for _, a := range m.Atoms {
		counts[a.Symbol]++
	}
	var syms []string
	for s := range counts {
		syms = append(syms, s)
	}
	sort.Strings(syms)
	var order []string
	if counts["C"] > 0 {
		order = append(order, "C")
		if counts["H"] > 0 {
			order = append(order, "H")
		}
		for _, s := range syms {
			if s != "C" && s != "H" {
				order = append(order, s)
			}
		}
	} else {
		order = syms
	}
	var b strings.Builder
	for _, s := range order {
		b.WriteString(s)
		if counts[s] > 1 {
			b.WriteString(strconv.Itoa(counts[s]))
		}
	}
	return b.String()
}

// CentreOfMass returns the centre of mass in bohr (most abundant isotopes).
func (m *Molecule) CentreOfMass() [3]float64 {
	var c [3]float64
	total := 0.0
	for _, a := range m.Atoms {
		e, _ := ByZ(a.Z)
		for k := 0; k < 3; k++ {
			c[k] += e.MassDalton * a.PosBohr[k]
		}
		total += e.MassDalton
	}
	for k := range c {
		c[k] /= total
	}
	return c
}

// CentreOfNuclearCharge returns Σ Z r / Σ Z in bohr.
func (m *Molecule) CentreOfNuclearCharge() [3]float64 {
	var c [3]float64
	total := 0.0
	for _, a := range m.Atoms {
		for k := 0; k < 3; k++ {
			c[k] += float64(a.Z) * a.PosBohr[k]
		}
		total += float64(a.Z)
	}
	for k := range c {
		c[k] /= total
	}
	return c
}

// CoreOrbitals is the number of chemical-core orbitals (frozen-core count).
func (m *Molecule) CoreOrbitals() int {
	n := 0
	for _, a := range m.Atoms {
		e, _ := ByZ(a.Z)
		n += e.CoreOrbitals
	}
	return n
}

// Clone returns a deep copy.
func (m *Molecule) Clone() *Molecule {
	c := *m
	c.Atoms = append([]Atom(nil), m.Atoms...)
	return &c
}
