package archive

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"reflect"
	"strings"
	"testing"
	"time"

	badger "github.com/dgraph-io/badger/v4"

	"moltrail/engine"
	"moltrail/engine/molecule"
	"moltrail/schemas"
)

// fixture builds a sealed record of H2 (bond length varied by i) with
// hand-filled results. The numbers are test fixtures, not computed claims.
func fixture(t testing.TB, i int, method, basisName string, tags map[string]string, start time.Time) *Record {
	t.Helper()
	r := 1.4 + 0.001*float64(i)
	job := baseJob(t, method, basisName)
	job.Molecule.Name = fmt.Sprintf("hydrogen-%d", i%7)
	job.Molecule.Atoms = []engine.AtomSpec{{Symbol: "H"}, {Symbol: "H", Bohr: [3]float64{0, 0, r}}}
	dip := [3]float64{0, 0, 0}
	rec := &Record{
		Input:  *job,
		Status: engine.StatusConverged,
		Code:   Code{Program: "moltrail", Version: ProgramVersion, Revision: "abc", GoVersion: "go1.x", OS: "linux", Arch: "amd64", CanonicalVersion: engine.CanonicalVersion},
		Run: Run{StartUTC: start.UTC().Format(time.RFC3339Nano), EndUTC: start.Add(time.Second).UTC().Format(time.RFC3339Nano),
			WallSeconds: 1, Host: "test", Threads: 1},
		Tags: tags,
		Results: engine.Result{EnergyHartree: -1.1 - 0.0001*float64(i), SCFEnergyHartree: -1.1 - 0.0001*float64(i),
			DipoleDebye: &dip, SCFDipoleDebye: &dip, Status: engine.StatusConverged,
			GeometryAngstrom: []engine.GeomAtom{{Symbol: "H"}, {Symbol: "H", XYZ: [3]float64{0, 0, r * molecule.BohrAngstrom}}}},
	}
	if err := rec.Seal(); err != nil {
		t.Fatal(err)
	}
	return rec
}

var jobCache = map[string]engine.Job{}

// baseJob is a normalised H2 job at one level (cached: loading a basis is
// the slow part of building fixtures).
func baseJob(t testing.TB, method, basisName string) *engine.Job {
	k := method + "|" + basisName
	if j, ok := jobCache[k]; ok {
		return &j
	}
	m := &molecule.Molecule{Name: "hydrogen"}
	m.Atoms = []molecule.Atom{molecule.MustAtom("H", 0, 0, 0), molecule.MustAtom("H", 0, 0, 1.4)}
	job, err := engine.NewJob(engine.Request{Molecule: m, Method: method, Basis: basisName})
	if err != nil {
		t.Fatal(err)
	}
	jobCache[k] = *job
	j := *job
	return &j
}

var t0 = time.Date(2024, 5, 6, 7, 8, 9, 0, time.UTC)

func openRW(t testing.TB, dir string) *Store {
	t.Helper()
	s, err := Open(dir, OpenOptions{})
	if err != nil {
		t.Fatal(err)
	}
	return s
}

func TestSealAndCheck(t *testing.T) {
	r := fixture(t, 1, "hf", "sto-3g", map[string]string{"paper": "x"}, t0)
	if err := r.Check(); err != nil {
		t.Fatalf("fresh record: %v", err)
	}
	key, _ := r.Input.InputKey()
	if r.InputKey != key || len(r.ID) != 64 {
		t.Fatalf("keys not filled: %q %q", r.InputKey, r.ID)
	}
	enc, _ := r.Encode()
	back, err := Decode(enc)
	if err != nil {
		t.Fatal(err)
	}
	enc2, _ := back.Encode()
	if !bytes.Equal(enc, enc2) {
		t.Fatal("decode/encode is not byte-identical")
	}
	// The stored bytes differ from the hashed bytes only in the id value.
	canon, _ := r.Canonical()
	if !bytes.Equal(bytes.Replace(enc, []byte(r.ID), nil, 1), canon) {
		t.Fatal("stored form is not the canonical form with the id filled in")
	}
	changes := []func(*Record){
		func(x *Record) { x.Results.EnergyHartree += 1e-12 },
		func(x *Record) { x.Tags["paper"] = "y" },
		func(x *Record) { x.Run.Host = "other" },
		func(x *Record) { x.Code.Modified = true },
		func(x *Record) { x.Lineage = append(x.Lineage, Link{Reproduces, r.ID}) },
	}
	for i, ch := range changes {
		c, _ := Decode(enc)
		ch(c)
		if err := c.Check(); err == nil || !strings.Contains(err.Error(), "id") {
			t.Errorf("change %d went undetected: %v", i, err)
		}
	}
	c, _ := Decode(enc)
	c.Input.SCF.EnergyTolHartree = 1e-6
	if err := c.Check(); err == nil || !strings.Contains(err.Error(), "input_key") {
		t.Errorf("input change not reported as input_key mismatch: %v", err)
	}
	if _, err := Decode(append(enc[:len(enc)-1:len(enc)-1], []byte(`,"extra":1}`)...)); err == nil {
		t.Error("unknown field accepted")
	}
}

