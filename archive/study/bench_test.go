package study

import (
	"context"
	"fmt"
	"path/filepath"
	"strings"
	"testing"
)

// benchStudy is a study of n molecules (H2 at different bond lengths) ×
// two levels × optimise: 2n items.
func benchStudy(b *testing.B, n int) *Plan {
	b.Helper()
	var mols []string
	for i := 0; i < n; i++ {
		mols = append(mols, fmt.Sprintf(`{"xyz": "2\nh2-%d\nH 0 0 0\nH 0 0 %.3f\n"}`, i, 0.70+0.001*float64(i)))
	}
	src := `{"format":"moltrail-study/1","name":"bench","molecules":[` + strings.Join(mols, ",") + `],
	  "levels":[{"methods":["hf","mp2"],"basis_sets":["sto-3g"]}],"tasks":[{"task":"optimize"}]}`
	s, err := Parse([]byte(src), "bench.json", nil)
	if err != nil {
		b.Fatal(err)
	}
	p, err := s.Plan()
	if err != nil {
		b.Fatal(err)
	}
	return p
}

// BenchmarkRunAllStored measures a run that finds every item stored: the
// cost of the archive look-ups a resumed or repeated study pays.
func BenchmarkRunAllStored(b *testing.B) {
	p := benchStudy(b, 50)
	dir := filepath.Join(b.TempDir(), "arch")
	f := newFake()
	if _, err := Run(context.Background(), p, Options{Archive: dir, Jobs: 2, Compute: f.compute}); err != nil {
		b.Fatal(err)
	}
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		sum, err := Run(context.Background(), p, Options{Archive: dir, Jobs: 2, Compute: f.compute})
		if err != nil || sum.Counts.Reused != len(p.Items) {
			b.Fatalf("%v %+v", err, sum.Counts)
		}
	}
	b.ReportMetric(float64(len(p.Items)), "items")
}

// BenchmarkRunStoreEach measures the per-item overhead of computing and
// storing (open, write, close the archive) with a calculation that costs
// nothing.
func BenchmarkRunStoreEach(b *testing.B) {
	p := benchStudy(b, 10)
	for i := 0; i < b.N; i++ {
		dir := filepath.Join(b.TempDir(), fmt.Sprint("arch", i))
		f := newFake()
		sum, err := Run(context.Background(), p, Options{Archive: dir, Jobs: 2, Compute: f.compute})
		if err != nil || sum.Counts.Done != len(p.Items) {
			b.Fatalf("%v %+v", err, sum.Counts)
		}
	}
	b.ReportMetric(float64(len(p.Items)), "items")
}

// BenchmarkPlanShards10000 parses a study of 10,000 items, plans it,
// splits it into 100 shards and dry-runs one shard against an empty
// archive: what every array task does before its first calculation.
func BenchmarkPlanShards10000(b *testing.B) {
	for i := 0; i < b.N; i++ {
		p := bigPlan(b, 1250)
		sp, err := p.Shard(Part{K: 7, N: 100})
		if err != nil {
			b.Fatal(err)
		}
		if _, err := DryRun(sp, Options{Archive: filepath.Join(b.TempDir(), "none")}); err != nil {
			b.Fatal(err)
		}
	}
}
