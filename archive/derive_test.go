package archive

import (
	"math"
	"strings"
	"testing"
	"time"

	"moltrail/engine"
)

// Formulas against values worked by hand:
//
//	X⁻³, X = 3, Y = 4, E_corr = −0.30, −0.32:
//	  (64·(−0.32) − 27·(−0.30)) / (64 − 27) = (−20.48 + 8.10)/37 = −12.38/37 = −0.334594594594…
//	exponential, E = −76.00, −76.05, −76.06:
//	  ((−76.00)(−76.06) − 76.05²) / (−76.00 + 152.10 − 76.06) = (5780.56 − 5783.6025)/0.04 = −76.0625
//	Karton–Martin, X = 3, Y = 4, E_SCF = −76.0570, −76.0650:
//	  f(3) = 4 e^{−9√3} = 6.7932722e−7, f(4) = 5 e^{−18} = 7.6149899e−8,
//	  E(∞) = (−76.0650 f(3) + 76.0570 f(4)) / (f(3) − f(4)) = −76.0650 − 0.0080 f(4)/(f(3) − f(4))
//	       = −76.0650 − 0.0080 · 0.1262478 = −76.066009983
func TestCBSFormulas(t *testing.T) {
	if got := CorrelationX3(3, -0.30, 4, -0.32, 3); math.Abs(got-(-12.38/37)) > 1e-15 {
		t.Errorf("X⁻³: %.15f", got)
	}
	got, err := SCFExponential3(-76.00, -76.05, -76.06)
	if err != nil || math.Abs(got-(-76.0625)) > 1e-9 {
		t.Errorf("exponential: %.12f %v", got, err)
	}
	if _, err := SCFExponential3(-76.00, -76.05, -76.04); err == nil {
		t.Error("non-monotonic SCF energies accepted")
	}
	if got := SCFKartonMartin(3, -76.0570, 4, -76.0650); math.Abs(got-(-76.066009983)) > 2e-9 {
		t.Errorf("Karton–Martin: %.12f", got)
	}
	for _, c := range []struct {
		name string
		x    int
		fam  string
	}{{"cc-pVDZ", 2, "cc-pvxz"}, {"aug-cc-pVTZ", 3, "aug-cc-pvxz"}, {"cc-pVQZ", 4, "cc-pvxz"}, {"cc-pCV5Z", 5, "cc-pcvxz"}} {
		x, fam, err := CardinalOf(c.name)
		if err != nil || x != c.x || fam != c.fam {
			t.Errorf("%s: %d %q %v", c.name, x, fam, err)
		}
	}
	if _, _, err := CardinalOf("6-31G*"); err == nil {
		t.Error("6-31G* has a cardinal number")
	}
}

// ccRecord is a sealed water record at a correlated level with the given
// SCF and correlation energies (fixture numbers, not computed claims).
func ccRecord(t *testing.T, method, basisName string, scf, corr float64, shift float64) *Record {
	t.Helper()
	job := baseJob(t, method, basisName)
	job.Molecule.Atoms[1].Bohr[2] += shift
	c := corr
	rec := &Record{Input: *job, Status: engine.StatusConverged, Code: CurrentCode(), Tags: map[string]string{},
		Run: Run{StartUTC: time.Unix(0, 0).UTC().Format(time.RFC3339Nano), EndUTC: time.Unix(1, 0).UTC().Format(time.RFC3339Nano)},
		Results: engine.Result{EnergyHartree: scf + corr, SCFEnergyHartree: scf, CorrelationEnergyHartree: &c, Status: engine.StatusConverged,
			GeometryAngstrom: []engine.GeomAtom{{Symbol: "H"}, {Symbol: "H", XYZ: [3]float64{0, 0, 0.74 + shift}}}}}
	if err := rec.Seal(); err != nil {
		t.Fatal(err)
	}
	return rec
}

