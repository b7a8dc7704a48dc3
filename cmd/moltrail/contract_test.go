package main

import (
	"bytes"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"moltrail/archive"
	"moltrail/engine"
	"moltrail/engine/molecule"
)

// These tests hold every command to the outside contract through
// dispatch, in-process: bad usage or input exits 2, failed work exits 1,
// each with one sentence on stderr naming what is at fault, nothing on
// stdout, never a panic, and no archive created or changed by a refusal;
// --json prints exactly one JSON value.

// call runs one command line through dispatch.
func call(args ...string) result {
	var out, errb bytes.Buffer
	code := dispatch(args, &out, &errb)
	return result{out.String(), errb.String(), code}
}

// contractFixture is an archive with two H2 records (STO-3G, RHF and
// UHF), a molecule file and the ids, shared by the tests of this file.
type contractFixture struct {
	dir, arch, xyz string
	ids            []string
}

func newContractFixture(t *testing.T) *contractFixture {
	t.Helper()
	f := &contractFixture{dir: t.TempDir()}
	f.arch = filepath.Join(f.dir, "arch")
	f.xyz = writeFile(t, f.dir, "h2.xyz", h2XYZ)
	for _, m := range []string{"rhf", "uhf"} {
		r := call("run", "--archive", f.arch, "--basis", "sto-3g", "--method", m, "--json", f.xyz)
		if r.code != 0 {
			t.Fatalf("run %s: exit %d: %s", m, r.code, r.stderr)
		}
		f.ids = append(f.ids, decodeRecord(t, r.stdout).ID)
	}
	return f
}

// snapshot is the archive's whole content (records and notes as exported,
// plus the verify counts), to show that a refused command changed nothing.
func (f *contractFixture) snapshot(t *testing.T, arch string) string {
	t.Helper()
	if _, err := os.Stat(arch); err != nil {
		return "(none)"
	}
	e := call("export", "--archive", arch, "--out", "-")
	v := call("verify", "--archive", arch, "--json")
	return e.stdout + v.stdout
}