func TestRecordsMatchSchema(t *testing.T) {
	ok := fixture(t, 2, "hf", "sto-3g", nil, t0)
	for _, r := range []*Record{ok} {
		b, _ := r.Encode()
		if err := ValidateRecordJSON(b); err != nil {
			t.Errorf("record %s: %v", short(r.ID), err)
		}
	}
	bad := []struct{ name, from, to string }{
		{"status", `"status":"converged"`, `"status":"done"`},
		{"id", `"id":"` + ok.ID + `"`, `"id":"xyz"`},
		{"multiplicity", `"multiplicity":1`, `"multiplicity":"one"`},
	}
	b, _ := ok.Encode()
	for _, c := range bad {
		nb := strings.Replace(string(b), c.from, c.to, 1)
		if nb == string(b) {
			t.Fatalf("%s: fixture text %q not found", c.name, c.from)
		}
		err := ValidateRecordJSON([]byte(nb))
		if err == nil || !strings.Contains(err.Error(), "field /") {
			t.Errorf("%s: schema accepted or error lacks the field: %v", c.name, err)
		}
	}
}

func TestComputeFailedIsStored(t *testing.T) {
	ok := fixture(t, 3, "hf", "sto-3g", nil, t0)
	job := ok.Input
	rec, err := Compute(RunRequest{Job: &job, Threads: 1}, CurrentCode(), nil, func(*engine.Job, int, io.Writer) (*engine.Result, error) {
		return nil, errors.New("integrals exploded")
	})
	if err != nil {
		t.Fatal(err)
	}
	if rec.Status != engine.StatusFailed || !strings.Contains(rec.Results.Error, "integrals exploded") {
		t.Fatalf("failed run not recorded as failed: %+v", rec.Results)
	}
	b, _ := rec.Encode()
	if err := ValidateRecordJSON(b); err != nil {
		t.Fatalf("failed record does not match schema: %v", err)
	}
	if len(rec.Results.GeometryAngstrom) != 2 {
		t.Fatal("failed record lacks the input geometry")
	}
}

func TestJobSchemaCoversJob(t *testing.T) {
	var doc struct {
		Properties map[string]json.RawMessage `json:"properties"`
	}
	if err := json.Unmarshal(schemas.Job, &doc); err != nil {
		t.Fatal(err)
	}
	typ := reflect.TypeOf(engine.Job{})
	for i := 0; i < typ.NumField(); i++ {
		name := strings.Split(typ.Field(i).Tag.Get("json"), ",")[0]
		if _, ok := doc.Properties[name]; !ok {
			t.Errorf("engine.Job field %s (json %q) is missing from schemas/job.schema.json", typ.Field(i).Name, name)
		}
	}
	var rdoc struct {
		Properties map[string]json.RawMessage `json:"properties"`
	}
	json.Unmarshal(schemas.Record, &rdoc)
	rt := reflect.TypeOf(Record{})
	for i := 0; i < rt.NumField(); i++ {
		name := strings.Split(rt.Field(i).Tag.Get("json"), ",")[0]
		if _, ok := rdoc.Properties[name]; !ok {
			t.Errorf("Record field %s (json %q) is missing from schemas/record.schema.json", rt.Field(i).Name, name)
		}
	}
}

