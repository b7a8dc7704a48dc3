//go:build !amd64

package gemm

var useFMA, useAVX512 = false, false

func kernel4x8(k int, a []float64, lda int, b []float64, ldb int, c []float64, ldc int) {
	kernel4x8Go(k, a, lda, b, ldb, c, ldc)
}

func kernel4x16(k int, a []float64, lda int, b []float64, ldb int, c []float64, ldc int) bool {
	return false
}
