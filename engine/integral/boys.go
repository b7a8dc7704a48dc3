package integral

import (
	"math"
	"math/big"
	"sync"
)

// Boys function F_m(T) = ∫₀¹ t^{2m} exp(−T t²) dt.
//
// For T < boysTMax: an 8-term Taylor expansion about the nearest point of a
// grid of spacing boysStep gives F_mmax (the grid holds F_m for m up to
// MaxBoysOrder+boysTaylor), then the downward recursion
// F_m = (2T F_{m+1} + e^{−T})/(2m+1), which is stable, gives the lower
// orders. For T ≥ boysTMax: F_0 = ½√(π/T) (erf(√T) is 1 to double
// precision there) and the upward recursion
// F_{m+1} = ((2m+1) F_m − e^{−T})/(2T), which is stable there (T > m).
//
// The grid values are made once, on first use, from the series
// F_m(T) = e^{−T} Σ_k (2T)^k / ((2m+1)(2m+3)…(2m+2k+1)) summed in 128-bit
// floating point at the highest grid order, followed by the downward
// recursion in float64.

// MaxBoysOrder is the highest order m the Boys function supports.
const MaxBoysOrder = 32

const (
	boysStep   = 0.05
	boysTMax   = 40.0
	boysTaylor = 8 // terms k = 0..7
	boysRows   = MaxBoysOrder + boysTaylor
)

var (
	boysOnce  sync.Once
	boysTable []float64 // [point][m], m = 0..boysRows-1
	boysExp   []float64 // exp(−T_i)
)

// inv2m1[m] = 1/(2m+1)
var inv2m1 = func() [boysRows + 1]float64 {
	var v [boysRows + 1]float64
	for m := range v {
		v[m] = 1 / float64(2*m+1)
	}
	return v
}()

var invFact = func() [boysTaylor]float64 {
	var f [boysTaylor]float64
	f[0] = 1
	for k := 1; k < boysTaylor; k++ {
		f[k] = f[k-1] / float64(k)
	}
	return f
}()

func initBoys() {
	np := int(boysTMax/boysStep) + 2
	boysTable = make([]float64, np*boysRows)
	boysExp = make([]float64, np)
	mtop := boysRows - 1
	const prec = 128
	for i := 0; i < np; i++ {
		T := float64(i) * boysStep
		// Series sum S = Σ_k (2T)^k / Π_{j=0..k} (2m+2j+1).
		twoT := new(big.Float).SetPrec(prec).SetFloat64(2 * T)
		term := new(big.Float).SetPrec(prec).Quo(big.NewFloat(1).SetPrec(prec), new(big.Float).SetPrec(prec).SetInt64(int64(2*mtop+1)))
		sum := new(big.Float).SetPrec(prec).Set(term)
		eps := new(big.Float).SetPrec(prec)
		for k := 1; k < 100000; k++ {
			term.Mul(term, twoT)
			term.Quo(term, new(big.Float).SetPrec(prec).SetInt64(int64(2*mtop+2*k+1)))
			sum.Add(sum, term)
			eps.Mul(sum, big.NewFloat(1e-25))
			if term.Cmp(eps) < 0 {
				break
			}
		}
		s, _ := sum.Float64()
		ex := math.Exp(-T)
		boysExp[i] = ex
		row := boysTable[i*boysRows : (i+1)*boysRows]
		row[mtop] = ex * s
		for m := mtop - 1; m >= 0; m-- {
			row[m] = (2*T*row[m+1] + ex) / float64(2*m+1)
		}
	}
}

// Boys fills f[0..mmax] with F_m(T), m = 0..mmax ≤ MaxBoysOrder, T ≥ 0.
func Boys(mmax int, T float64, f []float64) {
	boysOnce.Do(initBoys)
	boys(mmax, T, f)
}

// boys is Boys without the initialisation check (callers ensure it).
func boys(mmax int, T float64, f []float64) {
	if T < boysTMax {
		i := int(T*(1/boysStep) + 0.5)
		d := float64(i)*boysStep - T
		row := boysTable[i*boysRows+mmax : i*boysRows+mmax+boysTaylor]
		// Horner in d: Σ_k F_{m+k}(T_i) d^k / k!
		v := row[boysTaylor-1] * invFact[boysTaylor-1]
		for k := boysTaylor - 2; k >= 0; k-- {
			v = v*d + row[k]*invFact[k]
		}
		f[mmax] = v
		if mmax > 0 {
			// e^{−T} = e^{−T_i} e^{d}, e^{d} by its Taylor series (|d| ≤ 0.025).
			ed := 1 + d*(1+d*(0.5+d*(1.0/6+d*(1.0/24+d*(1.0/120+d*(1.0/720+d*(1.0/5040)))))))
			ex := boysExp[i] * ed
			t2 := 2 * T
			for m := mmax - 1; m >= 0; m-- {
				f[m] = (t2*f[m+1] + ex) * inv2m1[m]
			}
		}
		return
	}
	// erf(√T) = 1 − O(e^{−T}/√T) rounds to 1 for T ≥ boysTMax = 40.
	f[0] = 0.5 * math.Sqrt(math.Pi/T)
	if mmax > 0 {
		ex := math.Exp(-T)
		inv2T := 0.5 / T
		for m := 0; m < mmax; m++ {
			f[m+1] = (float64(2*m+1)*f[m] - ex) * inv2T
		}
	}
}
