package archive

import (
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"moltrail/engine"
)

// mutate returns a sealed copy of a fixture changed by edit (the hashes
// match: what is wrong is the content itself).
func mutate(t *testing.T, i int, edit func(r *Record)) *Record {
	t.Helper()
	r := fixture(t, i, "hf", "sto-3g", nil, t0)
	edit(r)
	if err := r.Seal(); err != nil {
		t.Fatal(err)
	}
	return r
}

// TestVetRefusesWhatRunWouldNot: records whose hashes match but whose
// content run would not have produced are refused, each with a reason
// naming the field.
func TestVetRefusesWhatRunWouldNot(t *testing.T) {
	lineageTarget := fixture(t, 50, "hf", "sto-3g", nil, t0)
	cases := map[string]struct {
		rec  *Record
		want string
	}{
		"method": {mutate(t, 1, func(r *Record) { r.Input.Method = "mp7" }), "method \"mp7\""},
		"basis":  {mutate(t, 2, func(r *Record) { r.Input.Basis.Name = "no-such-basis" }), "not in the library"},
		// A built-in set changed since the record was made: history is kept.
		"basis pinned": {mutate(t, 3, func(r *Record) { r.Input.Basis.SHA256 = strings.Repeat("0", 64) }), ""},
		"element":      {mutate(t, 4, func(r *Record) { r.Input.Molecule.Atoms[0].Symbol = "Xx" }), "atoms[0]"},
		"no basis": {mutate(t, 5, func(r *Record) {
			atoms := r.Input.Molecule.Atoms
			r.Input = *baseJob(t, "hf", "6-31+g*")
			r.Input.Molecule.Atoms = atoms
			r.Input.Molecule.Atoms[0].Symbol = "Sc"
		}), "no functions for element Sc"},
		"charge":       {mutate(t, 6, func(r *Record) { r.Input.Molecule.Charge = -1000 }), "molecule.charge -1000"},
		"multiplicity": {mutate(t, 7, func(r *Record) { r.Input.Molecule.Multiplicity = 2 }), "multiplicity 2 is impossible"},
		"reference":    {mutate(t, 8, func(r *Record) { r.Input.Reference = "uhf" }), "reference \"uhf\""},
		"tolerance":    {mutate(t, 9, func(r *Record) { r.Input.SCF.EnergyTolHartree = 0 }), "scf.energy_tol_hartree"},
		"name":         {mutate(t, 10, func(r *Record) { r.Input.Molecule.Name = "bad \xff name" }), "molecule.name is not valid UTF-8"},
		"tag":          {mutate(t, 11, func(r *Record) { r.Tags = map[string]string{"k": "v\xfe"} }), "not valid UTF-8"},
		"status":       {mutate(t, 12, func(r *Record) { r.Status = engine.StatusFailed }), "differs from results.status"},
		"future":       {mutate(t, 13, func(r *Record) { r.Run.StartUTC = time.Now().Add(48 * time.Hour).UTC().Format(time.RFC3339Nano) }), "lies in the future"},
		"lineage":      {mutate(t, 14, func(r *Record) { r.Lineage = []Link{{Relation: GeometryFrom, ID: strings.Repeat("ab", 32)}} }), "neither in the archive"},
		"in batch":     {mutate(t, 15, func(r *Record) { r.Lineage = []Link{{Relation: GeometryFrom, ID: lineageTarget.ID}} }), ""},
	}
	var recs []*Record
	for _, c := range cases {
		recs = append(recs, c.rec)
	}
	recs = append(recs, lineageTarget)
	refused, err := Vet(nil, Batch{Source: "in.jsonl", Records: recs}, ImportPolicy{})
	if err != nil {
		t.Fatal(err)
	}
	why := map[string]string{}
	for _, r := range refused {
		why[r.ID] = r.Reason
	}
	for name, c := range cases {
		got := why[c.rec.ID]
		switch {
		case c.want == "" && got != "":
			t.Errorf("%s: refused: %s", name, got)
		case c.want != "" && !strings.Contains(got, c.want):
			t.Errorf("%s: want a refusal mentioning %q, got %q", name, c.want, got)
		}
	}
}

// TestVetChainsRefusals: a record whose lineage needs a refused record of
// the same batch is refused too.
func TestVetChainsRefusals(t *testing.T) {
	bad := mutate(t, 1, func(r *Record) { r.Input.Method = "mp7" })
	child := mutate(t, 2, func(r *Record) { r.Lineage = []Link{{Relation: GeometryFrom, ID: bad.ID}} })
	refused, err := Vet(nil, Batch{Source: "x", Records: []*Record{child, bad}}, ImportPolicy{Partial: true})
	if err != nil || len(refused) != 2 || !strings.Contains(refused[0].Reason, "x record 1") {
		t.Fatalf("chained refusal: %+v %v", refused, err)
	}
}

// TestImportIntoAllOrNothing: a batch with one refused record stores
// nothing and, into a new archive, creates nothing; with Partial the
// acceptable ones are stored; a batch whose every record is refused
// creates nothing even with Partial.
func TestImportIntoAllOrNothing(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "arch")
	good := fixture(t, 1, "hf", "sto-3g", nil, t0)
	bad := mutate(t, 2, func(r *Record) { r.Input.Method = "mp7" })
	b := Batch{Source: "f.jsonl", Records: []*Record{good, bad}, Lines: []int{1, 2}}
	rep, err := ImportInto(dir, b, ImportPolicy{}, OpenOptions{}, nil)
	if !errors.Is(err, ErrRefused) || len(rep.Refused) != 1 || rep.Refused[0].Line != 2 {
		t.Fatalf("all or nothing: %+v %v", rep, err)
	}
	if _, err := os.Stat(dir); !errors.Is(err, os.ErrNotExist) {
		t.Fatalf("a refused import created the archive: %v", err)
	}
	rep, err = ImportInto(dir, Batch{Source: "f.jsonl", Records: []*Record{bad}}, ImportPolicy{Partial: true}, OpenOptions{}, nil)
	if err != nil || rep.Imported != 0 || len(rep.Refused) != 1 {
		t.Fatalf("every record refused: %+v %v", rep, err)
	}
	if _, err := os.Stat(dir); !errors.Is(err, os.ErrNotExist) {
		t.Fatalf("an import of refused records only created the archive: %v", err)
	}
	rep, err = ImportInto(dir, b, ImportPolicy{Partial: true}, OpenOptions{}, nil)
	if err != nil || rep.Imported != 1 || len(rep.Refused) != 1 || rep.Lines != 2 {
		t.Fatalf("partial: %+v %v", rep, err)
	}
}
