package archive

import (
	"bytes"
	"fmt"
	"os"
	"sync"
	"testing"
	"time"
)

// Benchmarks of the store. Record size: an H2/STO-3G fixture, about 1.7 kB.

func fixtures(b testing.TB, n, offset int) []*Record {
	out := make([]*Record, n)
	for i := range out {
		k := offset + i
		method := []string{"hf", "uhf", "rhf"}[k%3]
		out[i] = fixture(b, k, method, "sto-3g", map[string]string{"batch": fmt.Sprint(k % 50)}, t0.Add(time.Duration(k)*time.Second))
	}
	return out
}

// BenchmarkPutEach stores records one transaction (one fsync) each, as
// `moltrail run` does.
func BenchmarkPutEach(b *testing.B) {
	s := openRW(b, b.TempDir())
	defer s.Close()
	recs := fixtures(b, b.N, 0)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := s.Put(recs[i]); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(b.N)/b.Elapsed().Seconds(), "records/s")
}

// BenchmarkPutBatch stores records 1,000 per call, as import does.
func BenchmarkPutBatch(b *testing.B) {
	s := openRW(b, b.TempDir())
	defer s.Close()
	recs := fixtures(b, b.N, 0)
	b.ResetTimer()
	for i := 0; i < b.N; i += 1000 {
		j := min(i+1000, b.N)
		if _, err := s.PutMany(recs[i:j]); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(b.N)/b.Elapsed().Seconds(), "records/s")
}

// BenchmarkImport reads, schema-validates, hash-checks and stores JSON lines.
func BenchmarkImport(b *testing.B) {
	recs := fixtures(b, b.N, 0)
	var buf bytes.Buffer
	for _, r := range recs {
		e, _ := r.Encode()
		buf.Write(e)
		buf.WriteByte('\n')
	}
	s := openRW(b, b.TempDir())
	defer s.Close()
	b.ResetTimer()
	rep, err := s.Import(&buf, "bench.jsonl", ImportPolicy{})
	if err != nil || rep.Imported != b.N {
		b.Fatal(rep, err)
	}
	b.ReportMetric(float64(b.N)/b.Elapsed().Seconds(), "records/s")
}

var big struct {
	once sync.Once
	s    *Store
	recs []*Record
}

// bigStore is an archive of 100,000 records, built once per benchmark run.
func bigStore(b *testing.B) (*Store, []*Record) {
	big.once.Do(func() {
		dir, err := osMkdirTemp()
		if err != nil {
			b.Fatal(err)
		}
		big.s = openRW(b, dir)
		for off := 0; off < 100000; off += 5000 {
			recs := fixtures(b, 5000, off)
			if _, err := big.s.PutMany(recs); err != nil {
				b.Fatal(err)
			}
			big.recs = append(big.recs, recs[0], recs[4999])
		}
	})
	return big.s, big.recs
}

// BenchmarkLookupInputKey finds the records of one input key in 100,000.
func BenchmarkLookupInputKey(b *testing.B) {
	s, recs := bigStore(b)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		r := recs[i%len(recs)]
		got, err := s.FindSameBuild(r.InputKey, r.Code)
		if err != nil || got == nil || got.ID != r.ID {
			b.Fatal("not found", err)
		}
	}
}

// BenchmarkListFiltered lists one method and one tag value among 100,000
// records (≈ 667 matches).
func BenchmarkListFiltered(b *testing.B) {
	s, _ := bigStore(b)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		l, err := s.List(Filter{Method: "uhf", Tags: []string{"batch=7"}})
		if err != nil || len(l) == 0 {
			b.Fatal(len(l), err)
		}
	}
}

// BenchmarkListSince lists the newest 10 % of 100,000 records by time.
func BenchmarkListSince(b *testing.B) {
	s, _ := bigStore(b)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		l, err := s.List(Filter{Since: t0.Add(90000 * time.Second)})
		if err != nil || len(l) != 10000 {
			b.Fatal(len(l), err)
		}
	}
}

func osMkdirTemp() (string, error) { return os.MkdirTemp("", "moltrail-bench-") }

// BenchmarkIndexByInputKey is the index part of a look-up: the summaries
// stored under one input key.
func BenchmarkIndexByInputKey(b *testing.B) {
	s, recs := bigStore(b)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		l, err := s.ByInputKey(recs[i%len(recs)].InputKey)
		if err != nil || len(l) != 1 {
			b.Fatal(len(l), err)
		}
	}
}

// BenchmarkMerge100000 merges an archive of 100,000 records into an empty
// one: every record schema-checked, decoded, hash-checked and written
// with its index entries, several records to a transaction.
func BenchmarkMerge100000(b *testing.B) {
	const n = 100000
	src := b.TempDir()
	s := openRW(b, src)
	for i := 0; i < n; i += 5000 {
		if _, err := s.PutMany(fixtures(b, min(5000, n-i), i)); err != nil {
			b.Fatal(err)
		}
	}
	s.Close()
	b.ResetTimer()
	cpu := processCPUSeconds()
	for i := 0; i < b.N; i++ {
		dst := openRW(b, b.TempDir())
		rep, err := dst.Merge([]string{src}, MergeOptions{})
		if err != nil || rep.Added != n {
			b.Fatalf("%+v %v", rep, err)
		}
		dst.Close()
	}
	b.ReportMetric(float64(n)*float64(b.N)/b.Elapsed().Seconds(), "records/s")
	b.ReportMetric((processCPUSeconds()-cpu)/float64(b.N), "cpu-s/op")
}
