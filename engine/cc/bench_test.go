package cc

import (
	"math"
	"testing"

	"moltrail/engine/basis"
	"moltrail/engine/molecule"
)

// Geometries of testdata/psi4/common.py (ångström, converted with psi4's
// bohr radius as there), frozen core, as in gen_cc.py timing.
func benchSystem(b *testing.B, name string) (*molecule.Molecule, *basis.Molecular) {
	const bohr = 0.52917721067
	var atoms []molecule.Atom
	set := "cc-pvtz"
	switch name {
	case "water":
		atoms = []molecule.Atom{molecule.MustAtom("O", 0, 0, 0.1173/bohr), molecule.MustAtom("H", 0, 0.7572/bohr, -0.4692/bohr), molecule.MustAtom("H", 0, -0.7572/bohr, -0.4692/bohr)}
	case "benzene":
		set = "cc-pvdz"
		for _, el := range []struct {
			s string
			r float64
		}{{"C", 1.39}, {"H", 2.48}} {
			for k := 0; k < 6; k++ {
				a := float64(k) * math.Pi / 3
				atoms = append(atoms, molecule.MustAtom(el.s, el.r/bohr*math.Cos(a), el.r/bohr*math.Sin(a), 0))
			}
		}
	}
	m := &molecule.Molecule{Name: name, Atoms: atoms, Multiplicity: 1}
	s, err := basis.Builtin(set)
	if err != nil {
		b.Fatal(err)
	}
	mb, err := basis.Build(s, m, basis.Spherical)
	if err != nil {
		b.Fatal(err)
	}
	return m, mb
}

// The whole correlation step (transformation, CCSD, (T)) on a converged
// RHF reference; threads from -cpu.
func benchCCSDT(b *testing.B, name string) {
	m, mb := benchSystem(b, name)
	ref := rhf(b, m, mb)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		act, err := FromRHF(ref, m.CoreOrbitals(), 0)
		if err != nil {
			b.Fatal(err)
		}
		r, err := Run(act.Source, act.Energies, act.Occupied, Options{Triples: true, DIISSize: 8, EnergyTolHartree: 1e-8, AmplitudeTol: 1e-7})
		if err != nil || !r.Converged {
			b.Fatal(err)
		}
	}
}

func BenchmarkWaterCCSDTccpVTZ(b *testing.B)   { benchCCSDT(b, "water") }
func BenchmarkBenzeneCCSDTccpVDZ(b *testing.B) { benchCCSDT(b, "benzene") }