func TestBadInputContract(t *testing.T) {
	f := newContractFixture(t)
	d := f.dir
	xyz := func(name, text string) string { return writeFile(t, d, name, text) }
	fresh := filepath.Join(d, "fresh") // must never come into being
	plain := writeFile(t, d, "plain.txt", "not an archive")
	other := filepath.Join(d, "other")
	os.Mkdir(other, 0o755)
	writeFile(t, other, "mine.txt", "someone's file")
	refs := func(name, entry string) string {
		return writeFile(t, d, name, `{"format": "moltrail-refset/1", "name": "t", "description": "", "source": "s", "entries": [`+entry+`]}`)
	}
	const okEntry = `{"id": "h.r", "molecule": {"name": "hydrogen", "formula": "H2", "atoms": ["H","H"]}, "quantity": {"kind": "bond_length", "atoms": [0,1]}, "value": 74.1, "unit": "pm", "uncertainty": 0.1, "kind": "experiment", "source": "s"}`
	exported := call("export", "--archive", f.arch, "--out", "-").stdout
	line1 := strings.SplitN(exported, "\n", 2)[0]

	cases := []struct {
		name string
		args []string
		want string // in the one stderr line
	}{
		// Molecule files.
		{"xyz count too high", []string{"run", "--archive", fresh, xyz("hi.xyz", "3\nw\nH 0 0 0\nH 0 0 1\n")}, "hi.xyz:5: the count line promises 3 atoms"},
		{"xyz count too low", []string{"run", "--archive", fresh, xyz("lo.xyz", "1\nw\nH 0 0 0\nH 0 0 1\n")}, "lo.xyz:4:"},
		{"xyz count not a number", []string{"run", "--archive", fresh, xyz("word.xyz", "two\nw\nH 0 0 0\nH 0 0 1\n")}, "word.xyz:1:"},
		{"xyz unknown element", []string{"run", "--archive", fresh, xyz("el.xyz", "2\nw\nXx 0 0 0\nH 0 0 1\n")}, `el.xyz:3: unknown element symbol "Xx"`},
		{"xyz non-numeric", []string{"run", "--archive", fresh, xyz("nn.xyz", "2\nw\nH 0 0 abc\nH 0 0 1\n")}, `nn.xyz:3: coordinate z "abc" is not a number`},
		{"xyz NaN", []string{"run", "--archive", fresh, xyz("nan.xyz", "2\nw\nH 0 NaN 0\nH 0 0 1\n")}, "nan.xyz:3: coordinate y is NaN"},
		{"xyz duplicate atoms", []string{"run", "--archive", fresh, xyz("dup.xyz", "2\nw\nH 0 0 0.5\nH 0 0 0.5\n")}, "dup.xyz:4: atom 2 (H) sits on the position of atom 1"},
		{"xyz empty", []string{"run", "--archive", fresh, xyz("empty.xyz", "")}, "empty.xyz:1:"},
		{"z-matrix", []string{"run", "--archive", fresh, xyz("w.zmat", "O\nH 1 0.96\nH 1 0.96 2 104.5\n")}, "w.zmat looks like a Z-matrix (internal coordinates), which moltrail does not read: moltrail reads XYZ and extended XYZ"},
		{"not a molecule file", []string{"run", "--archive", fresh, xyz("w.txt", "water, please\n")}, "w.txt is not a molecule file moltrail can read: moltrail reads XYZ"},
		{"atoms too close", []string{"run", "--archive", fresh, xyz("close.xyz", "2\nw\nH 0 0 0\nH 0 0 0.01\n")}, "atoms H1 and H2 are 0.010 Å apart, closer than the physical minimum of 0.310 Å"},
		{"too many atoms", []string{"run", "--archive", fresh, xyz("big.xyz", "20000\nw\nH 0 0 0\n")}, "big.xyz:1: the file promises 20000 atoms; moltrail accepts molecules of at most 1000 atoms"},
		{"origin point without coordinates", []string{"run", "--archive", fresh, "--origin", "point", f.xyz}, "a point needs its coordinates, point:X,Y,Z in ångström"},
		{"origin atom not there", []string{"run", "--archive", fresh, "--origin", "atom:3", f.xyz}, "multipole origin: atom 3 does not exist (the molecule has 2 atoms)"},
		{"xyz missing", []string{"run", "--archive", fresh, filepath.Join(d, "absent.xyz")}, "absent.xyz: no such file"},
		{"xyz is a directory", []string{"run", "--archive", fresh, d}, "is a directory"},
		// Levels and electrons.
		{"unknown basis", []string{"run", "--archive", fresh, "--basis", "no-such-basis", f.xyz}, `basis "no-such-basis" is not in the library`},
		{"basis lacks element", []string{"run", "--archive", fresh, "--basis", "6-311++G**", xyz("kr.xyz", "1\nkrypton\nKr 0 0 0\n")}, `basis "6-311++G**" has no functions for element Kr`},
		{"impossible multiplicity", []string{"run", "--archive", fresh, "--multiplicity", "2", f.xyz}, "multiplicity 2 is impossible with 2 electrons"},
		{"no electrons left", []string{"run", "--archive", fresh, "--charge", "2", f.xyz}, "charge +2 leaves 0 electrons"},
		{"too many unpaired", []string{"run", "--archive", fresh, "--multiplicity", "5", f.xyz}, "multiplicity 5 needs 4 unpaired electrons"},
		{"unknown method", []string{"run", "--archive", fresh, "--method", "cisd", f.xyz}, `method "cisd" is not known`},
		{"open-shell coupled cluster", []string{"run", "--archive", fresh, "--method", "ccsd(t)", "--multiplicity", "3", f.xyz}, "needs a closed-shell (RHF) reference"},
		{"unknown task", []string{"run", "--archive", fresh, "--task", "freq", f.xyz}, `task "freq" is not known`},
		{"frozen core with hf", []string{"run", "--archive", fresh, "--frozen-core", f.xyz}, "frozen core applies to correlated methods"},
		{"negative threads", []string{"run", "--archive", fresh, "--threads", "-1", f.xyz}, "--threads -1"},
		{"memory limit without unit", []string{"run", "--archive", fresh, "--memory-limit", "4", f.xyz}, `--memory-limit: memory size "4" needs a unit`},
		{"study memory limit too small", []string{"study", "--archive", fresh, "--memory-limit", "1MiB", f.xyz}, `--memory-limit: memory size "1MiB" is below the smallest limit`},
		{"bad tag", []string{"run", "--archive", fresh, "--tag", "novalue", f.xyz}, `--tag "novalue" must be KEY=VALUE`},
		{"two molecule files", []string{"run", "--archive", fresh, f.xyz, f.xyz}, "give exactly one molecule file"},
		{"cartesian and spherical", []string{"run", "--archive", fresh, "--cartesian", "--spherical", f.xyz}, "exclude each other"},
		// Flags.
		{"unknown flag", []string{"run", "--archive", fresh, "--chrge", "1", f.xyz}, "there is no flag --chrge"},
		{"flag value not a number", []string{"run", "--archive", fresh, "--charge", "one", f.xyz}, `--charge "one": a whole number is needed`},
		{"flag lacks its value", []string{"run", f.xyz, "--archive"}, "--archive needs a value"},
		{"bad duration", []string{"list", "--archive", f.arch, "--wait", "5"}, `--wait "5": a duration`},
		{"unknown command", []string{"frobnicate"}, `"frobnicate" is not a command`},
		{"help for unknown command", []string{"help", "frobnicate"}, `"frobnicate" is not a command`},
		{"version argument", []string{"version", "extra"}, `unexpected argument "extra"`},
		{"command flag before the command", []string{"--method", "hf", "list", "--archive", f.arch}, "--method before the command: only --archive, --wait and --json"},
		{"global flag without its value", []string{"--archive"}, "--archive needs a value"},
		{"global flags without a command", []string{"--archive", f.arch, "--json"}, "give a command after --archive"},
		// Archive places.
		{"archive is a file (read)", []string{"list", "--archive", plain}, "is a file, not an archive directory"},
		{"archive is a file (run)", []string{"run", "--archive", plain, f.xyz}, "is a file, not an archive directory"},
		{"archive dir of other files", []string{"run", "--archive", other, f.xyz}, "holds 1 file(s) but no archive"},
		{"no archive", []string{"list", "--archive", fresh}, "no archive at"},
		// Record ids.
		{"id not hex", []string{"show", "--archive", f.arch, "zzzz"}, `record id "zzzz" must be 4 to 64 hex digits`},
		{"id too short", []string{"show", "--archive", f.arch, "ab"}, "must be 4 to 64 hex digits"},
		{"unknown id", []string{"show", "--archive", f.arch, unknownPrefix(f.ids)}, "no record id starts with"},
		{"diff unknown id", []string{"diff", "--archive", f.arch, f.ids[0], unknownPrefix(f.ids)}, "no record id starts with"},
		{"diff one id", []string{"diff", "--archive", f.arch, f.ids[0]}, "give two record ids"},
		{"note without text", []string{"note", "--archive", f.arch, f.ids[0], " "}, "give a record id and the note text"},
		{"reproduce unknown id", []string{"reproduce", "--archive", f.arch, unknownPrefix(f.ids)}, "no record id starts with"},
		// Filters.
		{"bad status", []string{"list", "--archive", f.arch, "--status", "ok"}, `--status "ok"`},
		{"bad since", []string{"list", "--archive", f.arch, "--since", "last tuesday"}, `--since "last tuesday"`},
		{"bad until", []string{"compare", "--archive", f.arch, "--refs", "builtin", "--until", "soon"}, `--until "soon"`},
		// Output files.
		{"export to a directory", []string{"export", "--archive", f.arch, "--out", d}, "is a directory"},
		{"export to a missing directory", []string{"export", "--archive", f.arch, "--out", filepath.Join(d, "no", "x.jsonl")}, "does not exist"},
		{"report to a missing directory", []string{"report", "--archive", f.arch, "--refs", "builtin", "--out", filepath.Join(d, "no", "r.pdf")}, "does not exist"},
		{"report to a directory", []string{"report", "--archive", f.arch, "--refs", "builtin", "--out", d}, "is a directory"},
		{"report config unknown key", []string{"report", "--archive", f.arch, "--refs", "builtin", "--out", filepath.Join(d, "r.pdf"), "--config", writeFile(t, d, "c1.json", `{"titel": "x"}`)}, `unknown key "titel"`},
		{"report config wrong type", []string{"report", "--archive", f.arch, "--refs", "builtin", "--out", filepath.Join(d, "r.pdf"), "--config", writeFile(t, d, "c2.json", `{"title": 3}`)}, `"title" must be text`},
		{"report bad format", []string{"report", "--archive", f.arch, "--refs", "builtin", "--format", "docx", "--out", filepath.Join(d, "r.docx")}, `--format "docx"`},
		// Imports: nothing is imported from a bad file.
		{"import missing file", []string{"import", "--archive", f.arch, filepath.Join(d, "absent.jsonl")}, "absent.jsonl: no such file"},
		{"import garbage line", []string{"import", "--archive", f.arch, writeFile(t, d, "g.jsonl", line1+"\n]]]\n")}, "g.jsonl:2: not valid JSON"},
		{"import truncated", []string{"import", "--archive", f.arch, writeFile(t, d, "cut.jsonl", line1[:len(line1)/2])}, "cut.jsonl:1: the last line is incomplete"},
		{"import wrong schema", []string{"import", "--archive", f.arch, writeFile(t, d, "schema.jsonl", `{"id": "x"}`+"\n")}, "schema.jsonl:1: field /: missing properties"},
		// Reference sets.
		{"refs empty", []string{"compare", "--archive", f.arch, "--refs", ""}, "reference set"},
		{"refs unknown set", []string{"compare", "--archive", f.arch, "--refs", "no-such-set"}, `reference set "no-such-set" is neither a built-in set`},
		{"refs unknown molecule formula", []string{"compare", "--archive", f.arch, "--refs", refs("mol.json", strings.Replace(okEntry, `"formula": "H2"`, `"formula": "Uo2"`, 1))}, `entry "h.r"`},
		{"refs unknown unit", []string{"compare", "--archive", f.arch, "--refs", refs("unit.json", strings.Replace(okEntry, `"pm"`, `"furlong"`, 1))}, `entry "h.r" (hydrogen): unit "furlong" is not known`},
		{"refs atom index", []string{"compare", "--archive", f.arch, "--refs", refs("idx.json", strings.Replace(okEntry, `[0,1]`, `[0,5]`, 1))}, "atom index 5 is out of range"},
		{"refs malformed JSON", []string{"compare", "--archive", f.arch, "--refs", writeFile(t, d, "broken.json", "{\n\"format\": \"moltrail-refset/1\",\n\"name\": }")}, "broken.json: line 3"},
		{"refs in report", []string{"report", "--archive", f.arch, "--out", filepath.Join(d, "r.pdf"), "--refs", refs("unit2.json", strings.Replace(okEntry, `"pm"`, `"furlong"`, 1))}, `unit "furlong"`},
		{"compare bootstrap range", []string{"compare", "--archive", f.arch, "--refs", "builtin", "--bootstrap", "5"}, "--bootstrap 5 is outside"},
		// Trace.
		{"trace not a number", []string{"trace", "--archive", f.arch, "abc"}, `"abc" is not a number`},
		{"trace unknown unit", []string{"trace", "--archive", f.arch, "1.5", "--unit", "furlong"}, `--unit "furlong" is not known`},
		{"basis unknown name", []string{"basis", "no-such-basis"}, "no library set is called no-such-basis"},
		// Study files: the place and the key meant.
		{"study key slip", []string{"study", "--archive", fresh, writeFile(t, d, "slip.json", "{\n  \"format\": \"moltrail-study/1\",\n  \"name\": \"x\",\n  \"level\": []\n}\n")}, `slip.json: line 4, column 3: unknown key "level" at the top level; did you mean "levels"?`},
	}
	before := f.snapshot(t, f.arch)
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			r := call(c.args...)
			checkRefusal(t, r, exitUsage, c.want)
		})
	}
	if after := f.snapshot(t, f.arch); after != before {
		t.Error("a refused command changed the archive")
	}
	if _, err := os.Stat(fresh); err == nil {
		t.Error("a refused command created an archive")
	}
	if ents, _ := os.ReadDir(other); len(ents) != 1 {
		t.Errorf("a refused run wrote into a directory of other files: %d entries", len(ents))
	}
	for _, p := range []string{filepath.Join(d, "r.pdf"), filepath.Join(d, "r.docx")} {
		if _, err := os.Stat(p); err == nil {
			t.Errorf("a refused report left %s behind", p)
		}
	}
}