func TestStorePutGetList(t *testing.T) {
	dir := t.TempDir()
	s := openRW(t, dir)
	defer s.Close()
	var recs []*Record
	for i := 0; i < 30; i++ {
		method := "hf"
		if i%3 == 0 {
			method = "uhf"
		}
		basis := "sto-3g"
		if i%2 == 0 {
			basis = "cc-pvdz"
		}
		tags := map[string]string{}
		if i%5 == 0 {
			tags["paper"] = "2024"
		}
		recs = append(recs, fixture(t, i, method, basis, tags, t0.Add(time.Duration(i)*time.Minute)))
	}
	n, err := s.PutMany(recs)
	if err != nil || n != 30 {
		t.Fatalf("PutMany: %d, %v", n, err)
	}
	if added, err := s.Put(recs[4]); err != nil || added {
		t.Fatalf("second Put of the same record: added=%v err=%v", added, err)
	}
	got, raw, err := s.Get(recs[7].ID)
	if err != nil {
		t.Fatal(err)
	}
	want, _ := recs[7].Encode()
	if !bytes.Equal(raw, want) || got.ID != recs[7].ID {
		t.Fatal("stored bytes differ from the record's encoding")
	}
	id, err := s.Resolve(recs[7].ID[:10])
	if err != nil || id != recs[7].ID {
		t.Fatalf("Resolve: %q %v", id, err)
	}
	if _, err := s.Resolve("zz12"); err == nil {
		t.Error("non-hex prefix accepted")
	}
	if _, err := s.Resolve(recs[7].ID[:1]); err == nil {
		t.Error("one-digit prefix accepted")
	}
	count := func(f Filter, pred func(int) bool) {
		t.Helper()
		l, err := s.List(f)
		if err != nil {
			t.Fatal(err)
		}
		want := 0
		for i := range recs {
			if pred(i) {
				want++
			}
		}
		if len(l) != want {
			t.Errorf("filter %+v: %d records, want %d", f, len(l), want)
		}
		for k := 1; k < len(l); k++ {
			if l[k].StartUTC < l[k-1].StartUTC {
				t.Errorf("filter %+v: not in time order", f)
			}
		}
	}
	count(Filter{}, func(int) bool { return true })
	count(Filter{Method: "UHF"}, func(i int) bool { return i%3 == 0 })
	count(Filter{Basis: "CC-PVDZ", Method: "uhf"}, func(i int) bool { return i%3 == 0 && i%2 == 0 })
	count(Filter{Tags: []string{"paper=2024"}}, func(i int) bool { return i%5 == 0 })
	count(Filter{Molecule: "Hydrogen-3"}, func(i int) bool { return i%7 == 3 })
	count(Filter{Formula: "H2", Status: "converged"}, func(int) bool { return true })
	count(Filter{Status: "failed"}, func(int) bool { return false })
	count(Filter{Since: t0.Add(20 * time.Minute)}, func(i int) bool { return i >= 20 })
	count(Filter{Since: t0.Add(20 * time.Minute), Tags: []string{"paper=2024"}}, func(i int) bool { return i >= 20 && i%5 == 0 })
	count(Filter{InputKey: recs[9].InputKey}, func(i int) bool { return i == 9 })
	if c, _ := s.Count(); c != 30 {
		t.Errorf("Count = %d", c)
	}
	rep, err := s.Verify()
	if err != nil || len(rep.Problems) != 0 || rep.Records != 30 {
		t.Fatalf("verify of a clean archive: %+v %v", rep, err)
	}
}

