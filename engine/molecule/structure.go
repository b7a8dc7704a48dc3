package molecule

import (
	"errors"
	"fmt"
	"math"
	"strings"
)

// covalentRadiiAngstrom are single-bond covalent radii in Å for H–Kr from
// B. Cordero et al., "Covalent radii revisited", Dalton Trans. 2008, 2832
// (values from memory; for C the sp3 value, for Mn/Fe/Co the low-spin value).
var covalentRadiiAngstrom = [...]float64{
	0.31, 0.28,
	1.28, 0.96, 0.84, 0.76, 0.71, 0.66, 0.57, 0.58,
	1.66, 1.41, 1.21, 1.11, 1.07, 1.05, 1.02, 1.06,
	2.03, 1.76, 1.70, 1.60, 1.53, 1.39, 1.39, 1.32, 1.26, 1.24, 1.32, 1.22, 1.22, 1.20, 1.19, 1.20, 1.20, 1.16,
}

// BondFactor scales the sum of covalent radii: atoms closer than
// BondFactor·(r_i + r_j) are bonded (common practice, no source).
const BondFactor = 1.25

// CovalentRadiusAngstrom returns the covalent radius of element z.
func CovalentRadiusAngstrom(z int) float64 { return covalentRadiiAngstrom[z-1] }

// Bonded reports whether atoms i and j are bonded by the covalent-radius rule.
func (m *Molecule) Bonded(i, j int) bool {
	if i == j {
		return false
	}
	lim := BondFactor * (CovalentRadiusAngstrom(m.Atoms[i].Z) + CovalentRadiusAngstrom(m.Atoms[j].Z))
	return m.Distance(i, j)*BohrAngstrom < lim
}

// Connectivity returns, for each atom, the indices of its bonded neighbours
// in increasing order.
func (m *Molecule) Connectivity() [][]int {
	nb := make([][]int, len(m.Atoms))
	for i := range m.Atoms {
		for j := range m.Atoms {
			if m.Bonded(i, j) {
				nb[i] = append(nb[i], j)
			}
		}
	}
	return nb
}

// AngleDegrees is the angle i–j–k in degrees (j at the vertex).
func (m *Molecule) AngleDegrees(i, j, k int) float64 {
	return angle(m.Atoms[i].PosBohr, m.Atoms[j].PosBohr, m.Atoms[k].PosBohr)
}

func angle(a, b, c [3]float64) float64 {
	u := sub(a, b)
	v := sub(c, b)
	cos := dot(u, v) / math.Sqrt(dot(u, u)*dot(v, v))
	cos = math.Max(-1, math.Min(1, cos))
	return math.Acos(cos) * 180 / math.Pi
}

// DihedralDegrees is the torsion i–j–k–l in degrees, in (−180, 180].
func (m *Molecule) DihedralDegrees(i, j, k, l int) float64 {
	p := [4][3]float64{m.Atoms[i].PosBohr, m.Atoms[j].PosBohr, m.Atoms[k].PosBohr, m.Atoms[l].PosBohr}
	b1, b2, b3 := sub(p[1], p[0]), sub(p[2], p[1]), sub(p[3], p[2])
	n1, n2 := cross(b1, b2), cross(b2, b3)
	nb2 := math.Sqrt(dot(b2, b2))
	m1 := cross(n1, [3]float64{b2[0] / nb2, b2[1] / nb2, b2[2] / nb2})
	x, y := dot(n1, n2), dot(m1, n2)
	return -math.Atan2(y, x) * 180 / math.Pi
}

// Label names atom i as symbol plus 1-based index, e.g. "O1".
func (m *Molecule) Label(i int) string { return fmt.Sprintf("%s%d", m.Atoms[i].Symbol, i+1) }

// InternalParameter is one bond length, angle or dihedral of a geometry.
type InternalParameter struct {
	Atoms []int   // 0-based
	Label string  // e.g. "r(C1–O2)", "∠(H2–O1–H3)", "τ(H1–C2–C3–H4)"
	Value float64 // Å or degrees
}

// Bonds lists every bonded pair i<j with its length in Å.
func (m *Molecule) Bonds() []InternalParameter {
	var out []InternalParameter
	for i := range m.Atoms {
		for j := i + 1; j < len(m.Atoms); j++ {
			if m.Bonded(i, j) {
				out = append(out, InternalParameter{Atoms: []int{i, j}, Label: fmt.Sprintf("r(%s–%s)", m.Label(i), m.Label(j)), Value: m.Distance(i, j) * BohrAngstrom})
			}
		}
	}
	return out
}

