package study

import (
	"context"
	"fmt"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"

	"moltrail/archive"
)

// shardStudy has 6 molecules; HF optimisations, MP2 single points on the
// HF geometries (dependants) and plain B3LYP single points: 18 items in
// 6 groups of 2 and 6 of 1.
func shardStudy(t testing.TB) *Plan {
	t.Helper()
	var mols []string
	for i := 0; i < 6; i++ {
		mols = append(mols, fmt.Sprintf(`{"xyz": "2\nh2-%d\nH 0 0 0\nH 0 0 %.3f\n"}`, i, 0.70+0.01*float64(i)))
	}
	src := `{"format":"moltrail-study/1","name":"shards","molecules":[` + strings.Join(mols, ",") + `],
	  "levels":[{"methods":["hf","mp2","b3lyp"],"basis_sets":["sto-3g"]}],
	  "tasks":[{"task":"energy","levels":["mp2/sto-3g"],"geometry_from":"hf/sto-3g"},{"task":"energy","levels":["b3lyp/sto-3g"]}]}`
	s, err := Parse([]byte(src), "shards.json", nil)
	if err != nil {
		t.Fatal(err)
	}
	p, err := s.Plan()
	if err != nil {
		t.Fatal(err)
	}
	return p
}

func TestParsePart(t *testing.T) {
	if p, err := ParsePart("3/8"); err != nil || p != (Part{3, 8}) {
		t.Fatalf("3/8: %v %v", p, err)
	}
	for _, bad := range []string{"0/4", "5/4", "x/4", "3", "1/0", "-1/2", "1/20000"} {
		if _, err := ParsePart(bad); err == nil {
			t.Errorf("%q accepted", bad)
		}
	}
}

func TestShardsCoverEveryItemOnceAndKeepDependantsTogether(t *testing.T) {
	p := shardStudy(t)
	if len(p.Items) != 18 || len(p.Groups()) != 12 {
		t.Fatalf("%d items in %d groups, want 18 in 12", len(p.Items), len(p.Groups()))
	}
	for _, n := range []int{1, 4, 5, 30} {
		as := p.Assign(n)
		if again := p.Assign(n); fmt.Sprint(again) != fmt.Sprint(as) {
			t.Fatalf("%d shards: the assignment is not deterministic", n)
		}
		seen := map[int]int{}
		count := make([]int, n+1)
		for k := 1; k <= n; k++ {
			sp, err := p.Shard(Part{k, n})
			if err != nil {
				t.Fatal(err)
			}
			count[k] = len(sp.Items)
			for _, it := range sp.Items {
				seen[it.Index]++
				if it.From != nil && as[it.From.Index] != k {
					t.Errorf("%d shards: %s is in shard %d, the optimisation it starts from in %d", n, it.Name(), k, as[it.From.Index])
				}
			}
		}
		for _, it := range p.Items {
			if seen[it.Index] != 1 {
				t.Errorf("%d shards: %s is in %d shards", n, it.Name(), seen[it.Index])
			}
		}
		lo, hi := len(p.Items), 0
		for k := 1; k <= n; k++ {
			lo, hi = min(lo, count[k]), max(hi, count[k])
		}
		if hi-lo > 2 { // the largest group has 2 items
			t.Errorf("%d shards: sizes %v", n, count[1:])
		}
	}
	// Parsing the same file again gives the same shards (every machine agrees).
	q := shardStudy(t)
	a, b := p.Assign(4), q.Assign(4)
	if fmt.Sprint(a) != fmt.Sprint(b) {
		t.Fatal("two parses of one study give different shards")
	}
}

func TestShardBalanceAtScale(t *testing.T) {
	p := bigPlan(t, 1250) // 10,000 items
	as := p.Assign(100)
	count := make([]int, 101)
	for _, k := range as {
		count[k]++
	}
	lo, hi := len(as), 0
	for _, c := range count[1:] {
		lo, hi = min(lo, c), max(hi, c)
	}
	mean := float64(len(as)) / 100
	if float64(hi) > 1.1*mean || float64(lo) < 0.9*mean {
		t.Fatalf("shard sizes %d…%d around a mean of %.0f: outside 10 %%", lo, hi, mean)
	}
	t.Logf("10,000 items in 100 shards: %d to %d items each", lo, hi)
}

