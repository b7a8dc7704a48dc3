package gemm

import "golang.org/x/sys/cpu"

// useFMA selects the AVX2/FMA block kernel.
var useFMA = cpu.X86.HasAVX2 && cpu.X86.HasFMA

// useAVX512 selects the 4 × 16 kernel for pairs of column blocks.
var useAVX512 = useFMA && cpu.X86.HasAVX512F

//go:noescape
func kernel4x16AVX512(k int, a *float64, lda int, b *float64, ldb int, c *float64, ldc int)

// kernel4x16 computes two neighbouring 4 × 8 blocks; it reports false when
// no wide kernel is available (the caller then uses kernel4x8 twice).
func kernel4x16(k int, a []float64, lda int, b []float64, ldb int, c []float64, ldc int) bool {
	if !useAVX512 {
		return false
	}
	kernel4x16AVX512(k, &a[0], lda, &b[0], ldb, &c[0], ldc)
	return true
}

//go:noescape
func kernel4x8FMA(k int, a *float64, lda int, b *float64, ldb int, c *float64, ldc int)

func kernel4x8(k int, a []float64, lda int, b []float64, ldb int, c []float64, ldc int) {
	if useFMA {
		kernel4x8FMA(k, &a[0], lda, &b[0], ldb, &c[0], ldc)
		return
	}
	kernel4x8Go(k, a, lda, b, ldb, c, ldc)
}
