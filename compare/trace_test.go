package compare

import (
	"strings"
	"testing"
)

// TestFigures: the numbers of a table are found by the interval of a
// printed figure, in the row's unit or converted, relative deviations in
// per cent, a sign mismatch marked, statistics with the records behind
// them. (The numbers are made up; no source.)
func TestFigures(t *testing.T) {
	rel := -0.314
	lo, hi := -0.61, -0.52
	tab := &Table{
		Deviations: []Deviation{
			{EntryID: "hf.r", Level: "HF/STO-3G", RecordID: "rec1", Molecule: "hydrogen fluoride", Quantity: "r(H1–F2)", Kind: KindBondLength, Unit: "pm", Reference: 91.68, Uncertainty: 0.01, Computed: 95.55, Signed: 3.87},
			{EntryID: "hf.mu", Level: "HF/STO-3G", RecordID: "rec1", Molecule: "hydrogen fluoride", Quantity: "μ", Kind: KindDipoleAxis, Unit: "D", Reference: 1.8262, Computed: 1.2520, Signed: -0.5742, Relative: &rel},
		},
		Stats: []Stats{{Level: "HF/STO-3G", Kind: KindDipoleAxis, Unit: "D", N: 1, MSE: -0.5742, MAE: 0.5742, RMS: 0.5742, MaxAbs: 0.5742, MaxSigned: -0.5742, MaxAt: "hydrogen fluoride μ", CILow: &lo, CIHigh: &hi}},
	}
	cases := []struct {
		name      string
		low, high float64
		unit      string
		want      []string // part/what/unit of each match, in order
	}{
		{"deviation in pm", 3.865, 3.875, "", []string{"deviation/signed deviation/pm"}},
		{"deviation in Å", 0.03865, 0.03875, "angstrom", []string{"deviation/signed deviation/angstrom"}},
		{"computed value", 95.545, 95.555, "pm", []string{"deviation/computed/pm"}},
		{"per cent", -31.45, -31.35, "%", []string{"deviation/relative deviation/%"}},
		{"statistics and the deviation", -0.5745, -0.5735, "D", []string{"deviation/signed deviation/D", "statistics/MSE/D", "statistics/MAE/D", "statistics/RMS/D", "statistics/largest |error|/D", "statistics/largest signed error/D"}},
		{"magnitude only", 0.5735, 0.5745, "", []string{"deviation/signed deviation/D", "statistics/MSE/D", "statistics/MAE/D", "statistics/RMS/D", "statistics/largest |error|/D", "statistics/largest signed error/D"}},
		{"confidence bound", -0.615, -0.605, "", []string{"statistics/MSE CI low/D"}},
		{"other dimension", 3.865, 3.875, "D", nil},
	}
	for _, c := range cases {
		figs, err := Figures(tab, c.low, c.high, c.unit)
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		var got []string
		for _, f := range figs {
			got = append(got, f.Part+"/"+f.What+"/"+f.Unit)
			if len(f.Records) != 1 || f.Records[0] != "rec1" {
				t.Errorf("%s: %s rests on %v, want [rec1]", c.name, f.What, f.Records)
			}
			positive := f.What == "MAE" || f.What == "RMS" || f.What == "largest |error|"
			if (c.name == "magnitude only" && f.MagnitudeOnly == positive) || (c.name == "statistics and the deviation" && f.MagnitudeOnly != positive) {
				t.Errorf("%s: %s magnitude-only %v", c.name, f.What, f.MagnitudeOnly)
			}
		}
		if strings.Join(got, ", ") != strings.Join(c.want, ", ") {
			t.Errorf("%s: found %q, want %q", c.name, got, c.want)
		}
	}
	if _, err := Figures(tab, 0, 1, "furlong"); err == nil {
		t.Error("an unknown unit should be an error")
	}
}
