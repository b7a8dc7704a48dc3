package study

import (
	"context"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	"moltrail/archive"
	"moltrail/engine"
	"moltrail/engine/molecule"
)

const waterXYZ = "3\nwater\nO 0.000 0.000 0.117\nH 0.000 0.757 -0.467\nH 0.000 -0.757 -0.467\n"
const h2XYZ = "2\ndihydrogen\nH 0 0 0\nH 0 0 0.741\n"

// studyJSON is a small study: two molecules, a 2×1 cross product and a
// single point at MP2 on the HF geometry.
const studyJSON = `{
  "format": "moltrail-study/1",
  "name": "unit",
  "molecules": [{"file": "h2.xyz"}, {"xyz": "3\nwater\nO 0.000 0.000 0.117\nH 0.000 0.757 -0.467\nH 0.000 -0.757 -0.467\n"}],
  "levels": [{"methods": ["hf", "mp2"], "basis_sets": ["sto-3g"]}],
  "tasks": [
    {"task": "optimize", "levels": ["hf/sto-3g"]},
    {"task": "energy", "levels": ["mp2/sto-3g"], "geometry_from": "hf/sto-3g"}
  ],
  "tags": {"project": "unit-test"}
}`

func files(m map[string]string) Reader {
	return func(name string) ([]byte, error) {
		s, ok := m[name]
		if !ok {
			return nil, os.ErrNotExist
		}
		return []byte(s), nil
	}
}

func mustParse(t *testing.T, src string) *Study {
	t.Helper()
	s, err := Parse([]byte(src), "test.json", files(map[string]string{"h2.xyz": h2XYZ}))
	if err != nil {
		t.Fatal(err)
	}
	return s
}

