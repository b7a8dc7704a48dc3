// Package gemm is the engine's dense block product: register-blocked
// kernels (AVX2/FMA and AVX-512 assembly on amd64, a Go loop elsewhere)
// shared by the XC quadrature (engine/dft) and the density-fitted Coulomb
// and exchange builds (engine/integral).
//
// Every product is written in one form,
//
//	C[i, j] = Σ_k A[k·lda + i] · B[k·ldb + j],  0 ≤ i < m, 0 ≤ j < n,
//
// A stored column-major (its k-th column contiguous in i), B and C
// row-major. C is overwritten. m must be a multiple of 4 and n of 8 (the
// callers pad their arrays with zeros, see RoundUp); the register block is
// 4 × 8. On amd64 with AVX2 and FMA an assembly kernel computes each block, elsewhere
// a Go loop of the same shape. Each element of C is a sum over k in
// increasing order with one fused multiply–add per term (a plain multiply
// and add in the Go loop), whichever kernel computes it, so results do not
// depend on how callers divide work between threads. Where AVX-512 is
// there, pairs of neighbouring column blocks go to a 4 × 16 kernel.
package gemm

// Register block: m must be a multiple of Rows and n of Cols.
const (
	Rows = 4
	Cols = 8
)

const (
	blockRows = Rows
	blockCols = Cols
)

// CM computes the product described in the package comment. With upper
// set, only the 4 × 8 blocks that touch the upper triangle (j ≥ i for some
// element) are computed; the others are left as they were.
func CM(m, n, k int, a []float64, lda int, b []float64, ldb int, c []float64, ldc int, upper bool) {
	if m%blockRows != 0 || n%blockCols != 0 {
		panic("gemm: CM: block sizes not padded") // internal invariant, callers pad
	}
	if m == 0 || n == 0 {
		return
	}
	if k == 0 {
		for i := 0; i < m; i++ {
			row := c[i*ldc : i*ldc+n]
			for j := range row {
				row[j] = 0
			}
		}
		return
	}
	// bounds checked once here, the kernels index without checks
	_ = a[(k-1)*lda+m-1]
	_ = b[(k-1)*ldb+n-1]
	_ = c[(m-1)*ldc+n-1]
	j := 0
	for ; j+2*blockCols <= n; j += 2 * blockCols {
		for i := 0; i < m; i += blockRows {
			switch {
			case upper && j+2*blockCols <= i:
			case upper && j+blockCols <= i:
				kernel4x8(k, a[i:], lda, b[j+blockCols:], ldb, c[i*ldc+j+blockCols:], ldc)
			case kernel4x16(k, a[i:], lda, b[j:], ldb, c[i*ldc+j:], ldc):
			default:
				kernel4x8(k, a[i:], lda, b[j:], ldb, c[i*ldc+j:], ldc)
				kernel4x8(k, a[i:], lda, b[j+blockCols:], ldb, c[i*ldc+j+blockCols:], ldc)
			}
		}
	}
	for ; j < n; j += blockCols {
		for i := 0; i < m; i += blockRows {
			if upper && j+blockCols <= i {
				continue
			}
			kernel4x8(k, a[i:], lda, b[j:], ldb, c[i*ldc+j:], ldc)
		}
	}
}

// kernel4x8Go is the portable 4 × 8 block kernel.
func kernel4x8Go(k int, a []float64, lda int, b []float64, ldb int, c []float64, ldc int) {
	var acc [blockRows][blockCols]float64
	for p := 0; p < k; p++ {
		ap := a[p*lda : p*lda+blockRows]
		bp := b[p*ldb : p*ldb+blockCols]
		for r := 0; r < blockRows; r++ {
			v := ap[r]
			for s := 0; s < blockCols; s++ {
				acc[r][s] += v * bp[s]
			}
		}
	}
	for r := 0; r < blockRows; r++ {
		copy(c[r*ldc:r*ldc+blockCols], acc[r][:])
	}
}

// RoundUp rounds n up to a multiple of q.
func RoundUp(n, q int) int { return (n + q - 1) / q * q }