// checkRefusal: exit code, nothing on stdout, one line on stderr that
// carries want and starts with the program's name, no panic.
func checkRefusal(t *testing.T, r result, code int, want string) {
	t.Helper()
	if r.code != code {
		t.Errorf("exit %d, want %d (stderr %q)", r.code, code, r.stderr)
	}
	if r.stdout != "" {
		t.Errorf("stdout not empty: %q", r.stdout)
	}
	msg := strings.TrimSpace(r.stderr)
	if strings.Count(msg, "\n") > 0 {
		t.Errorf("stderr is %d lines, want one sentence: %q", strings.Count(msg, "\n")+1, msg)
	}
	if !strings.HasPrefix(msg, "moltrail") || !strings.Contains(msg, want) {
		t.Errorf("stderr %q should say %q", msg, want)
	}
	if strings.Contains(msg, "panic") || strings.Contains(msg, "internal error") || strings.Contains(msg, "goroutine") {
		t.Errorf("a crash reached the user: %q", msg)
	}
}

// unknownPrefix is a 6-digit id prefix that no record in ids has.
func unknownPrefix(ids []string) string {
	for i := 0; ; i++ {
		p := fmt.Sprintf("%06x", i)
		taken := false
		for _, id := range ids {
			taken = taken || strings.HasPrefix(id, p)
		}
		if !taken {
			return p
		}
	}
}