func TestDeriveCBSRecord(t *testing.T) {
	tz := ccRecord(t, "mp2", "cc-pVTZ", -76.0570, -0.30, 0)
	qz := ccRecord(t, "mp2", "cc-pVQZ", -76.0650, -0.32, 0)
	d, err := Derive(RecipeCBS, []*Record{qz, tz}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if err := d.Check(); err != nil {
		t.Fatalf("derived record does not verify: %v", err)
	}
	wantSCF, wantCorr := -76.066009983, -12.38/37
	if math.Abs(d.Results.SCFEnergyHartree-wantSCF) > 2e-9 || math.Abs(*d.Results.CorrelationEnergyHartree-wantCorr) > 1e-12 ||
		math.Abs(d.Results.EnergyHartree-(wantSCF+wantCorr)) > 2e-9 {
		t.Errorf("results %+v", d.Results)
	}
	if d.Input.Basis.Name != "CBS(cc-pVTZ,cc-pVQZ)" || d.Input.Method != "mp2" || len(d.Lineage) != 2 || d.Lineage[0].Relation != DerivedFrom {
		t.Errorf("level %s/%s lineage %+v", d.Input.Method, d.Input.Basis.Name, d.Lineage)
	}
	if in := d.Derivation.Inputs; in[0].ID != tz.ID || in[1].ID != qz.ID || in[0].Role != "X=3" {
		t.Errorf("inputs not in cardinal order: %+v", in)
	}
	var change float64
	for _, q := range Quantities(d) {
		if q.Path == "derived.extrapolation_change_hartree" {
			change = q.Value
		}
	}
	if want := d.Results.EnergyHartree - qz.Results.EnergyHartree; math.Abs(change-want) > 1e-12 || change == 0 {
		t.Errorf("extrapolation change %g, want %g", change, want)
	}
	// Same recipe over the same records: same input key; another SCF treatment: another.
	again, _ := Derive(RecipeCBS, []*Record{tz, qz}, nil)
	if again.InputKey != d.InputKey {
		t.Error("input key depends on the order records were given in")
	}
	largest, err := Derive(RecipeCBS, []*Record{tz, qz}, map[string]string{"scf": "largest"})
	if err != nil || largest.InputKey == d.InputKey || largest.Results.SCFEnergyHartree != qz.Results.SCFEnergyHartree {
		t.Errorf("scf largest: %v", err)
	}
	// Tampering with a result breaks the id.
	d.Results.EnergyHartree += 1e-9
	if err := d.Check(); err == nil {
		t.Error("changed derived record still verifies")
	}
	for _, c := range []struct {
		in   []*Record
		want string
	}{
		{[]*Record{tz}, "two or three"},
		{[]*Record{tz, ccRecord(t, "mp2", "cc-pVTZ", -76.0, -0.3, 0)}, "same cardinal"},
		{[]*Record{tz, ccRecord(t, "mp2", "aug-cc-pVDZ", -76.0, -0.3, 0)}, "different basis families"},
		{[]*Record{tz, ccRecord(t, "scs-mp2", "cc-pVQZ", -76.0, -0.3, 0)}, "different methods"},
		{[]*Record{tz, ccRecord(t, "mp2", "cc-pVQZ", -76.0, -0.3, 0.01)}, "different geometries"},
		{[]*Record{tz, ccRecord(t, "mp2", "cc-pVQZ", -76.0, -0.3, 0), qz}, "same cardinal"},
	} {
		if _, err := Derive(RecipeCBS, c.in, nil); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("want error with %q, got %v", c.want, err)
		}
	}
}

func TestDeriveComposite(t *testing.T) {
	tz := ccRecord(t, "mp2", "cc-pVTZ", -76.0570, -0.30, 0)
	qz := ccRecord(t, "mp2", "cc-pVQZ", -76.0650, -0.32, 0)
	cbs, err := Derive(RecipeCBS, []*Record{tz, qz}, nil)
	if err != nil {
		t.Fatal(err)
	}
	hi := ccRecord(t, "ccsd(t)", "cc-pVDZ", -76.0200, -0.215, 0)
	lo := ccRecord(t, "mp2", "cc-pVDZ", -76.0200, -0.205, 0)
	c, err := Derive(RecipeComposite, []*Record{cbs, hi, lo}, nil)
	if err != nil {
		t.Fatal(err)
	}
	// −0.010 Eh correction added to the CBS total by hand.
	if want := cbs.Results.EnergyHartree - 0.010; math.Abs(c.Results.EnergyHartree-want) > 1e-12 || c.Input.Method != "ccsd(t)" {
		t.Errorf("composite %.12f, want %.12f (%s)", c.Results.EnergyHartree, want, c.Input.Method)
	}
	if !strings.Contains(c.Input.Basis.Name, "[ccsd(t) − mp2]/cc-pVDZ") || c.Check() != nil {
		t.Errorf("level name %q", c.Input.Basis.Name)
	}
	if _, err := Derive(RecipeComposite, []*Record{cbs, hi, ccRecord(t, "mp2", "cc-pVTZ", -76, -0.2, 0)}, nil); err == nil {
		t.Error("difference across basis sets accepted")
	}
}