func TestParseErrors(t *testing.T) {
	base := func(levels, tasks string) string {
		return `{"format":"moltrail-study/1","name":"x","molecules":[{"file":"h2.xyz"}],"levels":` + levels + `,"tasks":` + tasks + `}`
	}
	cases := []struct {
		name, src, want string
	}{
		{"format", `{"format":"other/1","name":"x","molecules":[{"file":"h2.xyz"}],"levels":[{"method":"hf","basis":"sto-3g"}],"tasks":[{"task":"energy"}]}`, `format is "other/1"`},
		{"unknown field", `{"format":"moltrail-study/1","name":"x","colour":"red"}`, `test.json: line 1, column 41: unknown key "colour" at the top level (keys there: `},
		{"key slip in a task", "{\n  \"format\": \"moltrail-study/1\",\n  \"name\": \"x\",\n  \"molecules\": [{\"file\": \"h2.xyz\"}],\n  \"levels\": [{\"method\": \"hf\", \"basis\": \"sto-3g\"}],\n  \"tasks\": [{\"task\": \"energy\", \"level\": [\"hf/sto-3g\"]}]\n}",
			`test.json: line 6, column 32: unknown key "level" in tasks[0]; did you mean "levels"?`},
		{"key slip at the top", `{"format":"moltrail-study/1","name":"x","level":[]}`, `line 1, column 41: unknown key "level" at the top level; did you mean "levels"?`},
		{"key slip in scf", base(`[{"method":"hf","basis":"sto-3g","scf":{"max_iteration":3}}]`, `[{"task":"energy"}]`), `unknown key "max_iteration" in levels[0].scf; did you mean "max_iterations"?`},
		{"placed build error", "{\n  \"format\": \"moltrail-study/1\",\n  \"name\": \"x\",\n  \"molecules\": [{\"file\": \"h2.xyz\"}],\n  \"levels\": [\n    {\"method\": \"cisd\", \"basis\": \"sto-3g\"}],\n  \"tasks\": [{\"task\": \"energy\"}]\n}",
			`test.json: line 6, column 5: levels[0]: method "cisd" is not known`},
		{"type error", "{\n\"format\": \"moltrail-study/1\",\n\"name\": 3}", "line 3, column "},
		{"syntax line", "{\n\"format\": \"moltrail-study/1\",\n\"name\": ,\n}", "line 3"},
		{"missing file", `{"format":"moltrail-study/1","name":"x","molecules":[{"file":"nope.xyz"}],"levels":[{"method":"hf","basis":"sto-3g"}],"tasks":[{"task":"energy"}]}`, `molecules[0]: file "nope.xyz"`},
		{"file and xyz", `{"format":"moltrail-study/1","name":"x","molecules":[{"file":"h2.xyz","xyz":"x"}],"levels":[{"method":"hf","basis":"sto-3g"}],"tasks":[{"task":"energy"}]}`, "not both"},
		{"duplicate molecule", `{"format":"moltrail-study/1","name":"x","molecules":[{"file":"h2.xyz"},{"file":"h2.xyz"}],"levels":[{"method":"hf","basis":"sto-3g"}],"tasks":[{"task":"energy"}]}`, `molecules[1]: the name "dihydrogen" is used by molecules[0] too`},
		{"bad xyz", `{"format":"moltrail-study/1","name":"x","molecules":[{"xyz":"2\nx\nH 0 0 0\n"}],"levels":[{"method":"hf","basis":"sto-3g"}],"tasks":[{"task":"energy"}]}`, "molecules[0]: inline xyz:4"},
		{"unknown method", base(`[{"method":"cisd","basis":"sto-3g"}]`, `[{"task":"energy"}]`), `levels[0]: method "cisd" is not known`},
		{"unknown basis", base(`[{"method":"hf","basis":"nobasis"}]`, `[{"task":"energy"}]`), `levels[0]: basis`},
		{"half level", base(`[{"method":"hf"}]`, `[{"task":"energy"}]`), `needs both "method" and "basis"`},
		{"mixed level", base(`[{"method":"hf","basis":"sto-3g","methods":["mp2"]}]`, `[{"task":"energy"}]`), "not both"},
		{"id on cross", base(`[{"id":"a","methods":["hf"],"basis_sets":["sto-3g"]}]`, `[{"task":"energy"}]`), `"id" names a single level`},
		{"frozen core hf", base(`[{"method":"hf","basis":"sto-3g","frozen_core":true}]`, `[{"task":"energy"}]`), "frozen_core applies to correlated methods"},
		{"grid on hf", base(`[{"method":"hf","basis":"sto-3g","grid":"fine"}]`, `[{"task":"energy"}]`), "grid applies to DFT"},
		{"duplicate level", base(`[{"method":"hf","basis":"sto-3g"},{"methods":["HF"],"basis_sets":["STO-3G"]}]`, `[{"task":"energy"}]`), `levels[1]: level "hf/STO-3G" is defined by levels[0] too`},
		{"unknown task", base(`[{"method":"hf","basis":"sto-3g"}]`, `[{"task":"scan"}]`), `tasks[0]: task "scan" is not known (optimize, energy or frequencies)`},
		{"unknown level in task", base(`[{"method":"hf","basis":"sto-3g"}]`, `[{"task":"energy","levels":["mp2/sto-3g"]}]`), `tasks[0]: level "mp2/sto-3g" is not defined (levels: hf/sto-3g)`},
		{"unknown molecule in task", base(`[{"method":"hf","basis":"sto-3g"}]`, `[{"task":"energy","molecules":["water"]}]`), `molecule "water" is not in the study (molecules: dihydrogen)`},
		{"own geometry", base(`[{"method":"hf","basis":"sto-3g"}]`, `[{"task":"optimize","geometry_from":"hf/sto-3g"}]`), "cannot start from its own optimised geometry"},
		{"memory limit without unit", `{"format":"moltrail-study/1","name":"x","memory_limit":"8","molecules":[{"file":"h2.xyz"}],"levels":[{"method":"hf","basis":"sto-3g"}],"tasks":[{"task":"energy"}]}`, `memory_limit: memory size "8" needs a unit`},
		{"bad scf value", base(`[{"method":"hf","basis":"sto-3g","scf":{"max_iterations":0}}]`, `[{"task":"energy"}]`), "schemas/study.schema.json: line 1, column 139: field /levels/0/scf/max_iterations"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := Parse([]byte(c.src), "test.json", files(map[string]string{"h2.xyz": h2XYZ}))
			if err == nil {
				t.Fatalf("accepted")
			}
			if !strings.Contains(err.Error(), c.want) {
				t.Fatalf("error %q does not contain %q", err, c.want)
			}
			if !strings.Contains(err.Error(), "test.json") {
				t.Fatalf("error %q does not name the file", err)
			}
		})
	}
}

