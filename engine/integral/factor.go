package integral

import (
	"math"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/lapack/lapack64"
	"gonum.org/v1/gonum/mat"
)

// densityFactor writes a symmetric density as D = Σ_k s_k x_k x_kᵀ with
// columns x_k (row-major n × rank in x) and signs s_k = ±1. Positive
// semidefinite densities (those of occupied orbitals, and superposition
// guesses) take the pivoted Cholesky factorisation, whose rank is the
// number of occupied orbitals; any other symmetric matrix, or one whose
// Cholesky factor does not reproduce it to 1e-10 of its largest element,
// the eigenvectors with √|λ| (eigenvalues below 1e-14 of the largest
// magnitude dropped).
type densityFactor struct {
	rank int
	x    []float64 // x[μ*rank + k]
	sign []float64
}

func factorDensity(d *mat.SymDense) densityFactor {
	n := d.SymmetricDim()
	a := make([]float64, n*n)
	dmax := 0.0
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			v := d.At(i, j)
			a[i*n+j] = v
			dmax = math.Max(dmax, math.Abs(v))
		}
	}
	if dmax == 0 {
		return densityFactor{}
	}
	piv := make([]int, n)
	_, rank, _ := lapack64.Pstrf(blas64.Symmetric{Uplo: blas.Lower, N: n, Data: a, Stride: n}, piv, -1, make([]float64, 2*n))
	f := densityFactor{rank: rank, x: make([]float64, n*rank), sign: make([]float64, rank)}
	for k := 0; k < rank; k++ {
		f.sign[k] = 1
		for i := k; i < n; i++ {
			f.x[piv[i]*rank+k] = a[i*n+k]
		}
	}
	// Check the factor against the density: D − X Xᵀ must vanish.
	worst := 0.0
	for i := 0; i < n && worst <= 1e-10*dmax; i++ {
		xi := f.x[i*rank : (i+1)*rank]
		for j := 0; j <= i; j++ {
			xj := f.x[j*rank : (j+1)*rank]
			s := 0.0
			for k, v := range xi {
				s += v * xj[k]
			}
			worst = math.Max(worst, math.Abs(d.At(i, j)-s))
		}
	}
	if worst <= 1e-10*dmax {
		return f
	}
	var es mat.EigenSym
	if !es.Factorize(d, true) {
		panic("integral: a density matrix could not be diagonalised") // only for non-finite input
	}
	vals := es.Values(nil)
	var u mat.Dense
	es.VectorsTo(&u)
	top := 0.0
	for _, v := range vals {
		top = math.Max(top, math.Abs(v))
	}
	var keep []int
	for k, v := range vals {
		if math.Abs(v) > 1e-14*top {
			keep = append(keep, k)
		}
	}
	f = densityFactor{rank: len(keep), x: make([]float64, n*len(keep)), sign: make([]float64, len(keep))}
	for c, k := range keep {
		s := math.Sqrt(math.Abs(vals[k]))
		f.sign[c] = math.Copysign(1, vals[k])
		for i := 0; i < n; i++ {
			f.x[i*f.rank+c] = u.At(i, k) * s
		}
	}
	return f
}
