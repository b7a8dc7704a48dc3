package scf

import (
	"fmt"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/basis"
	"moltrail/engine/integral"
	"moltrail/engine/molecule"
)

// system is what the iterations need: one-electron matrices, the nuclear
// repulsion, the electron counts and a J/K builder.
type system struct {
	s, h          *mat.SymDense
	enuc          float64
	nalpha, nbeta int
	eri           *integral.ERI
	jk            func(d []*mat.SymDense, wantK bool) (j, k []*mat.SymDense)
}

// newSystem computes the one-electron integrals of mb on m and sets up the
// ERI engine (or reuses eri).
func newSystem(m *molecule.Molecule, mb *basis.Molecular, threads int, schwarz float64, memory int64, eri *integral.ERI) (*system, error) {
	s := integral.Overlap(mb)
	t := integral.Kinetic(mb)
	v := integral.NuclearMolecule(mb, m)
	n := mb.NBasis
	h := mat.NewSymDense(n, nil)
	h.AddSym(t, v)
	if eri == nil {
		var err error
		eri, err = integral.NewERI(mb, integral.Options{SchwarzThreshold: schwarz, Threads: threads, MemoryBudgetBytes: memory})
		if err != nil {
			return nil, fmt.Errorf("scf: electron-repulsion integrals: %v", err)
		}
	}
	return &system{s: s, h: h, enuc: m.NuclearRepulsion(), eri: eri, jk: eri.JK}, nil
}
