package engine

import (
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func TestParseMemorySize(t *testing.T) {
	good := map[string]int64{
		"4GiB":     4 << 30,
		"3.5 gib":  7 << 29,
		"800MB":    800e6,
		"800 MiB":  800 << 20,
		"2TB":      2e12,
		" 1.5TiB ": 3 << 39,
		"70000kB":  70e6,
		"65536KiB": 64 << 20,
	}
	for s, want := range good {
		got, err := ParseMemorySize(s)
		if err != nil || got != want {
			t.Errorf("%q: %d, %v; want %d", s, got, err, want)
		}
	}
	for _, s := range []string{"", "4", "4G", "GiB", "-1GiB", "0MB", "nanGB", "infGiB", "1MiB", "12 parsecs", "1e300TB"} {
		if v, err := ParseMemorySize(s); err == nil {
			t.Errorf("%q accepted as %d bytes", s, v)
		} else if !strings.Contains(err.Error(), "memory size") {
			t.Errorf("%q: error %q does not say what it read", s, err)
		}
	}
}

func TestAvailableMemory(t *testing.T) {
	dir := t.TempDir()
	old := meminfoPath
	defer func() { meminfoPath = old }()
	meminfoPath = filepath.Join(dir, "meminfo")
	// The layout of Linux's /proc/meminfo (values in KiB, written "kB").
	text := "MemTotal:       24000000 kB\nMemFree:        20000000 kB\nMemAvailable:   8388608 kB\nBuffers:           1000 kB\n"
	if err := os.WriteFile(meminfoPath, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	if b, ok := AvailableMemoryBytes(); !ok || b != 8<<30 {
		t.Errorf("available %d (%v), want 8 GiB", b, ok)
	}
	if got := DefaultMemoryLimitBytes(); got != 4<<30 {
		t.Errorf("default limit %d, want half of 8 GiB", got)
	}
	if got := (RunOptions{MemoryLimitBytes: 3 << 30}).memory().limit; got != 3<<30 {
		t.Errorf("a given limit became %d", got)
	}
	meminfoPath = filepath.Join(dir, "absent")
	if _, ok := AvailableMemoryBytes(); ok {
		t.Error("a missing meminfo file gave a value")
	}
	if got := DefaultMemoryLimitBytes(); got != FallbackMemoryLimitBytes {
		t.Errorf("fallback limit %d, want %d", got, FallbackMemoryLimitBytes)
	}
	if err := os.WriteFile(meminfoPath, []byte("MemTotal: 100 kB\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	if _, ok := AvailableMemoryBytes(); ok {
		t.Error("a meminfo file without MemAvailable gave a value")
	}
}

func TestMemoryPlan(t *testing.T) {
	p := memoryPlan{limit: 1 << 30}
	if got, want := p.integrals(100, 0), int64(1<<30)-baseBytes(100); got != want {
		t.Errorf("integral budget %d, want %d", got, want)
	}
	if got := p.integrals(100, 2<<30); got != 1 {
		t.Errorf("integral budget with the grid over the limit: %d, want 1 (direct)", got)
	}
	if got := p.correlated(100, 2<<30); got != 1<<28 {
		t.Errorf("MP2 budget with everything in use: %d, want a quarter of the limit", got)
	}
}

// The memory limit decides only how the work is done: a run too small to
// hold the integrals (direct builds) and a large one (in-core) give the
// same results to the last bit, SCF and MP2 with relaxed properties.
func TestMemoryLimitChangesNoNumber(t *testing.T) {
	if b := (RunOptions{MemoryLimitBytes: MinMemoryLimitBytes}).memory().integrals(19, 0); b != 1 {
		t.Fatalf("the smallest limit leaves %d bytes for integrals; the test wants direct builds", b)
	}
	for _, method := range []string{"hf", "mp2", "b3lyp"} {
		j, err := NewJob(Request{Molecule: workedWater(), Method: method, Basis: "6-31g*"})
		if err != nil {
			t.Fatal(err)
		}
		var out [2][]byte
		for k, limit := range []int64{MinMemoryLimitBytes, 4 << 30} {
			r, err := Run(j, RunOptions{Threads: 2, MemoryLimitBytes: limit})
			if err != nil {
				t.Fatal(err)
			}
			if r.Status != StatusConverged {
				t.Fatalf("%s with limit %d: %s", method, limit, r.Error)
			}
			if out[k], err = json.Marshal(r); err != nil {
				t.Fatal(err)
			}
		}
		if string(out[0]) != string(out[1]) {
			t.Errorf("%s: the results with the smallest and a 4 GiB limit differ", method)
		}
	}
}