// bigPlan is n molecules × (HF optimisation, MP2 and B3LYP single points
// on the HF geometry, and 5 plain single points): 8n items in groups of
// 3 and 1.
func bigPlan(t testing.TB, n int) *Plan {
	t.Helper()
	var b strings.Builder
	b.WriteString(`{"format":"moltrail-study/1","name":"big","molecules":[`)
	for i := 0; i < n; i++ {
		if i > 0 {
			b.WriteString(",")
		}
		fmt.Fprintf(&b, `{"xyz": "2\nh2-%d\nH 0 0 0\nH 0 0 %.4f\n"}`, i, 0.70+0.0001*float64(i))
	}
	b.WriteString(`],"levels":[{"methods":["hf","mp2","b3lyp","pbe","blyp","svwn5","pbe0"],"basis_sets":["sto-3g"]},{"id":"hf-big","method":"hf","basis":"3-21g"}],
	  "tasks":[{"task":"optimize","levels":["hf/sto-3g"]},
	    {"task":"energy","levels":["mp2/sto-3g","b3lyp/sto-3g"],"geometry_from":"hf/sto-3g"},
	    {"task":"energy","levels":["pbe/sto-3g","blyp/sto-3g","svwn5/sto-3g","pbe0/sto-3g","hf-big"]}]}`)
	s, err := Parse([]byte(b.String()), "big.json", nil)
	if err != nil {
		t.Fatal(err)
	}
	p, err := s.Plan()
	if err != nil {
		t.Fatal(err)
	}
	if len(p.Items) != 8*n {
		t.Fatalf("%d items, want %d", len(p.Items), 8*n)
	}
	return p
}

// TestShardRunsMergeToOneRun runs a study as 4 shards into 4 archives,
// merges them, and checks that the result is what one run gives: the same
// input keys, the same numbers, the same lineage shape.
func TestShardRunsMergeToOneRun(t *testing.T) {
	p := shardStudy(t)
	base := t.TempDir()
	f := newFake()
	one, err := Run(context.Background(), p, Options{Archive: filepath.Join(base, "one"), Jobs: 2, Compute: f.compute})
	if err != nil || !one.OK() {
		t.Fatalf("one run: %v %+v", err, one.Counts)
	}
	var dirs []string
	total := 0
	for k := 1; k <= 4; k++ {
		sp, err := p.Shard(Part{k, 4})
		if err != nil {
			t.Fatal(err)
		}
		dir := filepath.Join(base, "shards", fmt.Sprint(k))
		sum, err := Run(context.Background(), sp, Options{Archive: dir, Jobs: 2, Compute: newFake().compute})
		if err != nil || !sum.OK() || sum.Shard == nil || *sum.Shard != (Part{k, 4}) {
			t.Fatalf("shard %d: %v %+v", k, err, sum)
		}
		total += sum.Counts.Done
		dirs = append(dirs, dir)
	}
	if total != len(p.Items) {
		t.Fatalf("the shards computed %d items, the study has %d", total, len(p.Items))
	}
	target := filepath.Join(base, "merged")
	st, err := archive.Open(target, archive.OpenOptions{})
	if err != nil {
		t.Fatal(err)
	}
	rep, err := st.Merge(dirs, archive.MergeOptions{})
	st.Close()
	if err != nil || rep.Added != len(p.Items) || len(rep.Refused) != 0 {
		t.Fatalf("merge: %+v %v", rep, err)
	}
	// A run on the merged archive finds everything.
	again, err := Run(context.Background(), p, Options{Archive: target, Compute: newFake().compute})
	if err != nil || again.Counts.Reused != len(p.Items) {
		t.Fatalf("run on the merged archive: %v %+v", err, again.Counts)
	}
	byIndex := map[int]*archive.Record{}
	for _, r := range one.Items {
		byIndex[r.Index] = r.Record
	}
	for _, r := range again.Items {
		want := byIndex[r.Index]
		if r.InputKey != want.InputKey || r.Record.Results.EnergyHartree != want.Results.EnergyHartree {
			t.Errorf("%s: key %s energy %v, one run: %s %v", r.Item, r.InputKey[:12], r.Record.Results.EnergyHartree, want.InputKey[:12], want.Results.EnergyHartree)
		}
		if len(r.Record.Lineage) != len(want.Lineage) {
			t.Errorf("%s: lineage %v, one run %v", r.Item, r.Record.Lineage, want.Lineage)
		}
	}
}

func TestReuseFromAnotherArchive(t *testing.T) {
	p := shardStudy(t)
	base := t.TempDir()
	main := filepath.Join(base, "main")
	if _, err := Run(context.Background(), p, Options{Archive: main, Compute: newFake().compute}); err != nil {
		t.Fatal(err)
	}
	sp, _ := p.Shard(Part{2, 3})
	f := newFake()
	shard := filepath.Join(base, "shard")
	sum, err := Run(context.Background(), sp, Options{Archive: shard, ReuseFrom: []string{main}, Compute: f.compute})
	if err != nil || sum.Counts.Reused != len(sp.Items) || len(f.calls) != 0 {
		t.Fatalf("shard reusing the main archive: %v %+v, %d computed", err, sum.Counts, len(f.calls))
	}
	d, err := DryRun(sp, Options{Archive: shard, ReuseFrom: []string{main}})
	if err != nil || d.Counts.Reused != len(sp.Items) {
		t.Fatalf("dry run: %v %+v", err, d.Counts)
	}
}