// Angles lists every angle i–j–k with i<k both bonded to j, in degrees.
func (m *Molecule) Angles() []InternalParameter {
	nb := m.Connectivity()
	var out []InternalParameter
	for j := range m.Atoms {
		for a := 0; a < len(nb[j]); a++ {
			for b := a + 1; b < len(nb[j]); b++ {
				i, k := nb[j][a], nb[j][b]
				out = append(out, InternalParameter{Atoms: []int{i, j, k}, Label: fmt.Sprintf("∠(%s–%s–%s)", m.Label(i), m.Label(j), m.Label(k)), Value: m.AngleDegrees(i, j, k)})
			}
		}
	}
	return out
}

// Dihedrals lists every proper torsion i–j–k–l along bonded chains with
// j<k, skipping chains where an angle is within 1° of linear.
func (m *Molecule) Dihedrals() []InternalParameter {
	nb := m.Connectivity()
	var out []InternalParameter
	for j := range m.Atoms {
		for _, k := range nb[j] {
			if k <= j {
				continue
			}
			for _, i := range nb[j] {
				if i == k {
					continue
				}
				for _, l := range nb[k] {
					if l == j || l == i {
						continue
					}
					if m.AngleDegrees(i, j, k) > 179 || m.AngleDegrees(j, k, l) > 179 {
						continue
					}
					out = append(out, InternalParameter{Atoms: []int{i, j, k, l}, Label: fmt.Sprintf("τ(%s–%s–%s–%s)", m.Label(i), m.Label(j), m.Label(k), m.Label(l)), Value: m.DihedralDegrees(i, j, k, l)})
				}
			}
		}
	}
	return out
}

func sub(a, b [3]float64) [3]float64 { return [3]float64{a[0] - b[0], a[1] - b[1], a[2] - b[2]} }
func dot(a, b [3]float64) float64    { return a[0]*b[0] + a[1]*b[1] + a[2]*b[2] }
func cross(a, b [3]float64) [3]float64 {
	return [3]float64{a[1]*b[2] - a[2]*b[1], a[2]*b[0] - a[0]*b[2], a[0]*b[1] - a[1]*b[0]}
}

// Closest approach allowed between two nuclei: CloseFraction of the sum of
// their covalent radii, and never less than CloseFloorAngstrom. No bound
// molecule comes near it (the shortest bond, H₂'s 0.74 Å, is 1.2 times the
// H–H radius sum); atoms closer than this are almost always a slip in the
// input, and an SCF on them converges to meaningless energies.
const (
	CloseFraction      = 0.5
	CloseFloorAngstrom = 0.3
)

// CloseLimitAngstrom is the smallest distance allowed between atoms i and j.
func (m *Molecule) CloseLimitAngstrom(i, j int) float64 {
	return math.Max(CloseFloorAngstrom, CloseFraction*(CovalentRadiusAngstrom(m.Atoms[i].Z)+CovalentRadiusAngstrom(m.Atoms[j].Z)))
}

// CloseContact is a pair of atoms closer than CloseLimitAngstrom.
type CloseContact struct {
	I, J            int
	Angstrom, Limit float64
}

func (c CloseContact) describe(m *Molecule) string {
	return fmt.Sprintf("atoms %s and %s are %.3f Å apart, closer than the physical minimum of %.3f Å (%.1f × the sum of their covalent radii, at least %.1f Å)",
		m.Label(c.I), m.Label(c.J), c.Angstrom, c.Limit, CloseFraction, CloseFloorAngstrom)
}

// CloseContacts lists the atom pairs closer than the physical minimum.
func (m *Molecule) CloseContacts() []CloseContact {
	var out []CloseContact
	for i := range m.Atoms {
		for j := i + 1; j < len(m.Atoms); j++ {
			d := m.Distance(i, j) * BohrAngstrom
			if lim := m.CloseLimitAngstrom(i, j); d < lim {
				out = append(out, CloseContact{I: i, J: j, Angstrom: d, Limit: lim})
			}
		}
	}
	return out
}

// CheckContacts refuses a molecule with atoms closer than the physical
// minimum, naming the closest such pair.
func (m *Molecule) CheckContacts() error {
	cc := m.CloseContacts()
	if len(cc) == 0 {
		return nil
	}
	w := cc[0]
	for _, c := range cc[1:] {
		if c.Angstrom/c.Limit < w.Angstrom/w.Limit {
			w = c
		}
	}
	s := w.describe(m)
	if len(cc) > 1 {
		s += fmt.Sprintf(" (and %d more pairs)", len(cc)-1)
	}
	return errors.New(s)
}

// CloseContactNote is the remark kept with a calculation that was allowed
// to run on atoms closer than the physical minimum ("" when none are).
func (m *Molecule) CloseContactNote() string {
	cc := m.CloseContacts()
	if len(cc) == 0 {
		return ""
	}
	var parts []string
	for i, c := range cc {
		if i == 3 {
			parts = append(parts, fmt.Sprintf("%d more pairs", len(cc)-3))
			break
		}
		parts = append(parts, c.describe(m))
	}
	return strings.Join(parts, "; ") + ": computed only because close atoms were explicitly allowed"
}