func TestSameBuildReuse(t *testing.T) {
	dir := t.TempDir()
	s := openRW(t, dir)
	r := signed(t, fixture(t, 1, "hf", "sto-3g", nil, t0))
	s.Put(r)
	found, err := s.FindSameBuild(r.InputKey, r.Code)
	if err != nil || found == nil || found.ID != r.ID {
		t.Fatalf("same build not found: %v", err)
	}
	// Newer records of the same input that must not stand in for a
	// calculation: unsigned, signed by a key the archive does not trust,
	// dated in the future.
	unsigned := fixture(t, 1, "hf", "sto-3g", nil, t0.Add(time.Hour))
	stranger := fixture(t, 1, "hf", "sto-3g", nil, t0.Add(2*time.Hour))
	if err := strangerKey(t).Sign(stranger); err != nil {
		t.Fatal(err)
	}
	future := signed(t, fixture(t, 1, "hf", "sto-3g", nil, time.Now().Add(24*time.Hour)))
	s.PutMany([]*Record{unsigned, stranger, future})
	if found, _ := s.FindSameBuild(r.InputKey, r.Code); found == nil || found.ID != r.ID {
		t.Fatalf("reuse picked %v instead of the signed record of the past", found)
	}
	other := r.Code
	other.Revision = "def"
	if found, _ := s.FindSameBuild(r.InputKey, other); found != nil {
		t.Fatal("a record of another revision was offered for reuse")
	}
	mod := r.Code
	mod.Modified = true
	mod.ExecutableSHA256 = strings.Repeat("a", 64)
	if mod.SameBuild(mod) != true || r.Code.SameBuild(mod) {
		t.Fatal("SameBuild wrong for a modified tree")
	}
	s.Close()
}

// TestCodeMatch: with a source identity on both sides it alone decides
// (revision, modified flag and executable do not matter); without one on
// either side the revision rule holds; a mixed pair never matches; the
// toolchain and platform always count. Each refusal names its reason.
func TestCodeMatch(t *testing.T) {
	src := strings.Repeat("5", 64)
	base := Code{Program: "moltrail", Version: "0.1.0", GoVersion: "go1.26.8", OS: "linux", Arch: "amd64", CanonicalVersion: "moltrail-job/1", SourceSHA256: src}
	with := func(f func(*Code)) Code { c := base; f(&c); return c }
	cases := []struct {
		name string
		a, b Code
		ok   bool
		why  string
	}{
		{"same source, go run against go install", with(func(c *Code) { c.ExecutableSHA256 = strings.Repeat("a", 64) }),
			with(func(c *Code) { c.Revision = "abc"; c.ExecutableSHA256 = strings.Repeat("b", 64) }), true, "the same source"},
		{"same source, modified tree", with(func(c *Code) { c.Modified = true }), base, true, "the same source"},
		{"other source", base, with(func(c *Code) { c.SourceSHA256 = strings.Repeat("6", 64) }), false, "made from other source"},
		{"record without source identity", with(func(c *Code) { c.SourceSHA256 = ""; c.Revision = "abc" }), with(func(c *Code) { c.Revision = "abc" }), false, "did not record a source identity"},
		{"Go version", base, with(func(c *Code) { c.GoVersion = "go1.27.0" }), false, "Go version is go1.26.8"},
		{"platform", base, with(func(c *Code) { c.Arch = "arm64" }), false, "platform is linux/amd64"},
		{"job encoding", base, with(func(c *Code) { c.CanonicalVersion = "moltrail-job/2" }), false, "job encoding"},
		{"old rule, same revision", with(func(c *Code) { c.SourceSHA256 = ""; c.Revision = "abc" }), with(func(c *Code) { c.SourceSHA256 = ""; c.Revision = "abc" }), true, "the same revision"},
		{"old rule, other revision", with(func(c *Code) { c.SourceSHA256 = ""; c.Revision = "abc" }), with(func(c *Code) { c.SourceSHA256 = ""; c.Revision = "def" }), false, "revision is abc"},
		{"old rule, no revision, other executable", with(func(c *Code) { c.SourceSHA256 = ""; c.ExecutableSHA256 = strings.Repeat("a", 64) }),
			with(func(c *Code) { c.SourceSHA256 = ""; c.ExecutableSHA256 = strings.Repeat("b", 64) }), false, "executable differs"},
	}
	for _, c := range cases {
		ok, why := c.a.Match(c.b)
		if ok != c.ok || !strings.Contains(why, c.why) {
			t.Errorf("%s: Match = %v %q, want %v and %q", c.name, ok, why, c.ok, c.why)
		}
		if c.a.SameBuild(c.b) != c.ok {
			t.Errorf("%s: SameBuild disagrees with Match", c.name)
		}
	}
	if CurrentCode().SourceSHA256 == "" {
		t.Error("this build records no source identity")
	}
}