func TestMemoryLimitSetting(t *testing.T) {
	src := strings.Replace(studyJSON, `"format": "moltrail-study/1",`, `"format": "moltrail-study/1", "memory_limit": "6 GiB",`, 1)
	s, err := Parse([]byte(src), "test.json", files(map[string]string{"h2.xyz": h2XYZ}))
	if err != nil {
		t.Fatal(err)
	}
	if s.MemoryLimitBytes != 6<<30 {
		t.Errorf("memory limit %d bytes, want 6 GiB", s.MemoryLimitBytes)
	}
}

func TestLoadResolvesRelativeFiles(t *testing.T) {
	dir := t.TempDir()
	if err := os.MkdirAll(filepath.Join(dir, "geom"), 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(dir, "geom", "h2.xyz"), []byte(h2XYZ), 0o644); err != nil {
		t.Fatal(err)
	}
	src := strings.Replace(studyJSON, `"file": "h2.xyz"`, `"file": "geom/h2.xyz"`, 1)
	p := filepath.Join(dir, "s.json")
	if err := os.WriteFile(p, []byte(src), 0o644); err != nil {
		t.Fatal(err)
	}
	s, err := Load(p)
	if err != nil {
		t.Fatal(err)
	}
	if got := s.Molecules()[0].Name; got != "dihydrogen" {
		t.Fatalf("molecule name %q", got)
	}
	if got := s.ResolvePath("si.pdf"); got != filepath.Join(dir, "si.pdf") {
		t.Fatalf("ResolvePath gives %q", got)
	}
}

func TestPlanExpandsAndOrders(t *testing.T) {
	s := mustParse(t, studyJSON)
	p, err := s.Plan()
	if err != nil {
		t.Fatal(err)
	}
	// 2 molecules × (hf optimise + mp2 single point on it).
	if len(p.Items) != 4 {
		t.Fatalf("%d items, want 4", len(p.Items))
	}
	for _, it := range p.Items {
		if it.From != nil && it.From.Index >= it.Index {
			t.Errorf("%s comes before its dependency", it.Name())
		}
		if it.Task == "energy" && (it.From == nil || it.From.Level.ID != "hf/sto-3g") {
			t.Errorf("%s does not start from the hf optimisation", it.Name())
		}
	}
	// geometry_from without an optimise task adds the optimisation, marked implied.
	s2 := mustParse(t, strings.Replace(studyJSON, `{"task": "optimize", "levels": ["hf/sto-3g"]},`, ``, 1))
	p2, err := s2.Plan()
	if err != nil {
		t.Fatal(err)
	}
	implied := 0
	for _, it := range p2.Items {
		if it.Implied {
			implied++
			if it.Task != "optimize" {
				t.Errorf("implied item %s is not an optimisation", it.Name())
			}
		}
	}
	if len(p2.Items) != 4 || implied != 2 {
		t.Fatalf("%d items with %d implied, want 4 and 2", len(p2.Items), implied)
	}
	// An explicit task makes an implied item explicit, never twice.
	s3 := mustParse(t, strings.Replace(studyJSON, `"tasks": [`, `"tasks": [{"task": "energy", "levels": ["mp2/sto-3g"], "geometry_from": "hf/sto-3g"},`, 1))
	p3, err := s3.Plan()
	if err != nil {
		t.Fatal(err)
	}
	if len(p3.Items) != 4 {
		t.Fatalf("duplicated tasks give %d items, want 4", len(p3.Items))
	}
	for _, it := range p3.Items {
		if it.Implied {
			t.Errorf("%s still marked implied", it.Name())
		}
	}
}

