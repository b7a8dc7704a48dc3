package scf

import (
	"math"

	"gonum.org/v1/gonum/mat"
)

// diis is Pulay's direct inversion in the iterative subspace (Pulay, Chem.
// Phys. Lett. 73, 393 (1980)) over Fock matrices in the orthogonal basis.
// Each entry holds one matrix per spin (one for restricted cases) and the
// matching error vectors; the extrapolation uses one set of coefficients
// for all spins.
type diis struct {
	size int
	f    [][]*mat.SymDense
	e    [][]*mat.Dense
}

func newDIIS(size int) *diis { return &diis{size: size} }

// maxDIISCond is the largest condition number of the (scaled) DIIS matrix
// accepted before the oldest vectors are dropped.
const maxDIISCond = 1e14

// push adds an entry, dropping the oldest when the subspace is full.
func (d *diis) push(f []*mat.SymDense, e []*mat.Dense) {
	d.f = append(d.f, f)
	d.e = append(d.e, e)
	if len(d.f) > d.size {
		d.f = d.f[1:]
		d.e = d.e[1:]
	}
}

// len is the current subspace size.
func (d *diis) len() int { return len(d.f) }

// extrapolate returns Σ c_i F_i with Σ c_i = 1 minimising |Σ c_i e_i|. While
// the linear system is singular or ill-conditioned the oldest entries are
// discarded (a restart in the limit of one entry).
func (d *diis) extrapolate() []*mat.SymDense {
	for {
		m := len(d.f)
		if m == 1 {
			return d.f[0]
		}
		c, ok := d.coefficients()
		if ok {
			out := make([]*mat.SymDense, len(d.f[0]))
			for s := range out {
				n := d.f[0][s].SymmetricDim()
				r := mat.NewSymDense(n, nil)
				for i, fi := range d.f {
					addScaled(r, c[i], fi[s])
				}
				out[s] = r
			}
			return out
		}
		d.f = d.f[1:]
		d.e = d.e[1:]
	}
}

// coefficients solves the DIIS equations; ok is false when they are
// ill-conditioned.
func (d *diis) coefficients() ([]float64, bool) {
	m := len(d.f)
	b := mat.NewDense(m+1, m+1, nil)
	scale := 0.0
	for i := 0; i < m; i++ {
		for j := 0; j <= i; j++ {
			v := 0.0
			for s := range d.e[i] {
				v += mat.Sum(elemMul(d.e[i][s], d.e[j][s]))
			}
			b.Set(i, j, v)
			b.Set(j, i, v)
		}
		scale = math.Max(scale, b.At(i, i))
	}
	if !(scale > 0) {
		return nil, false
	}
	for i := 0; i < m; i++ {
		for j := 0; j < m; j++ {
			b.Set(i, j, b.At(i, j)/scale)
		}
		b.Set(i, m, -1)
		b.Set(m, i, -1)
	}
	rhs := mat.NewVecDense(m+1, nil)
	rhs.SetVec(m, -1)
	var lu mat.LU
	lu.Factorize(b)
	if lu.Cond() > maxDIISCond {
		return nil, false
	}
	var x mat.VecDense
	if err := lu.SolveVecTo(&x, false, rhs); err != nil {
		return nil, false
	}
	c := make([]float64, m)
	for i := range c {
		c[i] = x.AtVec(i)
		if math.IsNaN(c[i]) || math.IsInf(c[i], 0) {
			return nil, false
		}
	}
	return c, true
}

func elemMul(a, b *mat.Dense) *mat.Dense {
	var r mat.Dense
	r.MulElem(a, b)
	return &r
}