// TestFindReuseSays: the reason names no record, the record reused, or
// what sets the stored record apart.
func TestFindReuseSays(t *testing.T) {
	s := openRW(t, t.TempDir())
	defer s.Close()
	r := fixture(t, 1, "hf", "sto-3g", nil, t0)
	if got, why, err := s.FindReuse(r.InputKey, r.Code); err != nil || got != nil || why != "the archive holds no record of this input" {
		t.Fatalf("empty archive: %v %q %v", got, why, err)
	}
	s.Put(r)
	if got, why, _ := s.FindReuse(r.InputKey, r.Code); got != nil || !strings.Contains(why, "it is unsigned") {
		t.Errorf("unsigned record: %q", why)
	}
	r = signed(t, fixture(t, 1, "hf", "sto-3g", nil, t0.Add(time.Minute)))
	s.Put(r)
	if got, why, _ := s.FindReuse(r.InputKey, r.Code); got == nil || !strings.Contains(why, "record "+r.ID[:12]+" holds this input") {
		t.Errorf("same code: %q", why)
	}
	other := r.Code
	other.GoVersion = "go0.0"
	if got, why, _ := s.FindReuse(r.InputKey, other); got != nil || !strings.Contains(why, "2 record(s) of this input, none made by this code") || !strings.Contains(why, "Go version") {
		t.Errorf("other code: %q", why)
	}
}

func TestTamperDetected(t *testing.T) {
	dir := t.TempDir()
	s := openRW(t, dir)
	a := fixture(t, 1, "hf", "sto-3g", nil, t0)
	b := fixture(t, 2, "hf", "sto-3g", nil, t0.Add(time.Minute))
	s.PutMany([]*Record{a, b})
	// Flip one byte of b's stored value, going around the store's API.
	err := s.db.Update(func(txn *badger.Txn) error {
		it, err := txn.Get([]byte(pRecord + b.ID))
		if err != nil {
			return err
		}
		v, _ := it.ValueCopy(nil)
		i := bytes.Index(v, []byte(`"energy_hartree":-1.`)) + len(`"energy_hartree":-1.`)
		v[i] ^= 0x01 // a digit becomes another digit
		return txn.Set([]byte(pRecord+b.ID), v)
	})
	if err != nil {
		t.Fatal(err)
	}
	rep, err := s.Verify()
	if err != nil {
		t.Fatal(err)
	}
	if len(rep.Problems) != 1 || rep.Problems[0].ID != b.ID {
		t.Fatalf("tamper not pinned to the record: %+v", rep.Problems)
	}
	t.Logf("verify says: %s", rep.Problems[0].Problem)
	s.Close()
}

func TestExportImportRoundTrip(t *testing.T) {
	src := openRW(t, t.TempDir())
	var recs []*Record
	for i := 0; i < 12; i++ {
		recs = append(recs, fixture(t, i, "hf", "sto-3g", map[string]string{"set": fmt.Sprint(i % 2)}, t0.Add(time.Duration(i)*time.Second)))
	}
	src.PutMany(recs)
	var buf bytes.Buffer
	n, err := src.Export(&buf, Filter{})
	if err != nil || n != 12 {
		t.Fatalf("export: %d %v", n, err)
	}
	var half bytes.Buffer
	if n, _ := src.Export(&half, Filter{Tags: []string{"set=1"}}); n != 6 {
		t.Fatalf("filtered export: %d", n)
	}
	src.Close()

	dst := openRW(t, t.TempDir())
	defer dst.Close()
	rep, err := dst.Import(bytes.NewReader(half.Bytes()), "half.jsonl", ImportPolicy{})
	if err != nil || rep.Imported != 6 {
		t.Fatalf("import half: %+v %v", rep, err)
	}
	rep, err = dst.Import(bytes.NewReader(buf.Bytes()), "all.jsonl", ImportPolicy{})
	if err != nil || rep.Imported != 6 || rep.Skipped != 6 || len(rep.Refused) != 0 {
		t.Fatalf("import all: %+v %v", rep, err)
	}
	for _, r := range recs {
		_, raw, err := dst.Get(r.ID)
		want, _ := r.Encode()
		if err != nil || !bytes.Equal(raw, want) {
			t.Fatalf("record %s not byte-identical after the round trip", short(r.ID))
		}
	}
	if v, _ := dst.Verify(); len(v.Problems) != 0 {
		t.Fatalf("verify after import: %+v", v.Problems)
	}
}

