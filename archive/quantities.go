package archive

import (
	"math"

	"moltrail/engine/molecule"
)

// Quantity kinds, each with the unit its Value is in.
const (
	KindEnergy     = "energy"     // hartree
	KindDipole     = "dipole"     // debye
	KindQuadrupole = "quadrupole" // buckingham (D·Å)
	KindLength     = "length"     // ångström
	KindAngle      = "angle"      // degrees
)

// KindUnit is the unit of each kind's values.
var KindUnit = map[string]string{KindEnergy: "hartree", KindDipole: "D", KindQuadrupole: "D·Å", KindLength: "Å", KindAngle: "degrees"}

// KindDecimals are the decimals moltrail prints each kind with (in its
// unit above): one unit of the last of them is the printed resolution,
// below which two values are the same figure for a reader (see Diff).
var KindDecimals = map[string]int{KindEnergy: 10, KindDipole: 6, KindQuadrupole: 6, KindLength: 6, KindAngle: 4}

// Resolution is one unit of the last printed decimal of a kind.
func Resolution(kind string) float64 {
	d, ok := KindDecimals[kind]
	if !ok {
		d = 10
	}
	return math.Pow(10, -float64(d))
}

// Quantity is one numeric result of a record.
type Quantity struct {
	Path  string  `json:"path"`
	Kind  string  `json:"kind"`
	Value float64 `json:"value"`
}

// Quantities lists a record's numeric results: energies, dipole
// components and magnitudes, quadrupole components, and the bond lengths
// and angles of the final geometry (from results.structure when present,
// else from results.geometry_angstrom with moltrail's covalent-radius
// connectivity).
func Quantities(r *Record) []Quantity {
	res := &r.Results
	var q []Quantity
	add := func(path, kind string, v float64) {
		if !math.IsNaN(v) && !math.IsInf(v, 0) {
			q = append(q, Quantity{path, kind, v})
		}
	}
	if r.Status != "failed" {
		add("energy_hartree", KindEnergy, res.EnergyHartree)
		add("scf_energy_hartree", KindEnergy, res.SCFEnergyHartree)
		if res.CorrelationEnergyHartree != nil {
			add("correlation_energy_hartree", KindEnergy, *res.CorrelationEnergyHartree)
		}
		add("nuclear_repulsion_hartree", KindEnergy, res.NuclearRepulsionHartree)
		dip := func(name string, d *[3]float64) {
			if d == nil {
				return
			}
			for k, c := range "xyz" {
				add(name+"."+string(c), KindDipole, d[k])
			}
			add(name+" magnitude", KindDipole, math.Sqrt(d[0]*d[0]+d[1]*d[1]+d[2]*d[2]))
		}
		dip("dipole_debye", res.DipoleDebye)
		if res.SCFDipoleDebye != nil && (res.DipoleDebye == nil || *res.SCFDipoleDebye != *res.DipoleDebye) {
			dip("scf_dipole_debye", res.SCFDipoleDebye)
		}
		if b := res.QuadrupoleBuckingham; b != nil {
			for _, c := range []struct {
				n string
				v float64
			}{{"xx", b.XX}, {"yy", b.YY}, {"zz", b.ZZ}, {"xy", b.XY}, {"xz", b.XZ}, {"yz", b.YZ}} {
				add("quadrupole_buckingham."+c.n, KindQuadrupole, c.v)
			}
		}
		if d := r.Derivation; d != nil {
			for _, v := range d.Values {
				add("derived."+v.Name, v.Kind, v.Value)
			}
		}
	}
	if st := res.Structure; st != nil {
		for _, b := range st.Bonds {
			add(b.Label, KindLength, b.Angstrom)
		}
		for _, a := range st.Angles {
			add(a.Label, KindAngle, a.Degrees)
		}
		return q
	}
	m := &molecule.Molecule{}
	for _, a := range res.GeometryAngstrom {
		at, err := molecule.NewAtom(a.Symbol, a.XYZ[0]*molecule.AngstromBohr, a.XYZ[1]*molecule.AngstromBohr, a.XYZ[2]*molecule.AngstromBohr)
		if err != nil {
			return q
		}
		m.Atoms = append(m.Atoms, at)
	}
	for _, b := range m.Bonds() {
		add(b.Label, KindLength, b.Value)
	}
	for _, a := range m.Angles() {
		add(a.Label, KindAngle, a.Value)
	}
	return q
}
