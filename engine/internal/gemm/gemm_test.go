package gemm

import (
	"math"
	"testing"
)

// The block product against a plain triple loop, for both kernels, full
// and upper-triangle forms, several shapes and strides.
func TestCM(t *testing.T) {
	for _, sh := range [][6]int{{4, 8, 1, 4, 8, 8}, {8, 16, 5, 9, 17, 24}, {12, 24, 37, 12, 24, 24}, {32, 40, 128, 36, 48, 40}, {40, 48, 19, 41, 50, 56}} {
		m, n, k, lda, ldb, ldc := sh[0], sh[1], sh[2], sh[3], sh[4], sh[5]
		a := make([]float64, k*lda)
		b := make([]float64, k*ldb)
		for i := range a {
			a[i] = math.Sin(0.37*float64(i) + 0.1)
		}
		for i := range b {
			b[i] = math.Cos(0.21*float64(i) - 0.3)
		}
		// kernels: 0 Go loop, 1 AVX2/FMA 4×8 only, 2 with the AVX-512 4×16
		for kern := 0; kern < 3; kern++ {
			if kern == 1 && !useFMA || kern == 2 && !useAVX512 {
				continue
			}
			for _, upper := range []bool{false, true} {
				savedF, savedW := useFMA, useAVX512
				useFMA, useAVX512 = kern >= 1, kern == 2
				c := make([]float64, m*ldc)
				for i := range c {
					c[i] = 99
				}
				CM(m, n, k, a, lda, b, ldb, c, ldc, upper)
				if kern == 2 {
					// the wide kernel must give the 4×8 kernel's bits
					useAVX512 = false
					c8 := make([]float64, m*ldc)
					for i := range c8 {
						c8[i] = 99
					}
					CM(m, n, k, a, lda, b, ldb, c8, ldc, upper)
					for i := range c {
						if c[i] != c8[i] {
							t.Fatalf("m%d n%d k%d upper %v: 4×16 and 4×8 kernels differ at %d: %v vs %v", m, n, k, upper, i, c[i], c8[i])
						}
					}
				}
				useFMA, useAVX512 = savedF, savedW
				for i := 0; i < m; i++ {
					for j := 0; j < n; j++ {
						want := 0.0
						for p := 0; p < k; p++ {
							want += a[p*lda+i] * b[p*ldb+j]
						}
						got := c[i*ldc+j]
						if upper && j/blockCols*blockCols+blockCols <= i {
							want = 99 // block below the diagonal left alone
						}
						if math.Abs(got-want) > 1e-13*float64(k) {
							t.Fatalf("m%d n%d k%d kernel %d upper %v: C[%d,%d] = %g, want %g", m, n, k, kern, upper, i, j, got, want)
						}
					}
				}
			}
		}
	}
}

func BenchmarkCM(b *testing.B) {
	const m, n, k = 96, 96, 128
	a, bb, c := make([]float64, k*m), make([]float64, k*n), make([]float64, m*n)
	for i := range a {
		a[i] = float64(i%7) * 0.1
	}
	for i := range bb {
		bb[i] = float64(i%5) * 0.2
	}
	b.SetBytes(0)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		CM(m, n, k, a, m, bb, n, c, n, false)
	}
	b.ReportMetric(2*m*n*k*float64(b.N)/b.Elapsed().Seconds()/1e9, "GFLOP/s")
}
