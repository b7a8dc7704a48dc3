package mp2

import (
	"encoding/json"
	"math"
	"os"
	"testing"

	"moltrail/engine/scf"
)

// benzene returns the psi4 benchmark geometry (testdata/psi4/mp2.json
// timings: RMP2/cc-pVDZ, psi4 1.3.2 18.9 s wall on one core of this machine type).
func benzeneCase(b testing.TB) psi4Case {
	raw, err := os.ReadFile("../../testdata/psi4/scf_energies.json")
	if err != nil {
		b.Fatal(err)
	}
	var f struct {
		Cases []psi4Case `json:"cases"`
	}
	if err := json.Unmarshal(raw, &f); err != nil {
		b.Fatal(err)
	}
	for _, c := range f.Cases {
		if c.Name == "benzene_rhf_ccpvdz" {
			return c
		}
	}
	b.Fatal("benzene case missing")
	return psi4Case{}
}

// BenchmarkBenzeneMP2 is RHF + RMP2/cc-pVDZ of benzene, all electrons
// (psi4 1.3.2: −231.52020551508062 Eh, testdata/psi4/mp2.json timings).
func BenchmarkBenzeneMP2(b *testing.B) { benchBenzene(b, false) }

// BenchmarkBenzeneMP2Relaxed adds the relaxed density (Z-vector).
func BenchmarkBenzeneMP2Relaxed(b *testing.B) { benchBenzene(b, true) }

func benchBenzene(b *testing.B, relaxed bool) {
	c := benzeneCase(b)
	c.Puream = true
	m, mb := c.system(b)
	for it := 0; it < b.N; it++ {
		sr, err := scf.Run(m, mb, scf.Options{Reference: "rhf"})
		if err != nil || !sr.Converged {
			b.Fatalf("scf: %v", err)
		}
		r, err := Run(m, mb, sr, Options{Relaxed: relaxed})
		if err != nil {
			b.Fatal(err)
		}
		if e := sr.Energy + r.CorrelationHartree; math.Abs(e - -231.52020551508062) > 1e-7 {
			b.Errorf("benzene MP2 %.10f, psi4 -231.5202055151", e)
		}
	}
}
