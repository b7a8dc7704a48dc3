package basis

import "math"

// CartToSpherical returns the (2l+1)×NCart(l) matrix C that takes the
// normalised Cartesian components of angular momentum l (in CartComponents
// order, each already scaled by CartNorm) to the normalised real solid
// harmonics m = −l, …, +l:
//
//	S_lm = Σ_k C[m+l][k] φ_k.
//
// Rows with m > 0 are the cos(mφ)-like harmonics, m < 0 the sin(|m|φ)-like
// ones, m = 0 is the zonal one; e.g. for l = 2: √3·xy, √3·yz,
// z² − (x²+y²)/2, √3·xz, (√3/2)(x²−y²) on the common radial factor.
//
// The coefficients come from the closed formula for real solid harmonics
// (Schlegel and Frisch, Int. J. Quantum Chem. 54, 83 (1995); in the form of
// Helgaker, Jørgensen and Olsen, Molecular Electronic-Structure Theory,
// eq. 6.4.47–6.4.50):
//
//	S_lm = N_lm Σ_{t=0}^{⌊(l−|m|)/2⌋} Σ_{u=0}^{t} Σ_v C_tuv x^{2t+|m|−2(u+v)} y^{2(u+v)} z^{l−2t−|m|}
//	C_tuv = (−1)^{t+v−v_m} (1/4)^t (l t)(l−t |m|+t)(t u)(|m| 2v)
//	N_lm = 1/(2^|m| l!) · sqrt(2 (l+|m|)! (l−|m|)! / 2^δ_m0)
//
// with v = v_m, v_m+1, …, ≤ |m|/2 and v_m = 0 (m ≥ 0) or 1/2 (m < 0). With
// this N_lm, S_lm times the radial factor that normalises x^l is itself
// normalised, so each monomial coefficient is divided by CartNorm to act on
// normalised components.
//
// s and p shells are the same in both representations and keep the
// Cartesian order x, y, z, so for l ≤ 1 the identity is returned. The
// formula is general; moltrail uses and tests it for l ≤ 4 (g functions).
func CartToSpherical(l int) [][]float64 {
	comps := CartComponents(l)
	nc := len(comps)
	if l <= 1 {
		out := make([][]float64, nc)
		for k := range out {
			out[k] = make([]float64, nc)
			out[k][k] = 1
		}
		return out
	}
	col := make(map[[3]int]int, nc)
	for k, c := range comps {
		col[c] = k
	}
	out := make([][]float64, 2*l+1)
	for m := -l; m <= l; m++ {
		row := make([]float64, nc)
		am := absInt(m)
		norm := 1 / (math.Pow(2, float64(am)) * factorial(l)) *
			math.Sqrt(2*factorial(l+am)*factorial(l-am))
		if m == 0 {
			norm /= math.Sqrt2
		}
		// vv = 2v runs over even (m ≥ 0) or odd (m < 0) integers up to |m|.
		vv0 := 0
		if m < 0 {
			vv0 = 1
		}
		for t := 0; t <= (l-am)/2; t++ {
			for u := 0; u <= t; u++ {
				for vv := vv0; vv <= am; vv += 2 {
					sign := 1.0
					if (t+(vv-vv0)/2)%2 != 0 {
						sign = -1
					}
					c := sign * math.Pow(0.25, float64(t)) * binomial(l, t) * binomial(l-t, am+t) *
						binomial(t, u) * binomial(am, vv)
					lx := 2*t + am - 2*u - vv
					ly := 2*u + vv
					lz := l - 2*t - am
					row[col[[3]int{lx, ly, lz}]] += norm * c / CartNorm(lx, ly, lz)
				}
			}
		}
		out[m+l] = row
	}
	return out
}

func absInt(i int) int {
	if i < 0 {
		return -i
	}
	return i
}

func factorial(n int) float64 {
	r := 1.0
	for k := 2; k <= n; k++ {
		r *= float64(k)
	}
	return r
}

func binomial(n, k int) float64 {
	if k < 0 || k > n {
		return 0
	}
	return factorial(n) / (factorial(k) * factorial(n-k))
}