func TestLevelSettingsReachTheJob(t *testing.T) {
	src := `{"format":"moltrail-study/1","name":"x","molecules":[{"file":"h2.xyz"}],
	  "levels":[{"methods":["hf","mp2"],"basis_sets":["cc-pvdz"],"frozen_core":true,"angular":"cartesian",
	    "scf":{"energy_tol_hartree":1e-9,"max_iterations":77},"optimization":{"max_steps":12}},
	    {"id":"dft","method":"b3lyp","basis":"sto-3g","grid":"coarse"}],
	  "tasks":[{"task":"optimize"}]}`
	s := mustParse(t, src)
	p, err := s.Plan()
	if err != nil {
		t.Fatal(err)
	}
	for _, it := range p.Items {
		j, err := it.Job(nil)
		if err != nil {
			t.Fatal(err)
		}
		switch it.Level.ID {
		case "mp2/cc-pvdz":
			if j.Correlation == nil || !j.Correlation.FrozenCore {
				t.Errorf("mp2: frozen core not set")
			}
			fallthrough
		case "hf/cc-pvdz":
			if j.Basis.Angular != "cartesian" || j.SCF.EnergyTolHartree != 1e-9 || j.SCF.MaxIter != 77 || j.Opt.MaxSteps != 12 {
				t.Errorf("%s: settings not applied: %+v %+v %+v", it.Level.ID, j.Basis, j.SCF, j.Opt)
			}
			if j.SCF.DensityTol != engine.DefaultSCF.DensityTol {
				t.Errorf("%s: an unset SCF field lost its default", it.Level.ID)
			}
			// Unset optimisation fields keep the engine's default for the method.
			r := it.Level.Request
			r.Molecule, r.Task = it.Molecule.Mol, "optimize"
			base, err := engine.NewJob(r)
			if err != nil {
				t.Fatal(err)
			}
			if j.Opt.GradientMethod != base.Opt.GradientMethod || j.Opt.FiniteDiffStepAU != base.Opt.FiniteDiffStepAU {
				t.Errorf("%s: gradient %s/%g, the engine's default is %s/%g", it.Level.ID, j.Opt.GradientMethod, j.Opt.FiniteDiffStepAU, base.Opt.GradientMethod, base.Opt.FiniteDiffStepAU)
			}
		case "dft":
			if j.Grid == nil || j.Grid.Level != "coarse" {
				t.Errorf("dft: grid %+v", j.Grid)
			}
		default:
			t.Errorf("unexpected level %q", it.Level.ID)
		}
	}
}

// A level's density_fitting reaches the SCF and DFT jobs of a cross
// product (the correlated ones keep exact integrals), gives the level its
// own id and label, and is refused for a single correlated level.
func TestLevelDensityFitting(t *testing.T) {
	src := `{"format":"moltrail-study/1","name":"x","molecules":[{"file":"h2.xyz"}],
	  "levels":[{"methods":["hf","mp2","pbe"],"basis_sets":["cc-pvdz"],"density_fitting":{"three_centre_schwarz_threshold":1e-11}},
	    {"method":"hf","basis":"cc-pvdz"}, {"id":"named","method":"hf","basis":"cc-pvdz","density_fitting":{"scf_set":"def2-universal-jkfit"}}],
	  "tasks":[{"task":"energy"}]}`
	s := mustParse(t, src)
	p, err := s.Plan()
	if err != nil {
		t.Fatal(err)
	}
	want := map[string]string{"hf/cc-pvdz/fitted": "cc-pVDZ-JKFIT", "pbe/cc-pvdz/fitted": "cc-pVDZ-JKFIT", "mp2/cc-pvdz": "", "hf/cc-pvdz": "", "named": "def2-universal-JKFIT"}
	for _, it := range p.Items {
		j, err := it.Job(nil)
		if err != nil {
			t.Fatal(err)
		}
		w, ok := want[it.Level.ID]
		if !ok {
			t.Fatalf("unexpected level %q", it.Level.ID)
		}
		delete(want, it.Level.ID)
		got := ""
		if j.Fitting != nil {
			got = j.Fitting.SCFSet.Name
			if it.Level.ID != "named" && j.Fitting.SchwarzThreshold != 1e-11 {
				t.Errorf("%s: three-centre threshold %g", it.Level.ID, j.Fitting.SchwarzThreshold)
			}
			if !strings.Contains(it.Level.Label, "fitted") {
				t.Errorf("%s: label %q does not say fitted", it.Level.ID, it.Level.Label)
			}
		}
		if got != w {
			t.Errorf("%s: fitting set %q, want %q", it.Level.ID, got, w)
		}
	}
	if len(want) != 0 {
		t.Errorf("levels missing: %v", want)
	}
	bad := strings.Replace(src, `{"method":"hf","basis":"cc-pvdz"}`, `{"method":"mp2","basis":"cc-pvdz","density_fitting":{}}`, 1)
	if _, err := Parse([]byte(bad), "s.json", files(map[string]string{"h2.xyz": h2XYZ})); err == nil || !strings.Contains(err.Error(), "density_fitting covers the SCF and DFT methods") {
		t.Errorf("fitted single mp2 level: %v", err)
	}
}

