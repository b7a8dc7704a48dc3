package dft

import "golang.org/x/sys/cpu"

// useFMA selects the AVX2/FMA block kernel.
var useFMA = cpu.X86.HasAVX2 && cpu.X86.HasFMA

//go:noescape
func kernel4x8FMA(k int, a *float64, lda int, b *float64, ldb int, c *float64, ldc int)

func kernel4x8(k int, a []float64, lda int, b []float64, ldb int, c []float64, ldc int) {
	if useFMA {
		kernel4x8FMA(k, &a[0], lda, &b[0], ldb, &c[0], ldc)
		return
	}
	kernel4x8Go(k, a, lda, b, ldb, c, ldc)
}
