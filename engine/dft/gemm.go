package dft

import "moltrail/engine/internal/gemm"

// Dense products of the per-batch arrays: the engine's block product
// (package engine/internal/gemm), C[i, j] = Σ_k A[k·lda + i] · B[k·ldb + j]
// with A column-major and m, n padded to the 4 × 8 register block.
const (
	blockRows = gemm.Rows
	blockCols = gemm.Cols
)

func gemmCM(m, n, k int, a []float64, lda int, b []float64, ldb int, c []float64, ldc int, upper bool) {
	gemm.CM(m, n, k, a, lda, b, ldb, c, ldc, upper)
}

func roundUp(n, q int) int { return gemm.RoundUp(n, q) }
