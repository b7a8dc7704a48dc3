package cc

import (
	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"

	"moltrail/engine/internal/gemm"
)

// mm is C = α op(A) op(B) + β C for row-major A, B, C with leading
// dimensions lda, ldb, ldc; op(A) is m × k, op(B) is k × n; one thread.
func mm(tA, tB blas.Transpose, m, n, k int, alpha float64, a []float64, lda int, b []float64, ldb int, beta float64, c []float64, ldc int) {
	mmT(1, tA, tB, m, n, k, alpha, a, lda, b, ldb, beta, c, ldc)
}

// Blocking of the large products: k in chunks of kChunk, C in column
// strips of about stripValues/m columns (a multiple of 16).
const (
	kChunk      = 2048
	stripValues = 1 << 20
	// products with a dimension below smallDim go to gonum
	smallDim = 32
)

// mmT is mm on up to threads workers. Large products use the
// register-blocked kernels of engine/internal/gemm (A repacked
// column-major and B row-major where the layout asks for it, padded to the
// kernels' block); each column strip of C is computed by one worker as
// β C + α Σ_chunks (chunk products in k order), so the bits do not depend
// on the number of threads.
func mmT(threads int, tA, tB blas.Transpose, m, n, k int, alpha float64, a []float64, lda int, b []float64, ldb int, beta float64, c []float64, ldc int) {
	if m == 0 || n == 0 {
		return
	}
	if m < smallDim || n < smallDim || k < smallDim {
		mmSmall(tA, tB, m, n, k, alpha, a, lda, b, ldb, beta, c, ldc)
		return
	}
	mp, np := gemm.RoundUp(m, gemm.Rows), gemm.RoundUp(n, 2*gemm.Cols)
	acm, ldA := a, lda
	if tA != blas.Trans || m != mp {
		acm, ldA = make([]float64, k*mp), mp
		if tA == blas.Trans {
			for kk := 0; kk < k; kk++ {
				copy(acm[kk*mp:kk*mp+m], a[kk*lda:kk*lda+m])
			}
		} else {
			for i := 0; i < m; i++ {
				row := a[i*lda : i*lda+k]
				for kk, x := range row {
					acm[kk*mp+i] = x
				}
			}
		}
	}
	// B row-major: used in place when it is so stored, except for the
	// last columns beyond a multiple of the kernel block, which are copied
	// into a padded panel (all of B when it is transposed).
	nd := n / (2 * gemm.Cols) * (2 * gemm.Cols) // columns read in place
	if tB != blas.NoTrans {
		nd = 0
	}
	var tail []float64
	tw := np - nd
	if tw > 0 {
		tail = make([]float64, k*tw)
		if tB == blas.NoTrans {
			for kk := 0; kk < k; kk++ {
				copy(tail[kk*tw:kk*tw+n-nd], b[kk*ldb+nd:kk*ldb+n])
			}
		} else {
			for j := nd; j < n; j++ {
				row := b[j*ldb : j*ldb+k]
				for kk, x := range row {
					tail[kk*tw+j-nd] = x
				}
			}
		}
	}
	sw := max(2*gemm.Cols, stripValues/mp/(2*gemm.Cols)*(2*gemm.Cols))
	// strips of the in-place part, then the tail panel as one strip
	type strip struct{ j0, w int }
	var strips []strip
	for j0 := 0; j0 < nd; j0 += sw {
		strips = append(strips, strip{j0, min(sw, nd-j0)})
	}
	if tw > 0 {
		strips = append(strips, strip{nd, tw})
	}
	parallelFor(threads, len(strips), func(si int, scr *scratch) {
		j0, w := strips[si].j0, strips[si].w
		src, ld, off := b, ldb, j0
		if j0 >= nd {
			src, ld, off = tail, tw, 0
		}
		scr.a = fit(scr.a, mp*w)
		tmp := scr.a
		nc := min(w, n-j0)
		for k0 := 0; k0 < k; k0 += kChunk {
			kc := min(kChunk, k-k0)
			gemm.CM(mp, w, kc, acm[k0*ldA:], ldA, src[k0*ld+off:], ld, tmp, w, false)
			first := k0 == 0
			for i := 0; i < m; i++ {
				dst := c[i*ldc+j0 : i*ldc+j0+nc]
				src := tmp[i*w : i*w+nc]
				switch {
				case first && beta == 0:
					for j, x := range src {
						dst[j] = alpha * x
					}
				case first && beta != 1:
					for j, x := range src {
						dst[j] = beta*dst[j] + alpha*x
					}
				default:
					for j, x := range src {
						dst[j] += alpha * x
					}
				}
			}
		}
	})
}

// mmSmall is mm by gonum's Dgemm.
func mmSmall(tA, tB blas.Transpose, m, n, k int, alpha float64, a []float64, lda int, b []float64, ldb int, beta float64, c []float64, ldc int) {
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