// fake is a Computer that counts calls per input key and returns a
// converged result whose optimised geometry is the input shrunk by 1 %.
type fake struct {
	mu    sync.Mutex
	calls map[string]int
	fail  func(j *engine.Job) string // non-empty: fail with this message
	slow  time.Duration
	n     atomic.Int32
}

func newFake() *fake { return &fake{calls: map[string]int{}} }

func (f *fake) compute(j *engine.Job, threads int, _ io.Writer) (*engine.Result, error) {
	k, _ := j.InputKey()
	f.mu.Lock()
	f.calls[k]++
	f.mu.Unlock()
	f.n.Add(1)
	if f.slow > 0 {
		time.Sleep(f.slow)
	}
	if f.fail != nil {
		if msg := f.fail(j); msg != "" {
			return nil, fmt.Errorf("%s", msg)
		}
	}
	scale := 1.0
	if j.Task == "optimize" {
		scale = 0.99
	}
	res := &engine.Result{Status: engine.StatusConverged, EnergyHartree: -1 - float64(len(j.Method)), SCFEnergyHartree: -1}
	for _, a := range j.Molecule.Atoms {
		res.GeometryAngstrom = append(res.GeometryAngstrom, engine.GeomAtom{Symbol: a.Symbol,
			XYZ: [3]float64{a.Bohr[0] * scale * molecule.BohrAngstrom, a.Bohr[1] * scale * molecule.BohrAngstrom, a.Bohr[2] * scale * molecule.BohrAngstrom}})
	}
	return res, nil
}

