package mp2

import (
	"math"
	"testing"

	"moltrail/engine/scf"
)

// TestWaterSTO3G: E(RHF) −74.942079928192 and MP2 correlation
// −0.049149636120 Eh (published programming-project worked example, from memory;
// psi4 1.3.2 agrees, testdata/psi4/mp2.json case h2o_rmp2_sto3g).
func TestWaterSTO3G(t *testing.T) {
	m, mb := waterSTO3G(t)
	for _, ref := range []string{"rhf", "uhf"} {
		sr := runSCF(t, m, mb, scf.Options{Reference: ref})
		r, err := Run(m, mb, sr, Options{})
		if err != nil {
			t.Fatal(err)
		}
		if math.Abs(sr.Energy - -74.942079928192) > 1e-8 {
			t.Errorf("%s: SCF %.12f", ref, sr.Energy)
		}
		if math.Abs(r.CorrelationHartree - -0.049149636120) > 1e-9 {
			t.Errorf("%s: MP2 correlation %.12f, want -0.049149636120", ref, r.CorrelationHartree)
		}
		t.Logf("%s: ss %.12f os %.12f", ref, r.SameSpinHartree, r.OppositeSpinHartree)
	}
}
