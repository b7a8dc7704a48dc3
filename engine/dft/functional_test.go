package dft

import (
	"math"
	"testing"
)

var allComponents = []string{"slater", "vwn5", "vwn-rpa", "b88", "lyp", "pbe-x", "pbe-c"}

// polarised test points (ρα, ρβ, σαα, σαβ, σββ), away from thresholds
var polPoints = [][5]float64{
	{0.1, 0.05, 0.02, 0.005, 0.01},
	{1.3, 0.9, 3.1, -0.4, 1.2},
	{0.003, 0.004, 1e-5, 2e-6, 3e-5},
	{12, 12, 400, 390, 400},
}

// The AD derivatives against central differences of the energy density.
func TestKernelDerivativesFiniteDifference(t *testing.T) {
	for _, name := range allComponents {
		f, _ := NewFunctional(name)
		for _, pt := range polPoints {
			e0 := make([]float64, 1)
			vr, vs := make([]float64, 2), make([]float64, 3)
			f.EvalPolarized(pt[:2], pt[2:], e0, vr, vs)
			d := append(vr, vs...)
			nv := 5
			if !f.IsGGA() {
				nv = 2
			}
			for k := 0; k < nv; k++ {
				h := 1e-5 * math.Abs(pt[k])
				up, dn := pt, pt
				up[k] += h
				dn[k] -= h
				eu, ed := make([]float64, 1), make([]float64, 1)
				f.EvalPolarized(up[:2], up[2:], eu, make([]float64, 2), make([]float64, 3))
				f.EvalPolarized(dn[:2], dn[2:], ed, make([]float64, 2), make([]float64, 3))
				fd := (eu[0] - ed[0]) / (2 * h)
				if math.Abs(fd-d[k]) > 1e-7*math.Max(math.Abs(d[k]), math.Abs(e0[0]/pt[0])) {
					t.Errorf("%s at %v: ∂e/∂x%d = %.12g, difference %.12g", name, pt, k, d[k], fd)
				}
			}
		}
	}
}

// Exchange obeys Ex[ρα,ρβ] = ½(Ex[2ρα] + Ex[2ρβ]) (exact spin scaling,
// G. L. Oliver, J. P. Perdew, Phys. Rev. A 20, 397 (1979)); and every
// functional's unpolarised form equals the polarised one at ρα = ρβ.
func TestSpinScalingAndUnpolarisedForm(t *testing.T) {
	for _, name := range allComponents {
		f, _ := NewFunctional(name)
		for _, pt := range polPoints {
			e := make([]float64, 1)
			f.EvalPolarized(pt[:2], pt[2:], e, make([]float64, 2), make([]float64, 3))
			if name == "slater" || name == "b88" || name == "pbe-x" {
				ea, eb := make([]float64, 1), make([]float64, 1)
				f.EvalUnpolarized([]float64{2 * pt[0]}, []float64{4 * pt[2]}, ea, make([]float64, 1), make([]float64, 1))
				f.EvalUnpolarized([]float64{2 * pt[1]}, []float64{4 * pt[4]}, eb, make([]float64, 1), make([]float64, 1))
				if want := 0.5 * (ea[0] + eb[0]); math.Abs(e[0]-want) > 1e-13*math.Abs(want) {
					t.Errorf("%s at %v: polarised %.15g, spin scaling %.15g", name, pt, e[0], want)
				}
			}
			// symmetric point: ρα = ρβ = r, all σ = s
			r, s := pt[0], pt[2]
			ep, vr, vs := make([]float64, 1), make([]float64, 2), make([]float64, 3)
			f.EvalPolarized([]float64{r, r}, []float64{s, s, s}, ep, vr, vs)
			eu, vru, vsu := make([]float64, 1), make([]float64, 1), make([]float64, 1)
			f.EvalUnpolarized([]float64{2 * r}, []float64{4 * s}, eu, vru, vsu)
			if math.Abs(eu[0]-ep[0]) > 1e-14*math.Abs(ep[0]) || math.Abs(vru[0]-vr[0]) > 1e-13*math.Abs(vr[0]) {
				t.Errorf("%s: unpolarised (%g, %g) vs polarised (%g, %g)", name, eu[0], vru[0], ep[0], vr[0])
			}
			if f.IsGGA() {
				if want := (vs[0] + vs[1] + vs[2]) / 4; math.Abs(vsu[0]-want) > 1e-13*math.Abs(want) {
					t.Errorf("%s: vsigma unpolarised %g, from polarised %g", name, vsu[0], want)
				}
			}
		}
	}
}

// Hybrid compositions: libxc 5.2.3's definitions, testdata/libxc/kernels.json.
func TestHybridCompositionsAgainstLibxc(t *testing.T) {
	tab := readLibxc(t)
	ours := map[string]string{"hyb_gga_xc_b3lyp": "b3lyp(vwn-rpa)", "hyb_gga_xc_b3lyp5": "b3lyp5(vwn5)", "hyb_gga_xc_pbeh": "pbe0"}
	for _, h := range tab.Hybrids {
		def, ok := ours[h.Key]
		if !ok {
			t.Errorf("libxc hybrid %s has no counterpart", h.Key)
			continue
		}
		f, err := NewFunctional(def)
		if err != nil {
			t.Fatal(err)
		}
		if math.Abs(f.ExactExchange()-h.HF) > 1e-15 {
			t.Errorf("%s: exact exchange %g, libxc %g", def, f.ExactExchange(), h.HF)
		}
		if len(f.terms) != len(h.Components) {
			t.Fatalf("%s: %d terms, libxc %d", def, len(f.terms), len(h.Components))
		}
		for i, c := range h.Components {
			if libxcComponent[c.Name] != f.terms[i].c.name || math.Abs(c.Coef-f.terms[i].weight) > 1e-14 {
				t.Errorf("%s term %d: %g %s, libxc %g %s", def, i, f.terms[i].weight, f.terms[i].c.name, c.Coef, c.Name)
			}
		}
	}
	for _, def := range []string{"slater+vwn5", "b88+lyp", "pbe-x+pbe-c"} {
		if _, err := NewFunctional(def); err != nil {
			t.Errorf("%s: %v", def, err)
		}
	}
	if _, err := NewFunctional("slater+nope"); err == nil {
		t.Error("unknown component accepted")
	}
}
