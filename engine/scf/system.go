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
// ERI engine (or reuses eri). A given J/K builder (fitted integrals) makes
// every build from the full density; otherwise the exact integrals are
// contracted incrementally.
func newSystem(m *molecule.Molecule, mb *basis.Molecular, threads int, schwarz float64, memory int64, eri *integral.ERI, jk JKBuilder) (*system, error) {
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
	if jk != nil {
		return &system{s: s, h: h, enuc: m.NuclearRepulsion(), eri: eri, jk: jk.JK}, nil
	}
	inc := &incrementalJK{full: eri.JK}
	return &system{s: s, h: h, enuc: m.NuclearRepulsion(), eri: eri, jk: inc.build}, nil
}

// incrementalJK builds J and K from the change of the density since the
// previous build, J[D] = J[D_prev] + J[D − D_prev] (likewise K): the
// integral engine's density screening then skips most quartets once the
// iterations settle. Every rebuildEvery builds, or when the request
// changes shape, J and K are built from the full density so that
// screening errors cannot accumulate. The same sequence of builds is made
// whether the integrals are held in memory or recomputed, and the engine
// gives the same bits either way.
type incrementalJK struct {
	full     func(d []*mat.SymDense, wantK bool) (j, k []*mat.SymDense)
	d, j, k  []*mat.SymDense
	wantK    bool
	sinceAll int
}

const rebuildEvery = 8

func (c *incrementalJK) build(d []*mat.SymDense, wantK bool) ([]*mat.SymDense, []*mat.SymDense) {
	if c.d == nil || len(c.d) != len(d) || c.wantK != wantK || c.sinceAll >= rebuildEvery {
		j, k := c.full(d, wantK)
		c.keep(d, j, k, wantK)
		c.sinceAll = 0
		return j, k
	}
	n := d[0].SymmetricDim()
	delta := make([]*mat.SymDense, len(d))
	for i := range d {
		delta[i] = mat.NewSymDense(n, nil)
		delta[i].CopySym(d[i])
		addScaled(delta[i], -1, c.d[i])
	}
	dj, dk := c.full(delta, wantK)
	j := make([]*mat.SymDense, len(d))
	var k []*mat.SymDense
	for i := range d {
		j[i] = mat.NewSymDense(n, nil)
		j[i].AddSym(c.j[i], dj[i])
		if wantK {
			k = append(k, mat.NewSymDense(n, nil))
			k[i].AddSym(c.k[i], dk[i])
		}
	}
	c.keep(d, j, k, wantK)
	c.sinceAll++
	return j, k
}

func (c *incrementalJK) keep(d, j, k []*mat.SymDense, wantK bool) {
	c.d = make([]*mat.SymDense, len(d))
	for i := range d {
		c.d[i] = mat.NewSymDense(d[i].SymmetricDim(), nil)
		c.d[i].CopySym(d[i])
	}
	c.j, c.k, c.wantK = j, k, wantK
}
