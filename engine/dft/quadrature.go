package dft

import (
	"fmt"
	"math"
)

// gaussLegendre returns the n nodes and weights of Gauss–Legendre
// quadrature on [−1, 1] (exact for polynomials of degree 2n−1), found by
// Newton iteration on the Legendre recurrence.
func gaussLegendre(n int) (x, w []float64) {
	x = make([]float64, n)
	w = make([]float64, n)
	for i := 0; i < (n+1)/2; i++ {
		z := math.Cos(math.Pi * (float64(i) + 0.75) / (float64(n) + 0.5))
		var dp float64
		for it := 0; it < 100; it++ {
			p0, p1 := 1.0, z
			for k := 2; k <= n; k++ {
				p0, p1 = p1, ((2*float64(k)-1)*z*p1-(float64(k)-1)*p0)/float64(k)
			}
			if n == 1 {
				p0, p1 = 1, z
			}
			dp = float64(n) * (z*p1 - p0) / (z*z - 1)
			dz := p1 / dp
			z -= dz
			if math.Abs(dz) < 1e-16 {
				break
			}
		}
		// recompute derivative at the converged node
		p0, p1 := 1.0, z
		for k := 2; k <= n; k++ {
			p0, p1 = p1, ((2*float64(k)-1)*z*p1-(float64(k)-1)*p0)/float64(k)
		}
		dp = float64(n) * (z*p1 - p0) / (z*z - 1)
		x[i], x[n-1-i] = z, -z
		wt := 2 / ((1 - z*z) * dp * dp)
		w[i], w[n-1-i] = wt, wt
	}
	if n%2 == 1 {
		x[n/2] = 0
	}
	return x, w
}

// angularRule is a quadrature on the unit sphere with weights summing to 4π.
type angularRule struct {
	x, y, z, w []float64
}

// productSphere builds the product rule of exactness degree L (odd): a
// Gauss–Legendre rule with (L+1)/2 nodes in cos θ times the trapezoid rule
// with L+1 equally spaced nodes in φ. Every spherical harmonic of degree ≤ L
// is integrated exactly. Points: (L+1)²/2.
func productSphere(L int) (angularRule, error) {
	if L < 1 || L%2 == 0 {
		return angularRule{}, fmt.Errorf("angular order %d must be a positive odd number", L)
	}
	nt := (L + 1) / 2
	np := L + 1
	ct, wt := gaussLegendre(nt)
	var r angularRule
	for i := 0; i < nt; i++ {
		st := math.Sqrt(1 - ct[i]*ct[i])
		for j := 0; j < np; j++ {
			// half-step offset keeps neighbouring rings staggered in φ
			phi := 2 * math.Pi * (float64(j) + 0.5*float64(i%2)) / float64(np)
			r.x = append(r.x, st*math.Cos(phi))
			r.y = append(r.y, st*math.Sin(phi))
			r.z = append(r.z, ct[i])
			r.w = append(r.w, wt[i]*2*math.Pi/float64(np))
		}
	}
	return r, nil
}

// radialRule is a quadrature for ∫_0^∞ f(r) r² dr: nodes r and weights w
// that already include r².
type radialRule struct {
	r, w []float64
}

// treutlerM4 is the M4 mapping of O. Treutler, R. Ahlrichs, J. Chem. Phys.
// 102, 346 (1995), eq. 19 with α = 0.6:
// r = (ξ/ln 2)(1+x)^0.6 ln(2/(1−x)), applied to Gauss–Chebyshev
// quadrature of the second kind on x ∈ (−1, 1) with n nodes.
func treutlerM4(n int, xi float64) radialRule {
	var q radialRule
	for i := 1; i <= n; i++ {
		th := float64(i) * math.Pi / float64(n+1)
		x := math.Cos(th)
		wx := math.Pi / float64(n+1) * math.Sin(th) // ∫ f dx weight
		a := xi / math.Ln2
		l := math.Log(2 / (1 - x))
		r := a * math.Pow(1+x, 0.6) * l
		dr := a * (0.6*math.Pow(1+x, -0.4)*l + math.Pow(1+x, 0.6)/(1-x))
		q.r = append(q.r, r)
		q.w = append(q.w, wx*dr*r*r)
	}
	return q
}

// beckeRadial is the radial rule of A. D. Becke, J. Chem. Phys. 88, 2547
// (1988): r = rm (1+x)/(1−x) with Gauss–Chebyshev quadrature of the second
// kind, rm = half the Bragg–Slater radius (the atom's own radius for H).
func beckeRadial(n int, rm float64) radialRule {
	var q radialRule
	for i := 1; i <= n; i++ {
		th := float64(i) * math.Pi / float64(n+1)
		x := math.Cos(th)
		wx := math.Pi / float64(n+1) * math.Sin(th)
		r := rm * (1 + x) / (1 - x)
		dr := 2 * rm / ((1 - x) * (1 - x))
		q.r = append(q.r, r)
		q.w = append(q.w, wx*dr*r*r)
	}
	return q
}

// treutlerXi are the ξ scaling factors of Treutler and Ahlrichs 1995,
// Table I, for H–Kr (from memory of the published table).
var treutlerXi = [...]float64{0,
	0.8, 0.9, // H He
	1.8, 1.4, 1.3, 1.1, 0.9, 0.9, 0.9, 0.9, // Li–Ne
	1.4, 1.3, 1.3, 1.2, 1.1, 1.0, 1.0, 1.0, // Na–Ar
	1.5, 1.4, 1.3, 1.2, 1.2, 1.2, 1.2, 1.2, 1.2, 1.1, 1.1, 1.1, // K–Zn
	1.1, 1.0, 0.9, 0.9, 0.9, 0.9, // Ga–Kr
}

// braggRadiusAngstrom are the Bragg–Slater atomic radii of J. C. Slater,
// J. Chem. Phys. 41, 3199 (1964), in ångström (from memory), with H set to
// 0.35 Å as Becke 1988 does; noble gases, absent from Slater's table, take
// the radius of the preceding halogen (our choice).
var braggRadiusAngstrom = [...]float64{0,
	0.35, 0.35, // H He
	1.45, 1.05, 0.85, 0.70, 0.65, 0.60, 0.50, 0.50, // Li–Ne
	1.80, 1.50, 1.25, 1.10, 1.00, 1.00, 1.00, 1.00, // Na–Ar
	2.20, 1.80, 1.60, 1.40, 1.35, 1.40, 1.40, 1.40, 1.35, 1.35, 1.35, 1.35, // K–Zn
	1.30, 1.25, 1.15, 1.15, 1.15, 1.15, // Ga–Kr
}
