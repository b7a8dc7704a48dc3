// Package props computes one-electron properties of a density: the dipole,
// the raw Cartesian second moments and the traceless (Buckingham)
// quadrupole, each split as total = nuclear + electronic about a chosen
// origin, and the Mulliken and Löwdin atomic charges (and spin
// populations for open shells). It also gives the frontier-orbital
// summary (HOMO, LUMO, gap) of a set of orbital energies.
//
// Conventions (atomic units throughout; debye and buckingham by the
// conversion helpers):
//
//	μ_i    = Σ_A Z_A (R_A − O)_i − Σ_μν D_μν ⟨μ|(r − O)_i|ν⟩
//	M_ij   = Σ_A Z_A (R_A − O)_i (R_A − O)_j − Σ_μν D_μν ⟨μ|(r − O)_i (r − O)_j|ν⟩
//	Θ_ij   = ½ (3 M_ij − δ_ij tr M)          (Buckingham, traceless)
//
// D is the total (alpha + beta) AO density, so the dipole points from
// negative to positive charge. Six-component quantities are ordered
// xx, yy, zz, xy, xz, yz.
package props

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/molecule"
)

// DipoleNegligibleDebye is the dipole magnitude above which the quadrupole
// of a neutral molecule is flagged as origin dependent. Moving the origin
// by d changes Θ by terms of size |μ||d|; below 1e-4 D (the printed
// precision) the change for shifts of a few bohr stays near the last
// printed digit. The flag is a caution, not a proof.
const DipoleNegligibleDebye = 1e-4

// Pairs lists the (i, j) Cartesian indices of the six-component ordering
// xx, yy, zz, xy, xz, yz.
var Pairs = [6][2]int{{0, 0}, {1, 1}, {2, 2}, {0, 1}, {0, 2}, {1, 2}}

// Vector3 is a three-component moment split into its parts (atomic units).
type Vector3 struct {
	Total, Nuclear, Electronic [3]float64
}

// Tensor6 is a symmetric second-rank moment (xx, yy, zz, xy, xz, yz) split
// into its parts (atomic units).
type Tensor6 struct {
	Total, Nuclear, Electronic [6]float64
}

// Moments are the multipole moments of one density about OriginBohr.
type Moments struct {
	OriginBohr [3]float64
	// ChargeAU is the total charge of nuclei and electrons (e).
	ChargeAU float64
	// Dipole in e·a0.
	Dipole Vector3
	// SecondMoment is the raw Cartesian second moment in e·a0².
	SecondMoment Tensor6
	// Quadrupole is the traceless Buckingham quadrupole in e·a0².
	Quadrupole Tensor6
	// DipoleOriginDependent: the molecule is charged, so μ depends on the origin.
	DipoleOriginDependent bool
	// QuadrupoleOriginDependent: the molecule is charged or its dipole is
	// larger than DipoleNegligibleDebye, so Θ depends on the origin.
	QuadrupoleOriginDependent bool
}

// DipoleDebye is the total dipole in debye.
func (m *Moments) DipoleDebye() [3]float64 {
	var d [3]float64
	for k := range d {
		d[k] = m.Dipole.Total[k] * molecule.DebyePerAU
	}
	return d
}

// DipoleMagnitudeDebye is |μ| in debye.
func (m *Moments) DipoleMagnitudeDebye() float64 {
	d := m.Dipole.Total
	return math.Sqrt(d[0]*d[0]+d[1]*d[1]+d[2]*d[2]) * molecule.DebyePerAU
}

// QuadrupoleBuckingham is the total traceless quadrupole in D·Å
// (xx, yy, zz, xy, xz, yz).
func (m *Moments) QuadrupoleBuckingham() [6]float64 {
	var q [6]float64
	for k := range q {
		q[k] = m.Quadrupole.Total[k] * molecule.BuckinghamPerAU
	}
	return q
}

// SecondMomentBuckingham is the total raw second moment in D·Å.
func (m *Moments) SecondMomentBuckingham() [6]float64 {
	var q [6]float64
	for k := range q {
		q[k] = m.SecondMoment.Total[k] * molecule.BuckinghamPerAU
	}
	return q
}

// Traceless returns Θ_ij = ½(3 M_ij − δ_ij tr M) of a six-component second moment.
func Traceless(m [6]float64) [6]float64 {
	tr := m[0] + m[1] + m[2]
	var t [6]float64
	for k := 0; k < 3; k++ {
		t[k] = 0.5 * (3*m[k] - tr)
	}
	for k := 3; k < 6; k++ {
		t[k] = 1.5 * m[k]
	}
	return t
}