func TestImportRefusesAndRejects(t *testing.T) {
	recs := []*Record{fixture(t, 1, "hf", "sto-3g", nil, t0), fixture(t, 2, "hf", "sto-3g", nil, t0), fixture(t, 3, "hf", "sto-3g", nil, t0)}
	var lines []string
	for _, r := range recs {
		b, _ := r.Encode()
		lines = append(lines, string(b))
	}
	tampered := append([]string{}, lines...)
	tampered[1] = strings.Replace(tampered[1], `"host":"test"`, `"host":"elsewhere"`, 1)

	dst := openRW(t, t.TempDir())
	defer dst.Close()
	// All or nothing by default: the tampered line is named, nothing is stored.
	rep, err := dst.Import(strings.NewReader(strings.Join(tampered, "\n")+"\n"), "t.jsonl", ImportPolicy{})
	if !errors.Is(err, ErrRefused) || rep.Imported != 0 || len(rep.Refused) != 1 || rep.Refused[0].Line != 2 || !strings.Contains(rep.Refused[0].Reason, "t.jsonl:2") {
		t.Fatalf("tampered line not refused by line, or something stored: %+v %v", rep, err)
	}
	if n, _ := dst.Count(); n != 0 {
		t.Fatalf("a refused batch stored %d record(s)", n)
	}
	rep, err = dst.Import(strings.NewReader(strings.Join(tampered, "\n")+"\n"), "t.jsonl", ImportPolicy{Partial: true})
	if err != nil || rep.Imported != 2 || len(rep.Refused) != 1 {
		t.Fatalf("partial import: %+v %v", rep, err)
	}
	bad := map[string]string{
		"malformed": lines[0] + "\n{not json\n",
		"truncated": lines[0] + "\n" + lines[2][:len(lines[2])/2],
		"schema":    lines[0] + "\n" + strings.Replace(lines[2], `"status":"converged"`, `"status":"finished"`, 1) + "\n",
		"unknown":   lines[0] + "\n" + lines[2][:len(lines[2])-1] + `,"colour":"red"}` + "\n",
	}
	for name, text := range bad {
		before, _ := dst.Count()
		_, err := dst.Import(strings.NewReader(text), name+".jsonl", ImportPolicy{})
		if !errors.Is(err, ErrBadFile) || !strings.Contains(err.Error(), name+".jsonl:2") {
			t.Errorf("%s: want a bad-file error naming line 2, got %v", name, err)
		}
		if after, _ := dst.Count(); after != before {
			t.Errorf("%s: archive changed (%d → %d records)", name, before, after)
		}
	}
}

func TestNotes(t *testing.T) {
	s := openRW(t, t.TempDir())
	defer s.Close()
	r := fixture(t, 1, "hf", "sto-3g", nil, t0)
	s.Put(r)
	if _, err := s.AddNote(r.ID, "used in table 2", t0); err != nil {
		t.Fatal(err)
	}
	if _, err := s.AddNote(strings.Repeat("0", 64), "x", t0); err == nil {
		t.Error("note on a missing record accepted")
	}
	ns, err := s.Notes(r.ID)
	if err != nil || len(ns) != 1 || ns[0].Text != "used in table 2" {
		t.Fatalf("notes: %+v %v", ns, err)
	}
	_, raw, _ := s.Get(r.ID)
	want, _ := r.Encode()
	if !bytes.Equal(raw, want) {
		t.Fatal("adding a note changed the record")
	}
	if v, _ := s.Verify(); len(v.Problems) != 0 || v.Notes != 1 {
		t.Fatalf("verify with a note: %+v", v)
	}
}

func TestSecondWriterWaitsThenGivesUp(t *testing.T) {
	dir := t.TempDir()
	s := openRW(t, dir)
	defer s.Close()
	start := time.Now()
	_, err := Open(dir, OpenOptions{Wait: 300 * time.Millisecond})
	if !errors.Is(err, ErrInUse) || !strings.Contains(err.Error(), "in use by another") {
		t.Fatalf("want ErrInUse, got %v", err)
	}
	if el := time.Since(start); el < 250*time.Millisecond {
		t.Fatalf("gave up after %s, before the stated wait", el)
	}
}

