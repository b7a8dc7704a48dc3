package basis

import (
	"math"
	"testing"
)

// cartOverlap is ⟨φ_a|φ_b⟩ of two normalised Cartesian components of the
// same l on the same centre with the same radial factor: the angular
// integral of x^(ax+bx) y^(ay+by) z^(az+bz) relative to that of x^2l.
func cartOverlap(a, b [3]int) float64 {
	l := a[0] + a[1] + a[2]
	v := CartNorm(a[0], a[1], a[2]) * CartNorm(b[0], b[1], b[2]) / doubleFactorial(2*l-1)
	for d := 0; d < 3; d++ {
		s := a[d] + b[d]
		if s%2 != 0 {
			return 0
		}
		v *= doubleFactorial(s - 1)
	}
	return v
}

func TestCartToSphericalOrthonormal(t *testing.T) {
	for _, l := range []int{0, 1, 2, 3, 4, 5} {
		c := CartToSpherical(l)
		comps := CartComponents(l)
		nc := len(comps)
		wantRows := 2*l + 1
		if l <= 1 {
			wantRows = nc
		}
		if len(c) != wantRows {
			t.Fatalf("l=%d: %d rows, want %d", l, len(c), wantRows)
		}
		s := make([][]float64, nc)
		for i := range s {
			s[i] = make([]float64, nc)
			for j := range s[i] {
				s[i][j] = cartOverlap(comps[i], comps[j])
			}
		}
		for m1 := range c {
			for m2 := range c {
				v := 0.0
				for i := 0; i < nc; i++ {
					for j := 0; j < nc; j++ {
						v += c[m1][i] * s[i][j] * c[m2][j]
					}
				}
				want := 0.0
				if m1 == m2 {
					want = 1
				}
				if math.Abs(v-want) > 1e-12 {
					t.Errorf("l=%d: <S_%d|S_%d> = %.15g, want %g", l, m1-l, m2-l, v, want)
				}
			}
		}
	}
}

// Each row, written as a polynomial in the unnormalised monomials, must be
// harmonic (zero Laplacian): that is what distinguishes solid harmonics from
// any other orthonormal combination.
func TestCartToSphericalHarmonic(t *testing.T) {
	for _, l := range []int{2, 3, 4} {
		c := CartToSpherical(l)
		comps := CartComponents(l)
		for m := range c {
			lap := map[[3]int]float64{}
			for k, p := range comps {
				coef := c[m][k] * CartNorm(p[0], p[1], p[2])
				for d := 0; d < 3; d++ {
					if p[d] >= 2 {
						q := p
						q[d] -= 2
						lap[q] += coef * float64(p[d]*(p[d]-1))
					}
				}
			}
			for q, v := range lap {
				if math.Abs(v) > 1e-12 {
					t.Errorf("l=%d m=%d: Laplacian coefficient of %v is %g", l, m-l, q, v)
				}
			}
		}
	}
}

// Known d functions (common practice, from memory): on monomials
// √3·xy, √3·yz, z²−(x²+y²)/2, √3·xz, (√3/2)(x²−y²). On normalised
// components (xx, xy, xz, yy, yz, zz; CartNorm √3 for the mixed ones, 1 for
// xx, yy, zz) that is the table below.
func TestCartToSphericalD(t *testing.T) {
	c := CartToSpherical(2)
	r3 := math.Sqrt(3)
	want := [][]float64{
		{0, 1, 0, 0, 0, 0},
		{0, 0, 0, 0, 1, 0},
		{-0.5, 0, 0, -0.5, 0, 1},
		{0, 0, 1, 0, 0, 0},
		{r3 / 2, 0, 0, -r3 / 2, 0, 0},
	}
	for i := range want {
		for j := range want[i] {
			if math.Abs(c[i][j]-want[i][j]) > 1e-14 {
				t.Errorf("d row %d col %d = %g, want %g", i, j, c[i][j], want[i][j])
			}
		}
	}
}
