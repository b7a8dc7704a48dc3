package scf

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// orthogonaliser maps the AO basis (n functions) to an orthonormal basis
// of m ≤ n functions: X†SX = 1.
type orthogonaliser struct {
	x       *mat.Dense // n × m
	dropped int
}

// newOrthogonaliser returns the symmetric orthogonaliser S^{-1/2} when all
// eigenvalues of S are at least tol, otherwise the canonical one over the
// eigenvectors with eigenvalue ≥ tol.
func newOrthogonaliser(s *mat.SymDense, tol float64) (*orthogonaliser, error) {
	n := s.SymmetricDim()
	var eig mat.EigenSym
	if !eig.Factorize(s, true) {
		return nil, fmt.Errorf("scf: the overlap matrix could not be diagonalised")
	}
	vals := eig.Values(nil)
	var u mat.Dense
	eig.VectorsTo(&u)
	keep := 0
	for _, v := range vals {
		if v >= tol {
			keep++
		}
	}
	if keep == 0 {
		return nil, fmt.Errorf("scf: the overlap matrix has no eigenvalue above %g: the basis is degenerate", tol)
	}
	o := &orthogonaliser{dropped: n - keep}
	if keep == n {
		// X = U s^{-1/2} U†
		us := mat.DenseCopyOf(&u)
		for k := 0; k < n; k++ {
			f := 1 / math.Sqrt(vals[k])
			for i := 0; i < n; i++ {
				us.Set(i, k, us.At(i, k)*f)
			}
		}
		var x mat.Dense
		x.Mul(us, u.T())
		o.x = mat.DenseCopyOf(symmetrise(&x))
		return o, nil
	}
	x := mat.NewDense(n, keep, nil)
	c := 0
	for k := 0; k < n; k++ {
		if vals[k] < tol {
			continue
		}
		f := 1 / math.Sqrt(vals[k])
		for i := 0; i < n; i++ {
			x.Set(i, c, u.At(i, k)*f)
		}
		c++
	}
	o.x = x
	return o, nil
}

// nmo is the number of orthonormal functions.
func (o *orthogonaliser) nmo() int { _, m := o.x.Dims(); return m }

// toOrth returns X†AX (m × m, symmetrised).
func (o *orthogonaliser) toOrth(a *mat.SymDense) *mat.SymDense {
	var t, r mat.Dense
	t.Mul(a, o.x)
	r.Mul(o.x.T(), &t)
	return symmetrise(&r)
}

// density returns the orthonormal-basis density X†S D S X of an AO density.
func (o *orthogonaliser) density(s, d *mat.SymDense) *mat.SymDense {
	var sx, t, r mat.Dense
	sx.Mul(s, o.x)
	t.Mul(d, &sx)
	r.Mul(sx.T(), &t)
	return symmetrise(&r)
}

// symmetrise returns (A + A†)/2 as a SymDense.
func symmetrise(a mat.Matrix) *mat.SymDense {
	n, _ := a.Dims()
	s := mat.NewSymDense(n, nil)
	for i := 0; i < n; i++ {
		for j := i; j < n; j++ {
			s.SetSym(i, j, 0.5*(a.At(i, j)+a.At(j, i)))
		}
	}
	return s
}

// diagonalise returns the eigenvalues (ascending) and eigenvectors
// (columns) of a symmetric matrix, each vector's largest-magnitude
// component made positive so the phase is reproducible.
func diagonalise(a *mat.SymDense) ([]float64, *mat.Dense, error) {
	var eig mat.EigenSym
	if !eig.Factorize(a, true) {
		return nil, nil, fmt.Errorf("scf: a Fock matrix could not be diagonalised")
	}
	vals := eig.Values(nil)
	v := mat.NewDense(len(vals), len(vals), nil)
	eig.VectorsTo(v)
	n, m := v.Dims()
	for j := 0; j < m; j++ {
		big, at := 0.0, 0
		for i := 0; i < n; i++ {
			if a := math.Abs(v.At(i, j)); a > big+1e-12 {
				big, at = a, i
			}
		}
		if v.At(at, j) < 0 {
			for i := 0; i < n; i++ {
				v.Set(i, j, -v.At(i, j))
			}
		}
	}
	for _, e := range vals {
		if math.IsNaN(e) || math.IsInf(e, 0) {
			return nil, nil, fmt.Errorf("scf: the Fock matrix has non-finite eigenvalues (the integrals or the density are broken)")
		}
	}
	return vals, v, nil
}

// densityFrom returns Σ_i occ_i c_i c_iᵀ over the columns of c.
func densityFrom(c *mat.Dense, occ []float64) *mat.SymDense {
	n, _ := c.Dims()
	var cols []int
	for k, w := range occ {
		if w != 0 {
			cols = append(cols, k)
		}
	}
	if len(cols) == 0 {
		return mat.NewSymDense(n, nil)
	}
	a := mat.NewDense(n, len(cols), nil)
	b := mat.NewDense(n, len(cols), nil)
	for j, k := range cols {
		for i := 0; i < n; i++ {
			a.Set(i, j, c.At(i, k))
			b.Set(i, j, occ[k]*c.At(i, k))
		}
	}
	var d mat.Dense
	d.Mul(a, b.T())
	return symmetrise(&d)
}

// dotSym is Σ_ij A_ij B_ij = tr(A B) for symmetric A, B.
func dotSym(a, b *mat.SymDense) float64 {
	n := a.SymmetricDim()
	sum := 0.0
	for i := 0; i < n; i++ {
		sum += a.At(i, i) * b.At(i, i)
		for j := i + 1; j < n; j++ {
			sum += 2 * a.At(i, j) * b.At(i, j)
		}
	}
	return sum
}

// commutatorError returns X†(F D S − S D F)X, antisymmetric m × m.
func commutatorError(o *orthogonaliser, f, d, s *mat.SymDense) *mat.Dense {
	var fd, fds, e mat.Dense
	fd.Mul(f, d)
	fds.Mul(&fd, s)
	n, _ := fds.Dims()
	e.CloneFrom(&fds)
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			e.Set(i, j, fds.At(i, j)-fds.At(j, i))
		}
	}
	var t, r mat.Dense
	t.Mul(&e, o.x)
	r.Mul(o.x.T(), &t)
	return &r
}

// maxAbs is the largest |element| of a.
func maxAbs(a mat.Matrix) float64 {
	r, c := a.Dims()
	m := 0.0
	for i := 0; i < r; i++ {
		for j := 0; j < c; j++ {
			if v := math.Abs(a.At(i, j)); v > m {
				m = v
			}
		}
	}
	return m
}

// rmsDiff is the RMS of the element-wise differences over pairs (a[k], b[k]);
// a nil b[k] counts as zero.
func rmsDiff(a, b []*mat.SymDense) float64 {
	sum, cnt := 0.0, 0
	for k := range a {
		n := a[k].SymmetricDim()
		for i := 0; i < n; i++ {
			for j := 0; j < n; j++ {
				d := a[k].At(i, j)
				if b[k] != nil {
					d -= b[k].At(i, j)
				}
				sum += d * d
				cnt++
			}
		}
	}
	return math.Sqrt(sum / float64(cnt))
}

// addScaled sets dst ← dst + alpha·a.
func addScaled(dst *mat.SymDense, alpha float64, a *mat.SymDense) {
	n := dst.SymmetricDim()
	for i := 0; i < n; i++ {
		for j := i; j < n; j++ {
			dst.SetSym(i, j, dst.At(i, j)+alpha*a.At(i, j))
		}
	}
}
