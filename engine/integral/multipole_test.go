package integral

import (
	"math"
	"testing"

	"moltrail/engine/basis"
)

// A normalised primitive about its own centre C (closed forms of Gaussian
// moments, common practice, from memory): s: ⟨x−C_x⟩ = 0, ⟨(x−C_x)²⟩ = 1/(4a);
// p_x: ⟨(x−C_x)²⟩ = 3/(4a), ⟨(y−C_y)²⟩ = 1/(4a); mixed moments vanish.
func TestMultipoleClosedForms(t *testing.T) {
	const a = 0.8
	C := [3]float64{0.3, -0.4, 1.1}
	mb := primitiveBasis(false, prim(0, a, C), prim(1, a, C))
	// coefficient making each single primitive normalised
	for k := range mb.Shells {
		l := mb.Shells[k].L
		mb.Shells[k].Coefs = []float64{math.Pow(2*a/math.Pi, 0.75) * math.Pow(4*a, float64(l)/2)}
	}
	O := [3]float64{1, 2, -3}
	dip, _ := Multipole(mb, O)
	dipC, secC := Multipole(mb, C)
	S := Overlap(mb)
	check := func(name string, got, want float64) {
		if math.Abs(got-want) > 1e-13 {
			t.Errorf("%s = %.15g, want %.15g", name, got, want)
		}
	}
	check("S(s)", S.At(0, 0), 1)
	check("S(px)", S.At(1, 1), 1)
	for d := 0; d < 3; d++ {
		check("<s|r−O|s>", dip[d].At(0, 0), C[d]-O[d])
		check("<s|r−C|s>", dipC[d].At(0, 0), 0)
	}
	check("<s|xx|s>", secC[0].At(0, 0), 1/(4*a))
	check("<px|xx|px>", secC[0].At(1, 1), 3/(4*a))
	check("<px|yy|px>", secC[1].At(1, 1), 1/(4*a))
	check("<px|xy|px>", secC[3].At(1, 1), 0)
	// ⟨s|x−C_x|p_x⟩ = 1/(2 sqrt a) for these normalised primitives.
	check("<s|x−C|px>", dipC[0].At(0, 1), 1/(2*math.Sqrt(a)))
}

// Moving the origin by Δ = O − O' changes the moments as
// d' = d + Δ S and q'_ij = q_ij + Δ_i d_j + Δ_j d_i + Δ_i Δ_j S.
func TestMultipoleOriginShift(t *testing.T) {
	mb, _ := buildBasis(t, "cc-pvtz", basis.Spherical, water()...)
	O := [3]float64{0.4, -0.2, 0.7}
	O2 := [3]float64{-1.3, 0.5, 0.1}
	d1, q1 := Multipole(mb, O)
	d2, q2 := Multipole(mb, O2)
	S := Overlap(mb)
	var D [3]float64
	for k := range D {
		D[k] = O[k] - O2[k]
	}
	n := mb.NBasis
	worst := 0.0
	for a := 0; a < n; a++ {
		for b := 0; b < n; b++ {
			for k := 0; k < 3; k++ {
				worst = math.Max(worst, math.Abs(d2[k].At(a, b)-(d1[k].At(a, b)+D[k]*S.At(a, b))))
			}
			for k, pr := range secondPairs {
				i, j := pr[0], pr[1]
				want := q1[k].At(a, b) + D[i]*d1[j].At(a, b) + D[j]*d1[i].At(a, b) + D[i]*D[j]*S.At(a, b)
				worst = math.Max(worst, math.Abs(q2[k].At(a, b)-want))
			}
		}
	}
	if worst > 1e-11 {
		t.Errorf("origin shift relation violated by %.3g", worst)
	}
	// ⟨μ|(x−O)²|μ⟩ > 0 for every function and direction.
	for a := 0; a < n; a++ {
		for k := 0; k < 3; k++ {
			if q1[k].At(a, a) <= 0 {
				t.Errorf("function %d: second moment %d on the diagonal is %g", a, k, q1[k].At(a, a))
			}
		}
	}
}