// TestAmbiguousPrefix: two records whose ids share their first four hex
// digits; the four-digit prefix is refused naming both, five digits work.
func TestAmbiguousPrefix(t *testing.T) {
	f := newContractFixture(t)
	base := decodeRecord(t, call("show", "--archive", f.arch, "--json", f.ids[0]).stdout)
	seen := map[string]*archive.Record{}
	var a, b *archive.Record
	for i := 0; a == nil; i++ { // about 300 seals until two ids share 4 digits
		c := *base
		c.Tags = map[string]string{"copy": fmt.Sprint(i)}
		c.Lineage = nil
		if err := c.Seal(); err != nil {
			t.Fatal(err)
		}
		if o, ok := seen[c.ID[:4]]; ok && o.ID[:5] != c.ID[:5] {
			a, b = o, &c
		}
		seen[c.ID[:4]] = &c
	}
	var lines []string
	for _, r := range []*archive.Record{a, b} {
		enc, _ := r.Encode()
		lines = append(lines, string(enc))
	}
	if r := call("import", "--archive", f.arch, writeFile(t, f.dir, "pair.jsonl", strings.Join(lines, "\n")+"\n")); r.code != 0 {
		t.Fatalf("import: %s", r.stderr)
	}
	r := call("show", "--archive", f.arch, a.ID[:4])
	checkRefusal(t, r, exitUsage, "is ambiguous")
	if !strings.Contains(r.stderr, a.ID[:12]) || !strings.Contains(r.stderr, b.ID[:12]) {
		t.Errorf("the ambiguity should name both records: %q", r.stderr)
	}
	if r := call("show", "--archive", f.arch, "--json", a.ID[:5]); r.code != 0 || decodeRecord(t, r.stdout).ID != a.ID {
		t.Errorf("a longer prefix should find the record: exit %d %s", r.code, r.stderr)
	}
}

// TestDamagedArchive: table files cut short or overwritten are named in
// one sentence with exit 1 by every reading and writing command; nothing
// panics.
func TestDamagedArchive(t *testing.T) {
	f := newContractFixture(t)
	ssts, _ := filepath.Glob(filepath.Join(f.arch, "*.sst"))
	if len(ssts) == 0 {
		t.Fatal("the fixture archive has no table file")
	}
	for _, damage := range []struct {
		name string
		do   func(path string) error
	}{
		{"truncated", func(p string) error { return os.Truncate(p, 50) }},
		{"emptied", func(p string) error { return os.Truncate(p, 0) }},
	} {
		t.Run(damage.name, func(t *testing.T) {
			arch := filepath.Join(t.TempDir(), "copy")
			copyDir(t, f.arch, arch)
			if err := damage.do(filepath.Join(arch, filepath.Base(ssts[0]))); err != nil {
				t.Fatal(err)
			}
			for _, args := range [][]string{
				{"list"}, {"verify"}, {"show", f.ids[0]}, {"export", "--out", "-"},
				{"compare", "--refs", "builtin"}, {"trace", "1.0"}, {"note", f.ids[0], "x"},
				{"run", "--basis", "sto-3g", "--force", f.xyz},
			} {
				r := call(append(args, "--archive", arch)...)
				checkRefusal(t, r, exitFailed, "is damaged: table file")
			}
		})
	}
}

