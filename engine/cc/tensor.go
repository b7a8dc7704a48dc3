package cc

import (
	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
)

// mm is C = α op(A) op(B) + β C for row-major A, B, C with leading
// dimensions lda, ldb, ldc; op(A) is m × k, op(B) is k × n.
func mm(tA, tB blas.Transpose, m, n, k int, alpha float64, a []float64, lda int, b []float64, ldb int, beta float64, c []float64, ldc int) {
	if m == 0 || n == 0 {
		return
	}
	if k == 0 {
		for i := 0; i < m; i++ {
			row := c[i*ldc : i*ldc+n]
			for j := range row {
				row[j] *= beta
			}
		}
		return
	}
	blas64.Implementation().Dgemm(tA, tB, m, n, k, alpha, a, max(lda, 1), b, max(ldb, 1), beta, c, max(ldc, 1))
}

// perm4 returns the four-index array src of dimensions d, reordered so
// that the result's index positions are the source positions ord[0..3]:
// dst[x[ord[0]]][x[ord[1]]][x[ord[2]]][x[ord[3]]] = src[x[0]][x[1]][x[2]][x[3]].
// dst is reused when large enough.
func perm4(dst, src []float64, d [4]int, ord [4]int) []float64 {
	n := d[0] * d[1] * d[2] * d[3]
	dst = fit(dst, n)
	var nd [4]int
	for k := 0; k < 4; k++ {
		nd[k] = d[ord[k]]
	}
	// stride in dst of each source index
	var dstStride [4]int
	s := 1
	for k := 3; k >= 0; k-- {
		dstStride[ord[k]] = s
		s *= nd[k]
	}
	i := 0
	for x0 := 0; x0 < d[0]; x0++ {
		o0 := x0 * dstStride[0]
		for x1 := 0; x1 < d[1]; x1++ {
			o1 := o0 + x1*dstStride[1]
			for x2 := 0; x2 < d[2]; x2++ {
				o2 := o1 + x2*dstStride[2]
				st := dstStride[3]
				for x3 := 0; x3 < d[3]; x3++ {
					dst[o2+x3*st] = src[i]
					i++
				}
			}
		}
	}
	return dst
}

// addPerm4 adds α times the reordered src (as perm4) to dst.
func addPerm4(dst []float64, alpha float64, src []float64, d [4]int, ord [4]int) {
	var nd [4]int
	for k := 0; k < 4; k++ {
		nd[k] = d[ord[k]]
	}
	var dstStride [4]int
	s := 1
	for k := 3; k >= 0; k-- {
		dstStride[ord[k]] = s
		s *= nd[k]
	}
	i := 0
	for x0 := 0; x0 < d[0]; x0++ {
		o0 := x0 * dstStride[0]
		for x1 := 0; x1 < d[1]; x1++ {
			o1 := o0 + x1*dstStride[1]
			for x2 := 0; x2 < d[2]; x2++ {
				o2 := o1 + x2*dstStride[2]
				st := dstStride[3]
				for x3 := 0; x3 < d[3]; x3++ {
					dst[o2+x3*st] += alpha * src[i]
					i++
				}
			}
		}
	}
}