// TestTwoRunsOnOneArchiveComputeEachInputOnce starts two runs of one
// study on one archive at the same moment: every input is computed once
// in all, and both runs end with every item.
func TestTwoRunsOnOneArchiveComputeEachInputOnce(t *testing.T) {
	var mols []string
	for i := 0; i < 12; i++ {
		mols = append(mols, fmt.Sprintf(`{"xyz": "2\nh2-%d\nH 0 0 0\nH 0 0 %.3f\n"}`, i, 0.70+0.01*float64(i)))
	}
	src := `{"format":"moltrail-study/1","name":"twice","molecules":[` + strings.Join(mols, ",") + `],
	  "levels":[{"methods":["hf","mp2"],"basis_sets":["sto-3g"]}],"tasks":[{"task":"energy"}]}`
	s, err := Parse([]byte(src), "twice.json", nil)
	if err != nil {
		t.Fatal(err)
	}
	p, err := s.Plan()
	if err != nil || len(p.Items) != 24 {
		t.Fatalf("%v, %d items", err, len(p.Items))
	}
	dir := filepath.Join(t.TempDir(), "arch")
	f := newFake()
	f.slow = 40 * time.Millisecond
	var wg sync.WaitGroup
	sums := make([]*Summary, 2)
	errs := make([]error, 2)
	for i := range sums {
		wg.Add(1)
		go func() {
			defer wg.Done()
			sums[i], errs[i] = Run(context.Background(), p, Options{Archive: dir, Jobs: 2, Compute: f.compute, ClaimPoll: 20 * time.Millisecond})
		}()
	}
	wg.Wait()
	computed := 0
	for i, sum := range sums {
		if errs[i] != nil || !sum.OK() {
			t.Fatalf("run %d: %v %+v %s", i, errs[i], sum.Counts, sum.Items[0].Error)
		}
		computed += sum.Counts.Done
	}
	for k, n := range f.calls {
		if n != 1 {
			t.Errorf("input %s computed %d times", k[:12], n)
		}
	}
	if len(f.calls) != 24 || computed != 24 {
		t.Fatalf("%d inputs computed, the runs report %d computed; want 24", len(f.calls), computed)
	}
	for k, n := range recordsPerKey(t, dir) {
		if n != 1 {
			t.Errorf("input %s stored %d times", k[:12], n)
		}
	}
	t.Logf("computed by the two runs: %d and %d", sums[0].Counts.Done, sums[1].Counts.Done)
}

// TestItemClaimedElsewhereIsComputedWhenTheClaimEnds: an input claimed by
// someone else is not computed while the claim lasts; when it ends
// without a record, the run computes the item itself.
func TestItemClaimedElsewhereIsComputedWhenTheClaimEnds(t *testing.T) {
	p := shardStudy(t)
	dir := filepath.Join(t.TempDir(), "arch")
	j, err := p.Items[0].Job(nil)
	if err != nil {
		t.Fatal(err)
	}
	key, _ := j.InputKey()
	c, held, err := archive.TryClaim(dir, key)
	if err != nil || held {
		t.Fatalf("claim: %v %v", held, err)
	}
	f := newFake()
	var waited []string
	var mu sync.Mutex
	release := sync.OnceFunc(func() { time.AfterFunc(100*time.Millisecond, func() { c.Release() }) })
	sum, err := Run(context.Background(), p, Options{Archive: dir, Jobs: 2, Compute: f.compute, ClaimPoll: 20 * time.Millisecond,
		Events: func(e Event) {
			if e.Kind == EventElsewhere {
				mu.Lock()
				waited = append(waited, e.Item.Item)
				mu.Unlock()
				release()
			}
		}})
	if err != nil || !sum.OK() {
		t.Fatalf("%v %+v", err, sum.Counts)
	}
	if len(waited) != 1 || waited[0] != p.Items[0].Name() {
		t.Fatalf("waited for %v, want the claimed item only", waited)
	}
	if f.calls[key] != 1 || len(f.calls) != len(p.Items) {
		t.Fatalf("claimed input computed %d times; %d of %d inputs computed", f.calls[key], len(f.calls), len(p.Items))
	}
}
