package engine

import (
	"strings"
	"testing"

	"moltrail/engine/molecule"
)

// Fitting is part of the input key: an exact job's encoding has no
// fitting section (so keys of exact jobs are those of earlier builds), a
// fitted job never shares a key with the exact one, the automatic choice
// and the same set named give one key, and another set or threshold gives
// another.
func TestFittingInInputKey(t *testing.T) {
	base := Request{Molecule: waterMolecule(), Method: "b3lyp", Basis: "cc-pVDZ"}
	exact, err := NewJob(base)
	if err != nil {
		t.Fatal(err)
	}
	enc, _ := exact.Canonical()
	if strings.Contains(string(enc), "fitting") {
		t.Fatalf("an exact job's encoding mentions fitting: %s", enc)
	}
	keys := map[string]string{"exact": mustKey(t, exact)}
	for name, fr := range map[string]*FittingRequest{
		"auto":    {},
		"named":   {SCFSet: "CC-PVDZ-JKFIT"},
		"other":   {SCFSet: "def2-universal-JKFIT"},
		"cutoff":  {MetricCutoff: 1e-8},
		"schwarz": {SchwarzThreshold: 1e-10},
	} {
		r := base
		r.Fitting = fr
		j, err := NewJob(r)
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		keys[name] = mustKey(t, j)
	}
	if keys["auto"] != keys["named"] {
		t.Error("the automatic set and the same set named give different keys")
	}
	seen := map[string]string{}
	for name, k := range keys {
		if name == "named" {
			continue
		}
		if o, dup := seen[k]; dup {
			t.Errorf("%s and %s share the input key", name, o)
		}
		seen[k] = name
	}
}

// The automatic choice follows the orbital basis; where the library pairs
// no set, or the set misses an element, the error names one that serves;
// correlated methods and analytic gradients are refused; optimisations of
// fitted levels take finite-difference gradients.
func TestFittingChoices(t *testing.T) {
	for orb, want := range map[string]string{"cc-pvdz": "cc-pVDZ-JKFIT", "aug-cc-pVTZ": "aug-cc-pVTZ-JKFIT", "def2-svp": "def2-universal-JKFIT", "6-31G(d)": "def2-universal-JKFIT"} {
		j, err := NewJob(Request{Molecule: waterMolecule(), Method: "hf", Basis: orb, Fitting: &FittingRequest{}})
		if err != nil {
			t.Fatalf("%s: %v", orb, err)
		}
		if j.Fitting.SCFSet.Name != want || j.Fitting.SCFSet.SHA256 == "" || j.Fitting.SCFSet.Angular != j.Basis.Angular {
			t.Errorf("%s: fitting set %+v, want %s in the orbital basis's angular type", orb, j.Fitting.SCFSet, want)
		}
	}
	lih := &molecule.Molecule{Name: "LiH", Multiplicity: 1, Atoms: []molecule.Atom{molecule.MustAtom("Li", 0, 0, 0), molecule.MustAtom("H", 0, 0, 3.0)}}
	m2 := waterMolecule()
	cases := []struct {
		r    Request
		want string
	}{
		{Request{Molecule: m2, Method: "hf", Basis: "cc-pvqz", Fitting: &FittingRequest{}}, "pairs no Coulomb/exchange fitting set with basis \"cc-pVQZ\"; name one, for example def2-universal-JKFIT"},
		{Request{Molecule: lih, Method: "hf", Basis: "cc-pvdz", Fitting: &FittingRequest{}}, "no functions for element Li; def2-universal-JKFIT covers this molecule"},
		{Request{Molecule: m2, Method: "hf", Basis: "cc-pvdz", Fitting: &FittingRequest{SCFSet: "cc-pvdz-ri"}}, "made for correlation energies"},
		{Request{Molecule: m2, Method: "hf", Basis: "cc-pvdz", Fitting: &FittingRequest{SCFSet: "cc-pvtz"}}, "is an orbital basis, not a fitting set"},
		{Request{Molecule: m2, Method: "mp2", Basis: "cc-pvdz", Fitting: &FittingRequest{}}, "density fitting covers the SCF and DFT methods"},
		{Request{Molecule: m2, Method: "hf", Basis: "cc-pvdz", Fitting: &FittingRequest{MetricCutoff: 0.1}}, "metric_eigenvalue_cutoff"},
		{Request{Molecule: m2, Method: "hf", Basis: "cc-pvdz", Task: "optimize", Opt: &DefaultOpt, Fitting: &FittingRequest{}}, "analytic gradients of density-fitted energies"},
	}
	for _, c := range cases {
		_, err := NewJob(c.r)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("error %v, want containing %q", err, c.want)
		}
	}
	j, err := NewJob(Request{Molecule: m2, Method: "hf", Basis: "cc-pvdz", Task: "optimize", Frequencies: true, Fitting: &FittingRequest{}})
	if err != nil || j.Opt.GradientMethod != "finite-difference" || j.Freq.Derivatives != "energy-differences" {
		t.Errorf("fitted optimisation with frequencies: %v, %+v %+v", err, j.Opt, j.Freq)
	}
	if _, err := NewJob(Request{Molecule: m2, Method: "hf", Basis: "cc-pvdz", Task: "frequencies", Freq: &DefaultFreq, Fitting: &FittingRequest{}}); err == nil || !strings.Contains(err.Error(), "use energy-differences") {
		t.Errorf("fitted frequencies from gradient differences: %v", err)
	}
}

// A fitted run gives the same bits on one and on three threads, and with
// a memory limit too small to hold the fitted integrals (blocks).
func TestFittedRunSameBits(t *testing.T) {
	j, err := NewJob(Request{Molecule: waterMolecule(), Method: "b3lyp", Basis: "cc-pvdz", Grid: "coarse", Fitting: &FittingRequest{}})
	if err != nil {
		t.Fatal(err)
	}
	var ref *Result
	for _, o := range []RunOptions{{Threads: 1}, {Threads: 3}, {Threads: 2, MemoryLimitBytes: MinMemoryLimitBytes}} {
		r, err := Run(j, o)
		if err != nil {
			t.Fatal(err)
		}
		if ref == nil {
			ref = r
			continue
		}
		if r.EnergyHartree != ref.EnergyHartree || *r.DipoleDebye != *ref.DipoleDebye {
			t.Errorf("threads %d, limit %d: energy %.17g, dipole %v; first run %.17g, %v", o.Threads, o.MemoryLimitBytes, r.EnergyHartree, *r.DipoleDebye, ref.EnergyHartree, *ref.DipoleDebye)
		}
	}
}
