package symmetry

import (
	"math"
	"math/rand"
	"testing"

	"moltrail/engine/molecule"
)

// BenchmarkDetect times the detection on a 500-atom molecule without
// symmetry and on a D60h-like pair of 60-atom rings.
func BenchmarkDetect(b *testing.B) {
	rng := rand.New(rand.NewSource(3))
	c1 := &molecule.Molecule{}
	for i := 0; i < 500; i++ {
		c1.Atoms = append(c1.Atoms, molecule.MustAtom("C", 40*rng.Float64(), 40*rng.Float64(), 40*rng.Float64()))
	}
	rings := &molecule.Molecule{}
	for k := 0; k < 60; k++ {
		a := 2 * math.Pi * float64(k) / 60
		rings.Atoms = append(rings.Atoms, molecule.MustAtom("C", 20*math.Cos(a), 20*math.Sin(a), 1.5), molecule.MustAtom("C", 20*math.Cos(a), 20*math.Sin(a), -1.5))
	}
	for _, c := range []struct {
		name string
		m    *molecule.Molecule
	}{{"C1-500", c1}, {"rings-120", rings}} {
		b.Run(c.name, func(b *testing.B) {
			for i := 0; i < b.N; i++ {
				g := Detect(c.m, DefaultToleranceAngstrom)
				b.ReportMetric(float64(g.Order()), "ops")
			}
		})
	}
}