func recordsPerKey(t *testing.T, dir string) map[string]int {
	t.Helper()
	st, err := archive.Open(dir, archive.OpenOptions{ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	sums, err := st.List(archive.Filter{})
	if err != nil {
		t.Fatal(err)
	}
	out := map[string]int{}
	for _, s := range sums {
		out[s.InputKey]++
	}
	return out
}

func TestRunComputesOnceAndResumes(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "arch")
	s := mustParse(t, studyJSON)
	p, err := s.Plan()
	if err != nil {
		t.Fatal(err)
	}
	f := newFake()
	var events []Event
	opt := Options{Archive: dir, Jobs: 3, Compute: f.compute, Events: func(e Event) { events = append(events, e) }}
	sum, err := Run(context.Background(), p, opt)
	if err != nil {
		t.Fatal(err)
	}
	if sum.Counts.Done != 4 || !sum.OK() || sum.Interrupted {
		t.Fatalf("first run: %+v", sum.Counts)
	}
	if events[0].Kind != EventPlanned || events[0].Progress.ToCompute != 4 {
		t.Fatalf("first event %+v", events[0])
	}
	for k, n := range f.calls {
		if n != 1 {
			t.Errorf("key %s computed %d times", k[:12], n)
		}
	}
	// The single points carry the geometry and lineage of their optimisation.
	byIndex := map[int]ItemResult{}
	for _, r := range sum.Items {
		byIndex[r.Index] = r
	}
	for _, it := range p.Items {
		r := byIndex[it.Index]
		if r.Record.Tags["project"] != "unit-test" || r.Record.Tags["study"] != "unit" {
			t.Errorf("%s: tags %v", it.Name(), r.Record.Tags)
		}
		if it.From == nil {
			continue
		}
		dep := byIndex[it.From.Index].Record
		if len(r.Record.Lineage) != 1 || r.Record.Lineage[0].Relation != archive.GeometryFrom || r.Record.Lineage[0].ID != dep.ID {
			t.Errorf("%s: lineage %v, want geometry-from %s", it.Name(), r.Record.Lineage, dep.ID[:12])
		}
		got := r.Record.Input.Molecule.Atoms[0].Bohr
		want := dep.Results.GeometryAngstrom[0].XYZ
		for k := 0; k < 3; k++ {
			if d := got[k] - want[k]*molecule.AngstromBohr; d > 1e-12 || d < -1e-12 {
				t.Errorf("%s: starts at %v bohr, the optimisation ended at %v Å", it.Name(), got, want)
			}
		}
	}
	// Second run: nothing computed, everything reused.
	f2 := newFake()
	opt.Compute = f2.compute
	sum2, err := Run(context.Background(), p, opt)
	if err != nil {
		t.Fatal(err)
	}
	if sum2.Counts.Reused != 4 || len(f2.calls) != 0 {
		t.Fatalf("second run computed %d, counts %+v", len(f2.calls), sum2.Counts)
	}
	for k, n := range recordsPerKey(t, dir) {
		if n != 1 {
			t.Errorf("key %s stored %d times", k[:12], n)
		}
	}
	// Adding a level runs only its items.
	s3 := mustParse(t, strings.Replace(studyJSON, `"basis_sets": ["sto-3g"]`, `"basis_sets": ["sto-3g", "3-21g"]`, 1)+"")
	s3.Tasks = append(s3.Tasks, TaskEntry{Task: "optimize", Levels: []string{"hf/3-21g"}})
	p3, err := s3.Plan()
	if err != nil {
		t.Fatal(err)
	}
	f3 := newFake()
	opt.Compute = f3.compute
	sum3, err := Run(context.Background(), p3, opt)
	if err != nil {
		t.Fatal(err)
	}
	if sum3.Counts.Reused != 4 || sum3.Counts.Done != 2 || len(f3.calls) != 2 {
		t.Fatalf("added level: counts %+v, %d computed", sum3.Counts, len(f3.calls))
	}
	for _, r := range sum3.Items {
		if r.Outcome == Computed && r.LevelID != "hf/3-21g" {
			t.Errorf("%s was computed again", r.Item)
		}
	}
}

func TestFailureDoesNotStopOthers(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "arch")
	p, err := mustParse(t, studyJSON).Plan()
	if err != nil {
		t.Fatal(err)
	}
	f := newFake()
	f.fail = func(j *engine.Job) string {
		if j.Molecule.Name == "water" && j.Task == "optimize" {
			return "the SCF met a wall"
		}
		return ""
	}
	sum, err := Run(context.Background(), p, Options{Archive: dir, Jobs: 2, Compute: f.compute})
	if err != nil {
		t.Fatal(err)
	}
	c := sum.Counts
	if c.Done != 2 || c.Failed != 1 || c.Skipped != 1 || sum.OK() {
		t.Fatalf("counts %+v", c)
	}
	for _, r := range sum.Items {
		switch {
		case r.Molecule == "water" && r.Task == "optimize":
			if r.Status != engine.StatusFailed || r.RecordID == "" || !strings.Contains(r.Error, "wall") {
				t.Errorf("failed optimisation: %+v", r)
			}
		case r.Molecule == "water":
			if r.Outcome != Skipped || !strings.Contains(r.Error, "has no converged result") {
				t.Errorf("dependant of the failure: %+v", r)
			}
		}
	}
	// The failure is stored and reused; --retry-failed computes it again.
	f2 := newFake()
	sum2, _ := Run(context.Background(), p, Options{Archive: dir, Compute: f2.compute})
	if sum2.Counts.Failed != 1 || len(f2.calls) != 0 {
		t.Fatalf("second run: %+v, %d computed", sum2.Counts, len(f2.calls))
	}
	f3 := newFake()
	sum3, _ := Run(context.Background(), p, Options{Archive: dir, Compute: f3.compute, RetryFailed: true})
	if !sum3.OK() || len(f3.calls) != 2 {
		t.Fatalf("retry: %+v, %d computed", sum3.Counts, len(f3.calls))
	}
	for _, r := range sum3.Items {
		if r.Outcome == Computed && r.Task == "optimize" {
			if len(r.Record.Lineage) != 1 || r.Record.Lineage[0].Relation != archive.Recomputes {
				t.Errorf("retried record lineage %v", r.Record.Lineage)
			}
		}
	}
}

