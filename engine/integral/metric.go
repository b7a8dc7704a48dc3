package integral

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/internal/gemm"
)

// DefaultMetricCutoff is the relative eigenvalue cut-off of the fitting
// metric used when none is given: auxiliary combinations whose metric
// eigenvalue is below cutoff × the largest are removed.
const DefaultMetricCutoff = 1e-10

// Ways of inverting the metric (FitMetric.Method).
const (
	MetricCholesky = "cholesky"
	MetricEigen    = "eigen"
)

// FitMetric is the inverted Coulomb metric as a transformation M with
// MᵀM = J⁻¹ on the space the auxiliary functions span: fitted three-index
// quantities are B^Q_μν = Σ_P M_QP (P|μν), and (μν|λσ) ≈ Σ_Q B^Q_μν B^Q_λσ.
//
// The inversion is stated and robust. J is factorised J = L Lᵀ
// (Cholesky); when the factorisation succeeds and its condition estimate
// (the LAPACK 1-norm estimate of κ(J)) is below 1/Cutoff, M = L⁻¹ (lower
// triangular, Removed 0). Otherwise J is diagonalised, J = U λ Uᵀ, the
// eigenvalues below Cutoff × λ_max are removed and M = λ^(−1/2) Uᵀ over the
// rest (a pseudo-inverse: the fit drops the near-dependent auxiliary
// combinations). Either way the numbers depend on the metric alone.
type FitMetric struct {
	Method string
	// Cutoff is the relative eigenvalue cut-off; Condition the condition
	// estimate of the Cholesky factor (the eigenvalue ratio on the eigen
	// route); Removed the number of combinations dropped.
	Cutoff    float64
	Condition float64
	Removed   int
	// NAux auxiliary functions, NFit fitted combinations (NAux − Removed).
	NAux, NFit int
	ld         int       // row stride of mT, a multiple of gemm.Cols
	mT         []float64 // mT[P*ld + Q] = M_QP
	lower      bool      // M_QP = 0 for P > Q
}

// FactorMetric inverts the metric j with the relative eigenvalue cut-off
// (0 = DefaultMetricCutoff).
func FactorMetric(j *mat.SymDense, cutoff float64) (*FitMetric, error) {
	if cutoff == 0 {
		cutoff = DefaultMetricCutoff
	}
	if !(cutoff > 0 && cutoff < 1) {
		return nil, fmt.Errorf("integral: metric eigenvalue cut-off %g must lie between 0 and 1", cutoff)
	}
	n := j.SymmetricDim()
	m := &FitMetric{Cutoff: cutoff, NAux: n}
	var ch mat.Cholesky
	if ch.Factorize(j) {
		if c := ch.Cond(); c < 1/cutoff {
			var l, li mat.TriDense
			ch.LTo(&l)
			if err := li.InverseTri(&l); err == nil {
				m.Method, m.Condition, m.NFit, m.lower = MetricCholesky, c, n, true
				m.ld = gemm.RoundUp(n, gemm.Cols)
				m.mT = make([]float64, n*m.ld)
				for q := 0; q < n; q++ {
					for p := 0; p <= q; p++ {
						m.mT[p*m.ld+q] = li.At(q, p)
					}
				}
				return m, nil
			}
		}
	}
	var es mat.EigenSym
	if !es.Factorize(j, true) {
		return nil, fmt.Errorf("integral: the fitting metric (%d auxiliary functions) could not be diagonalised", n)
	}
	vals := es.Values(nil)
	var u mat.Dense
	es.VectorsTo(&u)
	top := vals[n-1]
	if !(top > 0) {
		return nil, fmt.Errorf("integral: the fitting metric has no positive eigenvalue")
	}
	var keep []int
	for k := n - 1; k >= 0; k-- {
		if vals[k] >= cutoff*top {
			keep = append(keep, k)
		}
	}
	m.Method, m.NFit, m.Removed = MetricEigen, len(keep), n-len(keep)
	m.Condition = top / vals[keep[len(keep)-1]]
	m.ld = gemm.RoundUp(m.NFit, gemm.Cols)
	m.mT = make([]float64, n*m.ld)
	for q, k := range keep {
		s := 1 / math.Sqrt(vals[k])
		for p := 0; p < n; p++ {
			m.mT[p*m.ld+q] = u.At(p, k) * s
		}
	}
	return m, nil
}

// String describes the inversion in one line.
func (m *FitMetric) String() string {
	if m.Method == MetricCholesky {
		return fmt.Sprintf("Cholesky of the %d×%d metric (condition estimate %.1e below 1/%.0e)", m.NAux, m.NAux, m.Condition, m.Cutoff)
	}
	return fmt.Sprintf("eigenvalues of the %d×%d metric, %d below %.0e × the largest removed (condition of the rest %.1e)", m.NAux, m.NAux, m.Removed, m.Cutoff, m.Condition)
}

// Matrix returns M (NFit × NAux): the fitted factors of any pair set are
// B^Q = Σ_P M_QP (P|··).
func (m *FitMetric) Matrix() *mat.Dense {
	out := mat.NewDense(m.NFit, m.NAux, nil)
	for p := 0; p < m.NAux; p++ {
		for q := 0; q < m.NFit; q++ {
			out.Set(q, p, m.mT[p*m.ld+q])
		}
	}
	return out
}

// metricPanel is the width of the Q panels of the transformation, so that
// the lower-triangular M is applied without its zero blocks.
const metricPanel = 64

// apply computes the fitted rows b[r*ldb + Q] = Σ_P M_QP a[P*lda + r] for
// r < rows (rows a multiple of gemm.Rows, a and b padded accordingly).
// Each element is one sum over P in increasing order, so the result does
// not depend on which rows are transformed together.
func (m *FitMetric) apply(rows int, a []float64, lda int, b []float64, ldb int) {
	for q0 := 0; q0 < m.ld; q0 += metricPanel {
		w := min(metricPanel, m.ld-q0)
		k := m.NAux
		if m.lower {
			k = min(m.NAux, q0+w)
		}
		gemm.CM(rows, w, k, a, lda, m.mT[q0:], m.ld, b[q0:], ldb, false)
	}
}