// Multipoles contracts the total density D with the AO multipole integrals
// about origin (dip: ⟨μ|(r−O)_i|ν⟩; second: ⟨μ|(r−O)_i(r−O)_j|ν⟩ ordered xx,
// yy, zz, xy, xz, yz) and adds the nuclear parts of mol about the same origin.
func Multipoles(mol *molecule.Molecule, dip [3]*mat.SymDense, second [6]*mat.SymDense, D *mat.SymDense, origin [3]float64) (Moments, error) {
	n, _ := D.Dims()
	for k, a := range dip {
		if a == nil || a.SymmetricDim() != n {
			return Moments{}, fmt.Errorf("props: dipole integral matrix %d does not match the %d×%d density", k, n, n)
		}
	}
	for k, a := range second {
		if a == nil || a.SymmetricDim() != n {
			return Moments{}, fmt.Errorf("props: second-moment integral matrix %d does not match the %d×%d density", k, n, n)
		}
	}
	m := Moments{OriginBohr: origin}
	ne := 0.0
	for _, at := range mol.Atoms {
		z := float64(at.Z)
		var r [3]float64
		for k := range r {
			r[k] = at.PosBohr[k] - origin[k]
			m.Dipole.Nuclear[k] += z * r[k]
		}
		for k, p := range Pairs {
			m.SecondMoment.Nuclear[k] += z * r[p[0]] * r[p[1]]
		}
		ne += z
	}
	for k := range dip {
		m.Dipole.Electronic[k] = -dotSym(D, dip[k])
	}
	for k := range second {
		m.SecondMoment.Electronic[k] = -dotSym(D, second[k])
	}
	m.ChargeAU = float64(mol.NuclearCharge() - mol.Electrons())
	m.finish()
	return m, nil
}

// finish fills totals, the traceless quadrupole and the origin flags from
// the nuclear and electronic parts.
func (m *Moments) finish() {
	for k := 0; k < 3; k++ {
		m.Dipole.Total[k] = m.Dipole.Nuclear[k] + m.Dipole.Electronic[k]
	}
	for k := 0; k < 6; k++ {
		m.SecondMoment.Total[k] = m.SecondMoment.Nuclear[k] + m.SecondMoment.Electronic[k]
	}
	m.Quadrupole.Nuclear = Traceless(m.SecondMoment.Nuclear)
	m.Quadrupole.Electronic = Traceless(m.SecondMoment.Electronic)
	m.Quadrupole.Total = Traceless(m.SecondMoment.Total)
	m.DipoleOriginDependent = math.Abs(m.ChargeAU) > 0.5
	m.QuadrupoleOriginDependent = m.DipoleOriginDependent || m.DipoleMagnitudeDebye() > DipoleNegligibleDebye
}

// Shift returns the moments about newOrigin, by the textbook shift formulas
// (with d = newOrigin − OriginBohr and Q the total charge):
//
//	μ'_i  = μ_i − Q d_i
//	M'_ij = M_ij − d_i μ_j − d_j μ_i + Q d_i d_j
//
// applied to each part (nuclear part with Q = Σ Z, electronic part with
// Q = −N_electrons). The quadrupoles are recomputed from the shifted second
// moments.
func (m Moments) Shift(newOrigin [3]float64, nuclearCharge float64) Moments {
	var d [3]float64
	for k := range d {
		d[k] = newOrigin[k] - m.OriginBohr[k]
	}
	out := m
	out.OriginBohr = newOrigin
	qe := m.ChargeAU - nuclearCharge
	shiftPart := func(mu [3]float64, sec [6]float64, q float64) ([3]float64, [6]float64) {
		var mu2 [3]float64
		for k := range mu {
			mu2[k] = mu[k] - q*d[k]
		}
		var s2 [6]float64
		for k, p := range Pairs {
			i, j := p[0], p[1]
			s2[k] = sec[k] - d[i]*mu[j] - d[j]*mu[i] + q*d[i]*d[j]
		}
		return mu2, s2
	}
	out.Dipole.Nuclear, out.SecondMoment.Nuclear = shiftPart(m.Dipole.Nuclear, m.SecondMoment.Nuclear, nuclearCharge)
	out.Dipole.Electronic, out.SecondMoment.Electronic = shiftPart(m.Dipole.Electronic, m.SecondMoment.Electronic, qe)
	out.finish()
	return out
}

// dotSym is Σ_μν A_μν B_μν.
func dotSym(a, b *mat.SymDense) float64 {
	n := a.SymmetricDim()
	s := 0.0
	for i := 0; i < n; i++ {
		s += a.At(i, i) * b.At(i, i)
		for j := 0; j < i; j++ {
			s += 2 * a.At(i, j) * b.At(i, j)
		}
	}
	return s
}