func TestCancelLeavesRestPending(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "arch")
	p, err := mustParse(t, studyJSON).Plan()
	if err != nil {
		t.Fatal(err)
	}
	f := newFake()
	f.slow = 50 * time.Millisecond
	ctx, cancel := context.WithCancel(context.Background())
	opt := Options{Archive: dir, Jobs: 1, Compute: f.compute, Events: func(e Event) {
		if e.Kind == EventFinished && e.Item.Outcome == Computed {
			cancel()
		}
	}}
	sum, err := Run(ctx, p, opt)
	if err != nil {
		t.Fatal(err)
	}
	if !sum.Interrupted || sum.Counts.Done != 1 || sum.Counts.Pending != 3 {
		t.Fatalf("interrupted run: %+v", sum.Counts)
	}
	f2 := newFake()
	opt.Compute, opt.Events = f2.compute, nil
	sum2, err := Run(context.Background(), p, opt)
	if err != nil {
		t.Fatal(err)
	}
	if !sum2.OK() || sum2.Counts.Reused != 1 || sum2.Counts.Done != 3 {
		t.Fatalf("resumed run: %+v", sum2.Counts)
	}
	for k, n := range recordsPerKey(t, dir) {
		if n != 1 {
			t.Errorf("key %s stored %d times", k[:12], n)
		}
	}
}

func TestAbandonReturnsWithoutStoring(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "arch")
	p, err := mustParse(t, studyJSON).Plan()
	if err != nil {
		t.Fatal(err)
	}
	f := newFake()
	f.slow = 2 * time.Second
	ctx, cancel := context.WithCancel(context.Background())
	abandon := make(chan struct{})
	opt := Options{Archive: dir, Jobs: 2, Compute: f.compute, Abandon: abandon, Events: func(e Event) {
		if e.Kind == EventStarted && e.Progress.Running == 2 {
			cancel()
			close(abandon)
		}
	}}
	t0 := time.Now()
	sum, err := Run(ctx, p, opt)
	if err != nil {
		t.Fatal(err)
	}
	if time.Since(t0) > 1500*time.Millisecond {
		t.Fatalf("Run waited %s for abandoned calculations", time.Since(t0))
	}
	if sum.Counts.Pending != 4 || !sum.Interrupted {
		t.Fatalf("abandoned run: %+v", sum.Counts)
	}
	time.Sleep(2500 * time.Millisecond) // the abandoned workers end and must not store
	if _, err := os.Stat(filepath.Join(dir, "MANIFEST")); err == nil {
		if n := len(recordsPerKey(t, dir)); n != 0 {
			t.Fatalf("%d records stored after abandoning", n)
		}
	}
}

func TestSameInputRunsOnce(t *testing.T) {
	// Two levels that differ only in their id give the same jobs.
	src := `{"format":"moltrail-study/1","name":"x","molecules":[{"file":"h2.xyz"}],
	  "levels":[{"id":"a","method":"hf","basis":"sto-3g"},{"id":"b","method":"hf","basis":"sto-3g"}],
	  "tasks":[{"task":"optimize"}]}`
	p, err := mustParse(t, src).Plan()
	if err != nil {
		t.Fatal(err)
	}
	f := newFake()
	f.slow = 20 * time.Millisecond
	sum, err := Run(context.Background(), p, Options{Archive: filepath.Join(t.TempDir(), "a"), Jobs: 2, Compute: f.compute})
	if err != nil {
		t.Fatal(err)
	}
	if f.n.Load() != 1 || sum.Counts.Done != 1 || sum.Counts.Reused != 1 {
		t.Fatalf("%d computations, counts %+v", f.n.Load(), sum.Counts)
	}
}

func TestDryRun(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "arch")
	p, err := mustParse(t, studyJSON).Plan()
	if err != nil {
		t.Fatal(err)
	}
	d, err := DryRun(p, Options{Archive: dir})
	if err != nil {
		t.Fatal(err)
	}
	waits := 0
	for _, r := range d.Items {
		if r.Outcome != WouldCompute {
			t.Errorf("%s: %s before anything is stored", r.Item, r.Outcome)
		}
		if r.Waits != "" {
			waits++
		}
	}
	if waits != 2 || d.Counts.ToCompute != 4 {
		t.Fatalf("dry run on an empty archive: %d waiting, %+v", waits, d.Counts)
	}
	if _, err := os.Stat(dir); err == nil {
		t.Fatalf("a dry run created the archive")
	}
	f := newFake()
	if _, err := Run(context.Background(), p, Options{Archive: dir, Compute: f.compute}); err != nil {
		t.Fatal(err)
	}
	d2, err := DryRun(p, Options{Archive: dir})
	if err != nil {
		t.Fatal(err)
	}
	if d2.Counts.Reused != 4 || d2.Counts.ToCompute != 0 {
		t.Fatalf("dry run after the run: %+v", d2.Counts)
	}
}