func TestReadOnlyMissingArchive(t *testing.T) {
	_, err := Open(filepath.Join(t.TempDir(), "nope"), OpenOptions{ReadOnly: true})
	if !errors.Is(err, ErrNoArchive) {
		t.Fatalf("want ErrNoArchive, got %v", err)
	}
}

// TestReadOnlyAfterUncleanExit: a child process writes records and exits
// without closing the store (as a killed process would); a read-only open
// then still works and sees every committed record.
func TestReadOnlyAfterUncleanExit(t *testing.T) {
	if dir := os.Getenv("MOLTRAIL_ARCHIVE_CHILD"); dir != "" {
		s, err := Open(dir, OpenOptions{})
		if err != nil {
			fmt.Fprintln(os.Stderr, err)
			os.Exit(3)
		}
		var recs []*Record
		for i := 0; i < 20; i++ {
			recs = append(recs, fixture(t, i, "hf", "sto-3g", nil, t0))
		}
		if _, err := s.PutMany(recs); err != nil {
			os.Exit(4)
		}
		os.Exit(0) // no Close: the memtable and its log stay as a crash leaves them
	}
	dir := t.TempDir()
	cmd := exec.Command(os.Args[0], "-test.run=^TestReadOnlyAfterUncleanExit$")
	cmd.Env = append(os.Environ(), "MOLTRAIL_ARCHIVE_CHILD="+dir)
	if out, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("child: %v\n%s", err, out)
	}
	var log bytes.Buffer
	s, err := Open(dir, OpenOptions{ReadOnly: true, Log: &log})
	if err != nil {
		t.Fatalf("read-only open after an unclean exit: %v", err)
	}
	defer s.Close()
	t.Logf("open said: %q", log.String())
	if n, _ := s.Count(); n != 20 {
		t.Fatalf("%d records after unclean exit, want 20", n)
	}
	if v, _ := s.Verify(); len(v.Problems) != 0 {
		t.Fatalf("verify: %+v", v.Problems)
	}
}

func TestParsePrinted(t *testing.T) {
	cases := []struct {
		in        string
		low, high float64
	}{
		{"1.93", 1.925, 1.935},
		{"-76.0268", -76.02685, -76.02675},
		{"95.8", 95.75, 95.85},
		{"9.58e1", 95.75, 95.85},
		{"104", 103.5, 104.5},
	}
	for _, c := range cases {
		p, err := ParsePrinted(c.in)
		if err != nil || math.Abs(p.Low-c.low) > 1e-12 || math.Abs(p.High-c.high) > 1e-12 {
			t.Errorf("%s: [%v, %v) %v, want [%v, %v)", c.in, p.Low, p.High, err, c.low, c.high)
		}
	}
	if _, err := ParsePrinted("1.9.3"); err == nil {
		t.Error("1.9.3 accepted")
	}
}

