package archive

import (
	"testing"

	"moltrail/engine"
	"moltrail/engine/molecule"
)

// levelJob is a normalised job of a small molecule at one level.
func levelJob(t *testing.T, method, basisName, task string, mult int, frozen bool) engine.Job {
	t.Helper()
	m := &molecule.Molecule{Name: "x", Multiplicity: mult}
	syms := []string{"O", "H"}
	if mult == 1 {
		syms = []string{"H", "F"}
	}
	for i, s := range syms {
		a, err := molecule.NewAtom(s, 0, 0, 1.8*float64(i))
		if err != nil {
			t.Fatal(err)
		}
		m.Atoms = append(m.Atoms, a)
	}
	j, err := engine.NewJob(engine.Request{Molecule: m, Method: method, Basis: basisName, Task: task, FrozenCore: frozen})
	if err != nil {
		t.Fatal(err)
	}
	return *j
}

func TestJobLevelNotation(t *testing.T) {
	for _, c := range []struct {
		method string
		mult   int
		frozen bool
		want   string
	}{
		{"hf", 1, false, "HF/6-31G*"},
		{"rhf", 1, false, "HF/6-31G*"},
		{"uhf", 1, false, "UHF/6-31G*"},
		{"hf", 2, false, "UHF/6-31G*"},
		{"rohf", 2, false, "ROHF/6-31G*"},
		{"mp2", 1, false, "MP2/6-31G*"},
		{"mp2", 1, true, "MP2(fc)/6-31G*"},
		{"mp2", 2, true, "UMP2(fc)/6-31G*"},
		{"scs-mp2", 2, false, "SCS-UMP2/6-31G*"},
		{"b3lyp", 1, false, "B3LYP/6-31G*"},
		{"b3lyp", 2, false, "UB3LYP/6-31G*"},
		{"pbe0", 1, false, "PBE0/6-31G*"},
	} {
		j := levelJob(t, c.method, "6-31G*", "energy", c.mult, c.frozen)
		if got := JobLevel(&j); got != c.want {
			t.Errorf("%s multiplicity %d frozen %v: label %q, want %q", c.method, c.mult, c.frozen, got, c.want)
		}
	}
	// density-fitted Coulomb and exchange: the DF- prefix
	for _, c := range []struct {
		method string
		mult   int
		want   string
	}{{"hf", 1, "DF-HF/6-31G*"}, {"uhf", 2, "DF-UHF/6-31G*"}, {"b3lyp", 2, "DF-UB3LYP/6-31G*"}} {
		j := levelJob(t, c.method, "6-31G*", "energy", c.mult, false)
		j.Fitting = &engine.FittingSpec{}
		if got := JobLevel(&j); got != c.want {
			t.Errorf("fitted %s multiplicity %d: label %q, want %q", c.method, c.mult, got, c.want)
		}
	}
}

func TestLevelLabelGeometrySource(t *testing.T) {
	seal := func(j engine.Job, links ...Link) *Record {
		r := &Record{Input: j, Status: engine.StatusConverged, Lineage: links}
		if err := r.Seal(); err != nil {
			t.Fatal(err)
		}
		return r
	}
	opt := seal(levelJob(t, "hf", "6-31G*", "optimize", 1, false))
	sp := seal(levelJob(t, "mp2", "cc-pVDZ", "energy", 1, true), Link{Relation: GeometryFrom, ID: opt.ID})
	// a single point on a single point's geometry: the chain ends at the optimisation
	sp2 := seal(levelJob(t, "b3lyp", "cc-pVDZ", "energy", 1, false), Link{Relation: GeometryFrom, ID: sp.ID})
	input := seal(levelJob(t, "mp2", "cc-pVDZ", "energy", 1, true))
	onInput := seal(levelJob(t, "hf", "cc-pVDZ", "energy", 1, false), Link{Relation: GeometryFrom, ID: input.ID})
	// an optimisation started from another record's geometry made its own
	reopt := seal(levelJob(t, "mp2", "cc-pVDZ", "optimize", 1, true), Link{Relation: GeometryFrom, ID: opt.ID})
	look := LookupIn([]*Record{opt, sp, sp2, input, onInput, reopt})

	for _, c := range []struct {
		name string
		r    *Record
		look Lookup
		want string
		kind string
	}{
		{"optimisation", opt, look, "HF/6-31G*", GeometryOptimised},
		{"single point on an optimised structure", sp, look, "MP2(fc)/cc-pVDZ//HF/6-31G*", GeometryBorrowed},
		{"chain of single points", sp2, look, "B3LYP/cc-pVDZ//HF/6-31G*", GeometryBorrowed},
		{"input geometry", input, look, "MP2(fc)/cc-pVDZ", GeometryInput},
		{"input geometry passed on", onInput, look, "HF/cc-pVDZ", GeometryInput},
		{"optimisation from a borrowed start", reopt, look, "MP2(fc)/cc-pVDZ", GeometryOptimised},
		{"source not at hand", sp, nil, "MP2(fc)/cc-pVDZ//record " + opt.ID[:12], GeometryUnresolved},
	} {
		if got := LevelLabel(c.r, c.look); got != c.want {
			t.Errorf("%s: label %q, want %q", c.name, got, c.want)
		}
		if g := GeometryOf(c.r, c.look); g.Kind != c.kind {
			t.Errorf("%s: geometry kind %q, want %q", c.name, g.Kind, c.kind)
		}
	}
	for _, c := range []struct {
		r    *Record
		want string
	}{{sp, "HF/cc-pVDZ//HF/6-31G*"}, {reopt, "HF/cc-pVDZ//MP2(fc)/cc-pVDZ"}, {input, "HF/cc-pVDZ"}} {
		if got := SCFLevelLabel(c.r, look); got != c.want {
			t.Errorf("SCF label of %s: %q, want %q", LevelLabel(c.r, look), got, c.want)
		}
	}
	if w := GeometryWords(sp, look); w != "is the structure optimised at HF/6-31G* (record "+opt.ID[:12]+")" {
		t.Errorf("geometry words %q", w)
	}
	if w := GeometryWords(onInput, look); w != "is the input geometry of record "+input.ID[:12] {
		t.Errorf("geometry words %q", w)
	}
}