func TestThreadsPerJob(t *testing.T) {
	if got := ThreadsPerJob(1, 3); got != 3 {
		t.Errorf("explicit threads: %d", got)
	}
	if got := ThreadsPerJob(1000, 0); got != 1 {
		t.Errorf("more jobs than cores: %d threads", got)
	}
}

// TestEngineIntegration runs a real (tiny) study through the engine.
func TestEngineIntegration(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "arch")
	p, err := mustParse(t, studyJSON).Plan()
	if err != nil {
		t.Fatal(err)
	}
	compute := func(j *engine.Job, threads int, w io.Writer) (*engine.Result, error) {
		return engine.Run(j, engine.RunOptions{Threads: threads, Progress: w})
	}
	sum, err := Run(context.Background(), p, Options{Archive: dir, Jobs: 2, Compute: compute})
	if err != nil {
		t.Fatal(err)
	}
	if !sum.OK() {
		t.Fatalf("counts %+v: %+v", sum.Counts, sum.Items)
	}
	for _, r := range sum.Items {
		if r.Task == "optimize" && len(r.Record.Results.Trajectory) == 0 {
			t.Errorf("%s: no optimisation trajectory", r.Item)
		}
		if r.Record.Run.Threads != sum.ThreadsPerJob {
			t.Errorf("%s: ran with %d threads, the summary says %d", r.Item, r.Record.Run.Threads, sum.ThreadsPerJob)
		}
	}
}

// Frequencies: as a task at another item's optimised geometry, and as an
// option of a level's optimisations; an SD file as a molecule, its notes kept.
func TestFrequencyItemsAndMoleculeFiles(t *testing.T) {
	sdf := "dihydrogen\n\n\n  2  1  0  0  0  0  0  0  0  0999 V2000\n    0.0000    0.0000    0.0000 H   0  0\n    0.0000    0.0000    0.7410 H   0  0\n  1  2  1  0\nM  END\n$$$$\nsecond\n\n\n  1  0  0  0  0  0  0  0  0  0999 V2000\n    0.0000    0.0000    0.0000 He  0  0\nM  END\n$$$$\n"
	src := `{"format":"moltrail-study/1","name":"f","molecules":[{"file":"h2.sdf"}],
	  "levels":[{"id":"a","method":"hf","basis":"sto-3g"},{"id":"b","method":"hf","basis":"sto-3g","optimization":{"frequencies":true}}],
	  "tasks":[{"task":"frequencies","levels":["a"],"geometry_from":"a"},{"task":"optimize","levels":["b"]}]}`
	s, err := Parse([]byte(src), "f.json", files(map[string]string{"h2.sdf": sdf}))
	if err != nil {
		t.Fatal(err)
	}
	if m := s.Molecules()[0]; m.Name != "dihydrogen" || len(m.Notes) != 1 || !strings.Contains(m.Notes[0], "the SD file holds 2 records") {
		t.Fatalf("molecule %q notes %q", m.Name, m.Notes)
	}
	p, err := s.Plan()
	if err != nil {
		t.Fatal(err)
	}
	var got []string
	for _, it := range p.Items {
		j, err := it.Job(nil)
		if err != nil {
			t.Fatal(err)
		}
		got = append(got, fmt.Sprintf("%s %s freq=%v", it.Level.ID, j.Task, j.Freq != nil))
	}
	want := "a optimize freq=false; a frequencies freq=true; b optimize freq=true"
	if strings.Join(got, "; ") != want {
		t.Errorf("items %q, want %q", strings.Join(got, "; "), want)
	}
}

// TestNearestKey: a slip of a letter or two is matched to the key meant;
// a word far from every key is not.
func TestNearestKey(t *testing.T) {
	keys := []string{"id", "method", "basis", "methods", "basis_sets", "frozen_core", "grid"}
	for word, want := range map[string]string{
		"level": "", "basis_set": "basis_sets", "Method": "method", "frozencore": "frozen_core", "metod": "method", "colour": "", "gird": "grid",
	} {
		if got := nearest(word, keys); got != want {
			t.Errorf("nearest(%q) = %q, want %q", word, got, want)
		}
	}
	if nearest("level", []string{"levels", "tasks"}) != "levels" {
		t.Error(`"level" should suggest "levels"`)
	}
}
