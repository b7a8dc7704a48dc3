package compare

import (
	"math"
	"strings"
	"testing"

	"moltrail/archive"
	"moltrail/engine"
	"moltrail/engine/molecule"
)

// theoryRecord is a sealed record of molecule m at method/basis with the
// given total energy (a fixture number, not a computed claim).
func theoryRecord(t *testing.T, m *molecule.Molecule, method, basisName string, e float64) *archive.Record {
	t.Helper()
	j, err := engine.NewJob(engine.Request{Molecule: m, Method: method, Basis: basisName})
	if err != nil {
		t.Fatal(err)
	}
	c := e + 76
	r := &archive.Record{Input: *j, Status: engine.StatusConverged, Code: archive.CurrentCode(),
		Results: engine.Result{EnergyHartree: e, SCFEnergyHartree: -76, CorrelationEnergyHartree: &c, Status: engine.StatusConverged}}
	for _, a := range m.Atoms {
		r.Results.GeometryAngstrom = append(r.Results.GeometryAngstrom, engine.GeomAtom{Symbol: a.Symbol, XYZ: [3]float64{a.PosBohr[0] * molecule.BohrAngstrom, a.PosBohr[1] * molecule.BohrAngstrom, a.PosBohr[2] * molecule.BohrAngstrom}})
	}
	if err := r.Seal(); err != nil {
		t.Fatal(err)
	}
	return r
}

func TestTheoryEntriesFromRecords(t *testing.T) {
	w := &molecule.Molecule{Name: "water", Atoms: []molecule.Atom{molecule.MustAtom("O", 0, 0, 0), molecule.MustAtom("H", 0, 1.43, 1.1), molecule.MustAtom("H", 0, -1.43, 1.1)}}
	tz := theoryRecord(t, w, "ccsd(t)", "cc-pVTZ", -76.33)
	qz := theoryRecord(t, w, "ccsd(t)", "cc-pVQZ", -76.36)
	cbs, err := archive.Derive(archive.RecipeCBS, []*archive.Record{tz, qz}, nil)
	if err != nil {
		t.Fatal(err)
	}
	change := cbs.Derivation.Values[2].Value
	e, err := FromRecord(cbs, KindEnergy, -1, nil)
	if err != nil {
		t.Fatal(err)
	}
	if e.Kind != "theory" || e.Value != cbs.Results.EnergyHartree || e.Uncertainty != math.Abs(change) || len(e.Records) != 1 || e.Records[0] != cbs.ID ||
		!strings.Contains(e.Source, cbs.ID) || !strings.Contains(e.Source, "CBS(cc-pVTZ,cc-pVQZ)") {
		t.Errorf("entry %+v", e)
	}
	if _, err := FromRecord(tz, KindEnergy, -1, nil); err == nil || !strings.Contains(err.Error(), "state one") {
		t.Errorf("a record without an uncertainty gave an entry: %v", err)
	}
	// An isomer-type difference from records of one level, with a stated uncertainty.
	w2 := w.Clone()
	w2.Name = "water-stretched"
	w2.Atoms[1].PosBohr[2] += 0.2
	s := theoryRecord(t, w2, "ccsd(t)", "cc-pVTZ", -76.32)
	d, err := FromDifference("stretch", []RecordTerm{{1, s}, {-1, tz}}, 0.5, nil)
	if err != nil {
		t.Fatal(err)
	}
	if want := 0.01 * molecule.KJPerMolPerHartree; math.Abs(d.Value-want) > 1e-9 || d.Unit != "kJ/mol" || len(d.Records) != 2 || d.Uncertainty != 0.5 {
		t.Errorf("difference %+v", d)
	}
	if _, err := FromDifference("mixed", []RecordTerm{{1, s}, {-1, qz}}, 0.5, nil); err == nil || !strings.Contains(err.Error(), "different levels") {
		t.Errorf("difference across levels: %v", err)
	}
	set, err := NewTheorySet("cbs water", "", []Entry{e, d})
	if err != nil {
		t.Fatal(err)
	}
	// The reference record is cited and not compared with itself; the
	// triple-zeta record is compared with the CBS value.
	tab, err := Compare(set, []*archive.Record{cbs, tz, qz, s}, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if len(tab.ReferenceRecords) != 3 || tab.ReferenceRecords[0] != cbs.ID {
		t.Errorf("reference records %v", tab.ReferenceRecords)
	}
	excluded := false
	for _, x := range tab.Excluded {
		excluded = excluded || (x.RecordID == cbs.ID && strings.Contains(x.Reason, "source of reference entry"))
	}
	found := false
	for _, dv := range tab.Deviations {
		if dv.RecordID == cbs.ID {
			t.Error("the reference record was compared with its own value")
		}
		if dv.RecordID == qz.ID && dv.Kind == KindEnergy {
			found = true
			if want := (qz.Results.EnergyHartree - cbs.Results.EnergyHartree) * molecule.KJPerMolPerHartree; math.Abs(dv.Signed-want) > 1e-6 {
				t.Errorf("deviation %g, want %g", dv.Signed, want)
			}
		}
	}
	if !excluded || !found {
		t.Errorf("excluded %v, QZ deviation found %v: %+v", excluded, found, tab.Excluded)
	}
}
