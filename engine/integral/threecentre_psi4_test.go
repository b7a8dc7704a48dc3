package integral

import (
	"encoding/json"
	"math"
	"os"
	"testing"

	"moltrail/engine/basis"
	"moltrail/engine/molecule"
)

// Three- and two-centre integrals of water (cc-pVDZ with cc-pVDZ-JKFIT,
// spherical) against psi4 1.3.2's MintsHelper (testdata/psi4/df_energies.json,
// generator testdata/psi4/gen_df.py): selected values, the trace of the
// metric and sums over the whole three-index tensor, to 1e-11.
func TestThreeCentreAgainstPsi4(t *testing.T) {
	b, err := os.ReadFile("../../testdata/psi4/df_energies.json")
	if err != nil {
		t.Fatal(err)
	}
	var f struct {
		W struct {
			Geometry [][]interface{} `json:"geometry_bohr"`
			NBF      int             `json:"n_basis_functions"`
			NAux     int             `json:"n_aux_functions"`
			Shells   []psi4Shell     `json:"shells"`
			Aux      []psi4Shell     `json:"aux_shells"`
			Three    []struct {
				P, M, N int
				Value   float64
			} `json:"three_centre"`
			Two []struct {
				P, Q  int
				Value float64
			} `json:"two_centre"`
			Trace  float64 `json:"metric_trace"`
			SumAbs float64 `json:"three_centre_sum_abs"`
			SumSq  float64 `json:"three_centre_sum_squares"`
		} `json:"water_integrals"`
	}
	if err := json.Unmarshal(b, &f); err != nil {
		t.Fatal(err)
	}
	w := f.W
	var atoms []molecule.Atom
	for _, a := range w.Geometry {
		atoms = append(atoms, molecule.MustAtom(a[0].(string), a[1].(float64), a[2].(float64), a[3].(float64)))
	}
	_, tc := fitSetup(t, "cc-pvdz", "cc-pvdz-jkfit", basis.Spherical, atoms...)
	if tc.orb.mb.NBasis != w.NBF || tc.NAux() != w.NAux {
		t.Fatalf("%d/%d functions, psi4 %d/%d", tc.orb.mb.NBasis, tc.NAux(), w.NBF, w.NAux)
	}
	oi, osc := psi4Map(t, &psi4Case{Name: "water orbital", NBF: w.NBF, Pure: true, Shells: w.Shells}, tc.orb.mb)
	ai, as := psi4Map(t, &psi4Case{Name: "water auxiliary", NBF: w.NAux, Pure: true, Shells: w.Aux}, tc.aux)
	A := fullThreeCentre(tc)
	n := w.NBF
	for _, v := range w.Three {
		got := A[(ai[v.P]*n+oi[v.M])*n+oi[v.N]] / (as[v.P] * osc[v.M] * osc[v.N])
		if math.Abs(got-v.Value) > 1e-11 {
			t.Errorf("(%d %d|%d) psi4 order: %.14f, psi4 %.14f", v.M, v.N, v.P, got, v.Value)
		}
	}
	for _, v := range w.Two {
		got := tc.Metric().At(ai[v.P], ai[v.Q]) / (as[v.P] * as[v.Q])
		if math.Abs(got-v.Value) > 1e-11 {
			t.Errorf("(%d|%d) psi4 order: %.14f, psi4 %.14f", v.P, v.Q, got, v.Value)
		}
	}
	tr, sa, sq := 0.0, 0.0, 0.0
	for p := 0; p < w.NAux; p++ {
		tr += tc.Metric().At(p, p)
	}
	for _, x := range A {
		sa += math.Abs(x)
		sq += x * x
	}
	if math.Abs(tr-w.Trace) > 1e-10*w.Trace || math.Abs(sa-w.SumAbs) > 1e-10*w.SumAbs || math.Abs(sq-w.SumSq) > 1e-10*w.SumSq {
		t.Errorf("metric trace %.12f (psi4 %.12f), Σ|(μν|P)| %.12f (%.12f), Σ(μν|P)² %.12f (%.12f)", tr, w.Trace, sa, w.SumAbs, sq, w.SumSq)
	}
}