// TestNotesTravel: notes follow their records through export and import;
// a changed note and a note without its record are refused by line; a
// second import finds them present.
func TestNotesTravel(t *testing.T) {
	src := openRW(t, t.TempDir())
	defer src.Close()
	a := fixture(t, 1, "hf", "sto-3g", nil, t0)
	b := fixture(t, 2, "hf", "sto-3g", nil, t0.Add(time.Minute))
	src.PutMany([]*Record{a, b})
	if _, err := src.AddNote(a.ID, "first remark", t0.Add(time.Hour)); err != nil {
		t.Fatal(err)
	}
	if _, err := src.AddNote(a.ID, "second remark", t0.Add(2*time.Hour)); err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	recs, notes, err := src.ExportNotes(&buf, Filter{})
	if err != nil || recs != 2 || notes != 2 {
		t.Fatalf("export: %d records %d notes %v", recs, notes, err)
	}
	lines := strings.Split(strings.TrimSpace(buf.String()), "\n")
	if len(lines) != 4 || !strings.Contains(lines[1], `"first remark"`) || !strings.Contains(lines[2], `"second remark"`) {
		t.Fatalf("notes should follow their record, oldest first:\n%s", buf.String())
	}
	dst := openRW(t, t.TempDir())
	defer dst.Close()
	rep, err := dst.Import(strings.NewReader(buf.String()), "x.jsonl", ImportPolicy{})
	if err != nil || rep.Imported != 2 || rep.Notes != 2 || rep.NotesAdded != 2 || len(rep.Refused) != 0 {
		t.Fatalf("import: %+v %v", rep, err)
	}
	want, _ := src.Notes(a.ID)
	got, _ := dst.Notes(a.ID)
	if fmt.Sprint(got) != fmt.Sprint(want) {
		t.Errorf("imported notes %v, want %v", got, want)
	}
	if rep, _ := dst.Import(strings.NewReader(buf.String()), "x.jsonl", ImportPolicy{}); rep.NotesPresent != 2 || rep.NotesAdded != 0 || len(rep.Refused) != 0 {
		t.Errorf("second import: %+v", rep)
	}
	if v, _ := dst.Verify(); v.Notes != 2 || len(v.Problems) != 0 {
		t.Errorf("verify after import: %+v", v)
	}
	// Only b's line and a's notes: the notes have no record to go with.
	orphan := lines[3] + "\n" + lines[1] + "\n" + strings.Replace(lines[2], "second remark", "altered remark", 1) + "\n"
	third := openRW(t, t.TempDir())
	defer third.Close()
	if rep, err := third.Import(strings.NewReader(orphan), "y.jsonl", ImportPolicy{}); !errors.Is(err, ErrRefused) || rep.Imported != 0 || len(rep.Refused) != 2 {
		t.Fatalf("all or nothing: a refused note should stop the import: %+v %v", rep, err)
	}
	rep, err = third.Import(strings.NewReader(orphan), "y.jsonl", ImportPolicy{Partial: true})
	if err != nil || rep.Imported != 1 || len(rep.Refused) != 2 {
		t.Fatalf("import of orphan and altered notes: %+v %v", rep, err)
	}
	for _, want := range []string{"y.jsonl:3: note", "y.jsonl:2: note"} {
		found := false
		for _, r := range rep.Refused {
			found = found || strings.HasPrefix(r.Reason, want)
		}
		if !found {
			t.Errorf("no refusal starts with %q: %+v", want, rep.Refused)
		}
	}
	if !strings.Contains(fmt.Sprint(rep.Refused), "does not match the content") || !strings.Contains(fmt.Sprint(rep.Refused), "is neither in the archive nor accepted from the same file") {
		t.Errorf("refusals should say why: %+v", rep.Refused)
	}
}

// TestDiffNoise: a difference below one unit of the last printed digit
// (1e-10 hartree, 1e-6 D) is noise; above it, or a quantity on one side
// only, is a real difference.
func TestDiffNoise(t *testing.T) {
	a := fixture(t, 1, "hf", "sto-3g", nil, t0)
	b := *a
	b.Results.EnergyHartree += 3e-11   // noise
	b.Results.SCFEnergyHartree += 2e-9 // real
	d1 := [3]float64{0, 0, 4e-7}       // noise
	d2 := [3]float64{0, 0, 2e-6}       // real
	b.Results.DipoleDebye, b.Results.SCFDipoleDebye = &d1, &d2
	c := 0.1
	b.Results.CorrelationEnergyHartree = &c // on one side only
	b.ID = ""
	if err := b.Seal(); err != nil {
		t.Fatal(err)
	}
	want := map[string]bool{"energy_hartree": true, "scf_energy_hartree": false, "dipole_debye.z": true, "dipole_debye magnitude": true,
		"scf_dipole_debye.z": false, "scf_dipole_debye magnitude": false, "correlation_energy_hartree": false,
		// a lists no SCF dipole (it equals the dipole there): b's is on one side only.
		"scf_dipole_debye.x": false, "scf_dipole_debye.y": false}
	got := map[string]bool{}
	for _, r := range Diff(a, &b).Results {
		got[r.Quantity] = r.Noise
		if r.Resolution == 0 {
			t.Errorf("%s: no printed resolution", r.Quantity)
		}
	}
	for q, noise := range want {
		if n, ok := got[q]; !ok || n != noise {
			t.Errorf("%s: noise %v (listed %v), want %v", q, n, ok, noise)
		}
	}
	if len(got) != len(want) {
		t.Errorf("differences %v, want those of %v", got, want)
	}
}
