package integral

import (
	"math"
	"math/big"
	"testing"
)

const refPrec = 256

func bigExp(x float64) *big.Float {
	// exp(x) = (exp(x/2^k))^(2^k) with the Taylor series for the small argument.
	k := 0
	y := x
	for math.Abs(y) > 1e-3 {
		y /= 2
		k++
	}
	by := new(big.Float).SetPrec(refPrec).SetFloat64(x)
	by.Quo(by, new(big.Float).SetPrec(refPrec).SetMantExp(big.NewFloat(1), k))
	sum := new(big.Float).SetPrec(refPrec).SetInt64(1)
	term := new(big.Float).SetPrec(refPrec).SetInt64(1)
	for n := 1; n < 60; n++ {
		term.Mul(term, by)
		term.Quo(term, new(big.Float).SetPrec(refPrec).SetInt64(int64(n)))
		sum.Add(sum, term)
	}
	for ; k > 0; k-- {
		sum.Mul(sum, sum)
	}
	return sum
}

// refBoys is F_m(T) from the series e^{−T} Σ_k (2T)^k/((2m+1)(2m+3)…(2m+2k+1))
// (a standard identity for the Boys function, e.g. Helgaker, Jørgensen and
// Olsen, Molecular Electronic-Structure Theory, eq. 9.8.12; from memory),
// everything, including e^{−T}, in 256-bit floating point.
func refBoys(m int, T float64) float64 {
	twoT := new(big.Float).SetPrec(refPrec).SetFloat64(2 * T)
	term := new(big.Float).SetPrec(refPrec).Quo(big.NewFloat(1).SetPrec(refPrec), new(big.Float).SetPrec(refPrec).SetInt64(int64(2*m+1)))
	sum := new(big.Float).SetPrec(refPrec).Set(term)
	for k := 1; k < 1000000; k++ {
		term.Mul(term, twoT)
		term.Quo(term, new(big.Float).SetPrec(refPrec).SetInt64(int64(2*m+2*k+1)))
		sum.Add(sum, term)
		if term.MantExp(nil)-sum.MantExp(nil) < -120 {
			break
		}
	}
	sum.Quo(sum, bigExp(T))
	v, _ := sum.Float64()
	return v
}

// asymBoys is the large-T form (2m−1)!!/2^{m+1} √(π/T^{2m+1}), exact up to a
// relative e^{−T}T^{m−1/2}/Γ(m+1/2), negligible for the T where it is used.
func asymBoys(m int, T float64) float64 {
	v := 0.5 * math.Sqrt(math.Pi/T)
	for k := 1; k <= m; k++ {
		v *= float64(2*k-1) / (2 * T)
	}
	return v
}

func TestBoys(t *testing.T) {
	Ts := []float64{0, 1e-12, 1e-6, 1e-3, 0.025, 0.0375, 0.3, 1, 2.345678, 5, 7.77, 9.975, 12.5, 17.2, 21.01,
		25, 29.999, 33.33, 37.5, 39.99, 39.999999, 40, 40.000001, 41.3, 45, 52.7, 60, 80, 120, 200}
	f := make([]float64, MaxBoysOrder+1)
	worst := 0.0
	for _, T := range Ts {
		Boys(MaxBoysOrder, T, f)
		refs := make([]float64, MaxBoysOrder+1)
		for m := range refs {
			refs[m] = refBoys(m, T)
		}
		for m := 0; m <= MaxBoysOrder; m++ {
			ref := refs[m]
			rel := math.Abs(f[m]-ref) / ref
			worst = math.Max(worst, rel)
			if rel > 1e-14 {
				t.Errorf("F_%d(%g) = %.17g, reference %.17g, relative error %.2g", m, T, f[m], ref, rel)
			}
		}
		// A lower mmax must give the same values for the orders it returns.
		for _, mm := range []int{0, 4, 16} {
			g := make([]float64, mm+1)
			Boys(mm, T, g)
			for m := 0; m <= mm; m++ {
				if rel := math.Abs(g[m]-refs[m]) / refs[m]; rel > 1e-14 {
					t.Errorf("mmax=%d: F_%d(%g) relative error %.2g", mm, m, T, rel)
				}
			}
		}
	}
	for _, T := range []float64{500, 1e3, 1e5, 1e9} {
		Boys(MaxBoysOrder, T, f)
		for m := 0; m <= MaxBoysOrder; m++ {
			ref := asymBoys(m, T)
			if rel := math.Abs(f[m]-ref) / ref; rel > 1e-14 {
				t.Errorf("F_%d(%g) = %.17g, asymptotic %.17g, relative error %.2g", m, T, f[m], ref, rel)
			}
		}
	}
	t.Logf("worst relative error over the series points: %.2g", worst)
}

func BenchmarkBoys(b *testing.B) {
	f := make([]float64, 17)
	Boys(16, 1, f)
	for i := 0; i < b.N; i++ {
		boys(8, float64(i%1000)*0.05, f)
	}
}