func copyDir(t *testing.T, from, to string) {
	t.Helper()
	if err := os.MkdirAll(to, 0o755); err != nil {
		t.Fatal(err)
	}
	ents, err := os.ReadDir(from)
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range ents {
		b, err := os.ReadFile(filepath.Join(from, e.Name()))
		if err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(to, e.Name()), b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
}

// TestJSONOutputIsOneValue: with --json every command prints exactly one
// JSON value on stdout and nothing else there.
func TestJSONOutputIsOneValue(t *testing.T) {
	f := newContractFixture(t)
	d := f.dir
	out := filepath.Join(d, "all.jsonl")
	for _, args := range [][]string{
		{"run", "--archive", f.arch, "--basis", "sto-3g", f.xyz},
		{"list", "--archive", f.arch},
		{"list", "--archive", f.arch, "--molecule", "nothing"},
		{"list", "--archive", f.arch, "--overview"},
		{"geometry", "--archive", f.arch, f.ids[0][:8]},
		{"show", "--archive", f.arch, f.ids[0][:8]},
		{"verify", "--archive", f.arch},
		{"export", "--archive", f.arch, "--out", out},
		{"import", "--archive", filepath.Join(d, "second"), out},
		{"import", "--archive", filepath.Join(d, "second"), writeFile(t, d, "empty.jsonl", "")},
		{"note", "--archive", f.arch, f.ids[0], "checked"},
		{"basis", "sto-3g"},
		{"version"},
		{"trace", "--archive", f.arch, "74.0", "--unit", "pm"},
		{"trace", "--archive", f.arch, "-1.11"},
		{"diff", "--archive", f.arch, f.ids[0], f.ids[1]},
		{"compare", "--archive", f.arch, "--refs", "builtin"},
		{"report", "--archive", f.arch, "--refs", "builtin", "--out", filepath.Join(d, "r.md")},
		{"reproduce", "--archive", f.arch, f.ids[0]},
	} {
		t.Run(args[0], func(t *testing.T) {
			r := call(append(args, "--json")...)
			if r.code != exitOK {
				t.Fatalf("%v: exit %d: %s", args, r.code, r.stderr)
			}
			dec := json.NewDecoder(strings.NewReader(r.stdout))
			var v any
			if err := dec.Decode(&v); err != nil {
				t.Fatalf("%v: stdout is not JSON: %v\n%s", args, err, r.stdout)
			}
			if dec.More() || strings.TrimSpace(r.stdout[dec.InputOffset():]) != "" {
				t.Fatalf("%v: more than one JSON value on stdout:\n%s", args, r.stdout)
			}
		})
	}
	if _, err := os.Stat(filepath.Join(d, "second")); err != nil {
		t.Errorf("the non-empty import did not create its archive: %v", err)
	}
}

// TestHelp: help goes to stdout with exit 0 and lists every flag as
// --name; a bare moltrail prints the overview on stderr with exit 2.
func TestHelp(t *testing.T) {
	r := call()
	if r.code != exitUsage || r.stdout != "" || !strings.Contains(r.stderr, "usage: moltrail COMMAND") {
		t.Errorf("bare moltrail: exit %d, stdout %q", r.code, r.stdout)
	}
	r = call("help")
	if r.code != exitOK || r.stderr != "" {
		t.Errorf("help: exit %d, stderr %q", r.code, r.stderr)
	}
	for name := range commands {
		if !strings.Contains(r.stdout, "  "+name+" ") {
			t.Errorf("help does not list %s", name)
		}
	}
	for _, name := range []string{"run", "list", "show", "verify", "export", "import", "note", "basis", "version", "reproduce", "trace", "diff", "compare", "report", "key", "trust"} {
		for _, form := range [][]string{{"help", name}, {name, "--help"}, {name, "-h"}} {
			r := call(form...)
			if r.code != exitOK || r.stderr != "" || !strings.HasPrefix(r.stdout, "moltrail "+name+" — ") || !strings.Contains(r.stdout, "usage: moltrail "+name) {
				t.Errorf("%v: exit %d, stderr %q, stdout starts %q", form, r.code, r.stderr, firstLine(r.stdout))
			}
			if singleDash.MatchString(r.stdout) || strings.Contains(r.stdout, "`") {
				t.Errorf("%v: flags should read --name VALUE:\n%s", form, r.stdout)
			}
		}
	}
}

var singleDash = regexp.MustCompile(`\n  -[a-z]`)

func firstLine(s string) string {
	l, _, _ := strings.Cut(s, "\n")
	return l
}

// TestParseFlags: flags before, between and after arguments; negative
// numbers are arguments unless a flag takes them as its value; "--" ends
// the flags.
func TestParseFlags(t *testing.T) {
	cases := []struct {
		args  []string
		pos   []string
		n     int
		json  bool
		code  int
		valid bool
	}{
		{[]string{"a", "--n", "3", "b"}, []string{"a", "b"}, 3, false, 0, true},
		{[]string{"-76.0268", "--json"}, []string{"-76.0268"}, 0, true, 0, true},
		{[]string{"--n", "-2", "-.5"}, []string{"-.5"}, -2, false, 0, true},
		{[]string{"--n=-4", "x"}, []string{"x"}, -4, false, 0, true},
		{[]string{"--json", "--", "--n", "-x"}, []string{"--n", "-x"}, 0, true, 0, true},
		{[]string{"-x"}, nil, 0, false, exitUsage, false},
		{[]string{"--n", "many"}, nil, 0, false, exitUsage, false},
		{[]string{"--help"}, nil, 0, false, exitOK, false},
	}
	for _, c := range cases {
		var errb bytes.Buffer
		fs := newFlags("probe", &errb, "[ARGS]")
		n := fs.Int("n", 0, "a number")
		js := fs.Bool("json", false, "JSON")
		pos, code, ok := parseFlags(fs, c.args)
		if ok != c.valid || code != c.code {
			t.Errorf("%q: ok %v code %d, want %v %d (%s)", c.args, ok, code, c.valid, c.code, errb.String())
			continue
		}
		if !ok {
			continue
		}
		if strings.Join(pos, "|") != strings.Join(c.pos, "|") || *n != c.n || *js != c.json {
			t.Errorf("%q: pos %q n %d json %v, want %q %d %v", c.args, pos, *n, *js, c.pos, c.n, c.json)
		}
	}
}

// TestHumanOutputForms: times in UTC ISO 8601, energies with units, no
// negative zeros, charge 0 without a sign.
func TestHumanOutputForms(t *testing.T) {
	f := newContractFixture(t)
	show := call("show", "--archive", f.arch, f.ids[0]).stdout
	for _, want := range []string{"charge 0,", "hartree", "started UTC", "Z\n"} {
		if !strings.Contains(show, want) {
			t.Errorf("show lacks %q:\n%s", want, show)
		}
	}
	if strings.Contains(show, "-0.000000 ") || strings.Contains(show, "-0.000000,") || strings.Contains(show, "-0.000000)") || strings.Contains(show, "+0,") {
		t.Errorf("show prints a negative zero or +0:\n%s", show)
	}
	list := call("list", "--archive", f.arch).stdout
	// One level label everywhere (archive.LevelLabel): the open-shell
	// reference is part of it.
	if !strings.Contains(list, "UHF/STO-3G") || !strings.Contains(list, "HF/STO-3G") || !strings.Contains(list, "energy/hartree") || !strings.Contains(list, "started UTC") {
		t.Errorf("list should show the level label, the energy unit and UTC times:\n%s", list)
	}
	if !strings.Contains(show, "HF/STO-3G (spherical functions)") || !strings.Contains(show, "is the geometry given as input") {
		t.Errorf("show should give the level label and the geometry source:\n%s", show)
	}
	for _, c := range []struct {
		v    float64
		prec int
		want string
	}{{-1e-17, 6, "0.000000"}, {-0.0, 3, "0.000"}, {-0.0000004, 6, "0.000000"}, {-0.0000006, 6, "-0.000001"}, {-76.5, 1, "-76.5"}} {
		if got := fixed(c.v, c.prec); got != c.want {
			t.Errorf("fixed(%g, %d) = %q, want %q", c.v, c.prec, got, c.want)
		}
	}
}

// TestReuseSaysWhy: every run says in one line why it computed or reused:
// no record of the input, the same code identity, a record made from other
// source, or --force.
func TestReuseSaysWhy(t *testing.T) {
	d := t.TempDir()
	arch := filepath.Join(d, "arch")
	xyz := writeFile(t, d, "h2.xyz", h2XYZ)
	first := call("run", "--archive", arch, "--basis", "sto-3g", "--json", xyz)
	rec := decodeRecord(t, first.stdout)
	other := *rec
	other.Code.SourceSHA256 = strings.Repeat("0", 64)
	other.Lineage, other.ID = nil, ""
	if err := other.Seal(); err != nil {
		t.Fatal(err)
	}
	enc, _ := other.Encode()
	arch2 := filepath.Join(d, "arch2")
	if r := call("import", "--archive", arch2, writeFile(t, d, "other.jsonl", string(enc)+"\n")); r.code != 0 {
		t.Fatalf("import: %s", r.stderr)
	}
	for _, c := range []struct {
		name string
		r    result
		want string
	}{
		{"nothing stored", first, "moltrail run: computed, because the archive holds no record of this input\n"},
		{"same code", call("run", "--archive", arch, "--basis", "sto-3g", xyz),
			"moltrail run: reused, nothing was computed: record " + rec.ID[:12] + " holds this input and was made by this code: the same source (sha256 " + archive.CurrentCode().SourceSHA256[:12] + "…)"},
		{"other source", call("run", "--archive", arch2, "--basis", "sto-3g", xyz),
			"moltrail run: computed, because the archive holds 1 record(s) of this input, none made by this code (newest, record " + other.ID[:12] + ": it was made from other source (source sha256 000000000000…"},
		{"forced", call("run", "--archive", arch, "--basis", "sto-3g", "--force", xyz),
			"moltrail run: computed again because of --force, although record " + rec.ID[:12] + " holds this input"},
	} {
		if c.r.code != 0 || !strings.Contains(c.r.stderr, c.want) {
			t.Errorf("%s: exit %d, stderr should say %q:\n%s", c.name, c.r.code, c.want, c.r.stderr)
		}
	}
}

// TestGlobalFlagsBeforeCommand: --archive, --wait and --json may come
// before the command name and mean what they mean after it.
func TestGlobalFlagsBeforeCommand(t *testing.T) {
	f := newContractFixture(t)
	for _, c := range []struct{ before, after []string }{
		{[]string{"--archive", f.arch, "list"}, []string{"list", "--archive", f.arch}},
		{[]string{"--archive=" + f.arch, "--json", "list"}, []string{"list", "--json", "--archive", f.arch}},
		{[]string{"--json", "--archive", f.arch, "--wait", "1s", "show", f.ids[0][:8]}, []string{"show", f.ids[0][:8], "--json", "--archive", f.arch}},
		{[]string{"--archive", f.arch, "verify", "--json"}, []string{"verify", "--archive", f.arch, "--json"}},
		{[]string{"--archive", f.arch, "help", "list"}, []string{"help", "list"}},
	} {
		b, a := call(c.before...), call(c.after...)
		if b.code != 0 || b.stdout != a.stdout || b.code != a.code {
			t.Errorf("%q: exit %d, stdout differs from %q:\n%s\n---\n%s (%s)", c.before, b.code, c.after, b.stdout, a.stdout, b.stderr)
		}
	}
}

// TestUntilBesideSince: every command that takes --since takes --until,
// and the two bound the records by their start time.
func TestUntilBesideSince(t *testing.T) {
	for name := range commands {
		help := call(name, "--help").stdout
		if strings.Contains(help, "--since ") != strings.Contains(help, "--until ") {
			t.Errorf("%s takes one of --since and --until but not the other", name)
		}
	}
	f := newContractFixture(t)
	count := func(args ...string) int {
		r := call(append([]string{"list", "--archive", f.arch, "--json"}, args...)...)
		var sums []archive.Summary
		if err := json.Unmarshal([]byte(r.stdout), &sums); err != nil {
			t.Fatalf("list %q: %v (%s)", args, err, r.stderr)
		}
		return len(sums)
	}
	for _, c := range []struct {
		args []string
		want int
	}{
		{nil, 2},
		{[]string{"--until", "2000-01-01"}, 0},
		{[]string{"--until", "2999-01-01"}, 2},
		{[]string{"--since", "2000-01-01", "--until", "0s"}, 2},
		{[]string{"--since", "2999-01-01"}, 0},
	} {
		if got := count(c.args...); got != c.want {
			t.Errorf("list %q: %d records, want %d", c.args, got, c.want)
		}
	}
	for _, args := range [][]string{{"export", "--out", "-"}, {"trace", "1.0"}, {"reproduce", "--all"}} {
		r := call(append(append(args, "--archive", f.arch), "--until", "not a time")...)
		checkRefusal(t, r, exitUsage, `--until "not a time" is not a date`)
	}
}

// TestCompareDefaultsToBuiltin: without --refs, compare (and report) use
// the built-in reference sets.
func TestCompareDefaultsToBuiltin(t *testing.T) {
	f := newContractFixture(t)
	for _, args := range [][]string{{"compare", "--json"}, {"compare", "--csv"}, {"report", "--format", "md"}} {
		a := call(append(args, "--archive", f.arch)...)
		b := call(append(args, "--archive", f.arch, "--refs", "builtin")...)
		if a.code != 0 || a.stdout != b.stdout {
			t.Errorf("%q without --refs: exit %d (%s); output differs from --refs builtin", args, a.code, a.stderr)
		}
	}
}

// TestOneJobsDefault: study and demo share one --jobs default.
func TestOneJobsDefault(t *testing.T) {
	line := func(cmd string) string {
		for _, l := range strings.Split(call(cmd, "--help").stdout, "\n") {
			if strings.HasPrefix(strings.TrimSpace(l), "--jobs ") {
				return strings.Join(strings.Fields(l), " ") // the column width is each command's own
			}
		}
		return ""
	}
	if s, d := line("study"), line("demo"); s == "" || s != d {
		t.Errorf("--jobs differs between study and demo:\n%s\n%s", s, d)
	}
}

var helpFlagLine = regexp.MustCompile(`^  --([a-z0-9-]+)(?: (\S+))?(?:  |$)`)

// TestPlaceholders: a flag's value has one placeholder word in every
// command's help, and the synopsis gives each flag the word of the flag
// list.
func TestPlaceholders(t *testing.T) {
	seen := map[string]string{} // flag → placeholder
	where := map[string]string{}
	for name := range commands {
		help := call(name, "--help").stdout
		lines := strings.Split(help, "\n")
		own := map[string]string{}
		for _, l := range lines {
			m := helpFlagLine.FindStringSubmatch(l)
			if m == nil {
				continue
			}
			own[m[1]] = m[2]
			if m[2] == "" {
				continue
			}
			if p, ok := seen[m[1]]; ok && p != m[2] {
				t.Errorf("--%s is --%s %s in %s but --%s %s in %s", m[1], m[1], p, where[m[1]], m[1], m[2], name)
			}
			seen[m[1]], where[m[1]] = m[2], name
		}
		var synopsis string
		for _, l := range lines {
			if s, ok := strings.CutPrefix(l, "usage: moltrail "+name); ok {
				synopsis = s
			}
		}
		toks := strings.FieldsFunc(synopsis, func(r rune) bool { return strings.ContainsRune(" []|", r) })
		for i, tok := range toks {
			flagName, ok := strings.CutPrefix(tok, "--")
			if !ok {
				continue
			}
			p, known := own[flagName]
			if !known {
				t.Errorf("%s: the synopsis names --%s, which the command does not take", name, flagName)
			}
			// A value word in capitals (FILE.pdf counts as FILE) must be the flag's.
			if i+1 < len(toks) && toks[i+1] == strings.ToUpper(toks[i+1]) && !strings.HasPrefix(toks[i+1], "-") {
				if next, _, _ := strings.Cut(toks[i+1], "."); next != p {
					t.Errorf("%s: the synopsis says --%s %s, the flag list --%s %s", name, flagName, toks[i+1], flagName, p)
				}
			}
		}
	}
}

// TestChemistOutputs: show prints the frontier orbitals, the atomic
// charges and ⟨S²⟩; energies come in the unit asked for; list has task and
// geometry columns, a --task filter and an overview; geometry writes the
// final or input structure as XYZ that reads back.
func TestChemistOutputs(t *testing.T) {
	f := newContractFixture(t)
	opt := call("run", "--archive", f.arch, "--basis", "sto-3g", "--task", "optimize", "--json", f.xyz)
	if opt.code != 0 {
		t.Fatalf("optimisation: %s", opt.stderr)
	}
	optRec := decodeRecord(t, opt.stdout)
	sp := call("run", "--archive", f.arch, "--basis", "sto-3g", "--method", "uhf", "--geometry-from", optRec.ID[:12], "--json")
	if sp.code != 0 {
		t.Fatalf("single point: %s", sp.stderr)
	}
	spRec := decodeRecord(t, sp.stdout)
	rhf := decodeRecord(t, call("show", "--archive", f.arch, "--json", f.ids[0]).stdout)

	t.Run("show", func(t *testing.T) {
		for _, c := range []struct {
			id   string
			want []string
		}{
			{f.ids[0], []string{"frontier orbitals      HOMO ", ", LUMO ", ", gap ", " eV)", "orbital energies       ", " | ", "Mulliken", "Löwdin", "H1 ", "H2 "}},
			{f.ids[1], []string{"<S²>", "(a pure state of multiplicity 1 has 0.0000)", "orbital energies α", "orbital energies β"}},
		} {
			out := call("show", "--archive", f.arch, c.id).stdout
			for _, w := range c.want {
				if !strings.Contains(out, w) {
					t.Errorf("show %s lacks %q:\n%s", c.id[:8], w, out)
				}
			}
		}
	})
	t.Run("energy units", func(t *testing.T) {
		for _, c := range []struct {
			unit   string
			factor float64 // per hartree: CODATA 2018 (engine/molecule constants)
			dec    int
		}{{"hartree", 1, 10}, {"kJ/mol", 2625.4996394799, 7}, {"KCAL/MOL", 627.5094740631, 7}, {"eV", 27.211386245988, 9}} {
			out := call("show", "--archive", f.arch, "--energy-unit", c.unit, f.ids[0]).stdout
			want := fmt.Sprintf("  energy                 %.*f ", c.dec, rhf.Results.EnergyHartree*c.factor)
			if !strings.Contains(out, want) {
				t.Errorf("--energy-unit %s: show lacks %q", c.unit, want)
			}
			if l := call("list", "--archive", f.arch, "--energy-unit", c.unit).stdout; !strings.Contains(l, fmt.Sprintf("%.*f", c.dec, rhf.Results.EnergyHartree*c.factor)) {
				t.Errorf("--energy-unit %s: list lacks the energy:\n%s", c.unit, l)
			}
		}
		checkRefusal(t, call("show", "--archive", f.arch, "--energy-unit", "rydberg", f.ids[0]), exitUsage, `--energy-unit "rydberg" is not hartree`)
	})
	t.Run("list", func(t *testing.T) {
		out := call("list", "--archive", f.arch).stdout
		for _, w := range []string{"  task  ", "  geometry  ", "optimize  optimised", "energy    input", "energy    from HF/STO-3G " + optRec.ID[:12], "UHF/STO-3G//HF/STO-3G"} {
			if !strings.Contains(out, w) {
				t.Errorf("list lacks %q:\n%s", w, out)
			}
		}
		for task, n := range map[string]int{"energy": 3, "optimize": 1} {
			var rows []map[string]any
			json.Unmarshal([]byte(call("list", "--archive", f.arch, "--task", task, "--json").stdout), &rows)
			if len(rows) != n {
				t.Errorf("--task %s: %d records, want %d", task, len(rows), n)
			}
		}
		checkRefusal(t, call("list", "--archive", f.arch, "--task", "freq"), exitUsage, `--task "freq" is not energy or optimize`)
		ov := call("list", "--archive", f.arch, "--overview").stdout
		for _, w := range []string{"molecule  HF/STO-3G  UHF/STO-3G", "hydrogen  opt sp     sp×2", "4 record(s), 1 molecule(s) × 2 level(s)"} {
			if !strings.Contains(ov, w) {
				t.Errorf("overview lacks %q:\n%s", w, ov)
			}
		}
		var js overview
		if err := json.Unmarshal([]byte(call("list", "--archive", f.arch, "--overview", "--json").stdout), &js); err != nil || len(js.Cells) != 2 || js.Cells[0].Optimised != 1 || js.Cells[1].SinglePoints != 2 {
			t.Errorf("overview JSON: %+v %v", js, err)
		}
	})
	t.Run("geometry", func(t *testing.T) {
		d := t.TempDir()
		for _, c := range []struct {
			args []string
			want []engine.GeomAtom
		}{
			{[]string{optRec.ID[:12]}, optRec.Results.GeometryAngstrom},
			{[]string{spRec.ID[:12]}, optRec.Results.GeometryAngstrom},
			{[]string{optRec.ID[:12], "--input"}, inputAtoms(optRec)},
			{[]string{optRec.ID[:12], "--out", filepath.Join(d, "final.xyz")}, optRec.Results.GeometryAngstrom},
		} {
			r := call(append([]string{"geometry", "--archive", f.arch}, c.args...)...)
			text := r.stdout
			if n := len(c.args); n >= 2 && c.args[n-2] == "--out" {
				b, _ := os.ReadFile(c.args[n-1])
				text = string(b)
				if r.stdout != "" || !strings.Contains(r.stderr, "wrote the final geometry of record") {
					t.Errorf("--out: stdout %q, stderr %q", r.stdout, r.stderr)
				}
			}
			m, err := molecule.ParseXYZ(strings.NewReader(text), "geometry output")
			if r.code != 0 || err != nil || m.Name != "hydrogen" || len(m.Atoms) != len(c.want) {
				t.Fatalf("geometry %q: exit %d, %v\n%s", c.args, r.code, err, text)
			}
			for i, a := range m.Atoms {
				for k := 0; k < 3; k++ {
					if d := a.PosBohr[k]*molecule.BohrAngstrom - c.want[i].XYZ[k]; math.Abs(d) > 1e-10 {
						t.Errorf("geometry %q: atom %d coordinate %d off by %g Å", c.args, i+1, k, d)
					}
				}
			}
		}
		if optRec.Results.GeometryAngstrom[1].XYZ[2] == inputAtoms(optRec)[1].XYZ[2] {
			t.Error("the optimisation did not move the atoms, so final and input cannot be told apart")
		}
		var js geometryJSON
		if err := json.Unmarshal([]byte(call("geometry", "--archive", f.arch, "--json", spRec.ID).stdout), &js); err != nil || js.Level != "UHF/STO-3G//HF/STO-3G" || js.Which != "final" {
			t.Errorf("geometry --json: %+v %v", js, err)
		}
	})
}

// TestNotesTravelWithExport: a note added to a record comes along when the
// archive is exported and imported elsewhere, and shows there.
func TestNotesTravelWithExport(t *testing.T) {
	f := newContractFixture(t)
	if r := call("note", "--archive", f.arch, f.ids[0], "geometry", "checked", "by", "hand"); r.code != 0 {
		t.Fatal(r.stderr)
	}
	out := filepath.Join(f.dir, "all.jsonl")
	ex := call("export", "--archive", f.arch, "--out", out)
	if ex.code != 0 || !strings.Contains(ex.stdout, "wrote 2 record(s) and their 1 note(s)") {
		t.Fatalf("export: exit %d %q %s", ex.code, ex.stdout, ex.stderr)
	}
	other := filepath.Join(f.dir, "other")
	im := call("import", "--archive", other, out)
	if im.code != 0 || !strings.Contains(im.stdout, "1 note(s) read, 1 imported") {
		t.Fatalf("import: exit %d %q %s", im.code, im.stdout, im.stderr)
	}
	if show := call("show", "--archive", other, f.ids[0]).stdout; !strings.Contains(show, "geometry checked by hand") {
		t.Errorf("the note did not travel:\n%s", show)
	}
	if v := call("verify", "--archive", other).stdout; !strings.Contains(v, "2 record(s) and 1 note(s)") {
		t.Errorf("verify: %s", v)
	}
}

// TestDiffSeparatesNoise: diff lists differences below the printed
// precision apart from the real ones.
func TestDiffSeparatesNoise(t *testing.T) {
	f := newContractFixture(t)
	a := decodeRecord(t, call("show", "--archive", f.arch, "--json", f.ids[0]).stdout)
	b := *a
	b.Results.EnergyHartree += 4e-11
	b.Results.NuclearRepulsionHartree += 1e-8
	b.Lineage, b.ID, b.Signature = nil, "", nil
	if err := b.Seal(); err != nil {
		t.Fatal(err)
	}
	enc, _ := b.Encode()
	if r := call("import", "--archive", f.arch, writeFile(t, f.dir, "b.jsonl", string(enc)+"\n")); r.code != 0 {
		t.Fatalf("import: %s", r.stderr)
	}
	out := call("diff", "--archive", f.arch, a.ID, b.ID).stdout
	real, noise, ok := strings.Cut(out, "» numerical noise: 1 quantity(ies) differ by less than one unit of the last digit moltrail prints (1e-10 hartree)")
	if !ok || !strings.Contains(real, "» results: 1 difference(s)") || !strings.Contains(real, "nuclear_repulsion_hartree") || !strings.Contains(noise, "energy_hartree") || strings.Contains(noise, "nuclear_repulsion") {
		t.Errorf("diff should list the repulsion as real and the energy as noise:\n%s", out)
	}
	var js archive.RecordDiff
	json.Unmarshal([]byte(call("diff", "--archive", f.arch, "--json", a.ID, b.ID).stdout), &js)
	for _, r := range js.Results {
		if (r.Quantity == "energy_hartree") != r.Noise {
			t.Errorf("JSON: %s noise %v", r.Quantity, r.Noise)
		}
	}
}

// TestTraceFindsComparison: trace finds a deviation and a statistic that
// compare prints, with the record behind them, and leaves the comparison
// out with --refs none.
func TestTraceFindsComparison(t *testing.T) {
	d := t.TempDir()
	arch := filepath.Join(d, "arch")
	xyz := writeFile(t, d, "hf.xyz", "2\nhydrogen fluoride\nH 0 0 0\nF 0 0 0.917\n")
	opt := call("run", "--archive", arch, "--basis", "sto-3g", "--task", "optimize", "--json", xyz)
	if opt.code != 0 {
		t.Fatal(opt.stderr)
	}
	id := decodeRecord(t, opt.stdout).ID
	var tab struct {
		Deviations []struct {
			Kind   string  `json:"kind"`
			Signed float64 `json:"signed_deviation"`
		} `json:"deviations"`
	}
	if err := json.Unmarshal([]byte(call("compare", "--archive", arch, "--json").stdout), &tab); err != nil {
		t.Fatal(err)
	}
	var fig string
	for _, dv := range tab.Deviations {
		if dv.Kind == "bond_length" {
			fig = fmt.Sprintf("%.2f", dv.Signed) // as the report prints it
		}
	}
	if fig == "" {
		t.Fatalf("no bond-length deviation to trace: %+v", tab)
	}
	var js struct {
		Comparison *struct {
			ReferenceSet string `json:"reference_set"`
			Figures      []struct {
				Part    string   `json:"part"`
				What    string   `json:"what"`
				Records []string `json:"records"`
			} `json:"figures"`
		} `json:"comparison"`
	}
	r := call("trace", "--archive", arch, fig, "--json")
	if err := json.Unmarshal([]byte(r.stdout), &js); err != nil || js.Comparison == nil {
		t.Fatalf("trace %s --json: %v %s", fig, err, r.stderr)
	}
	found := map[string]bool{}
	for _, f := range js.Comparison.Figures {
		if len(f.Records) == 1 && f.Records[0] == id {
			found[f.Part+"/"+f.What] = true
		}
	}
	if !found["deviation/signed deviation"] || !found["statistics/MSE"] {
		t.Errorf("trace %s did not find the deviation and the MSE of record %s: %+v", fig, id[:12], js.Comparison.Figures)
	}
	if out := call("trace", "--archive", arch, fig).stdout; !strings.Contains(out, "In the comparison with builtin over 1 record(s)") || !strings.Contains(out, "signed deviation") {
		t.Errorf("trace text:\n%s", out)
	}
	json.Unmarshal([]byte(call("trace", "--archive", arch, fig, "--refs", "none", "--json").stdout), &js)
	if js.Comparison != nil {
		t.Error("--refs none should leave the comparison out")
	}
}
