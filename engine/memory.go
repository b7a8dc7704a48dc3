package engine

import (
	"bufio"
	"fmt"
	"math"
	"os"
	"strconv"
	"strings"

	"moltrail/engine/integral"
)

// Memory a job may use. The limit (RunOptions.MemoryLimitBytes) decides
// only how the work is done — integrals held in memory or recomputed at
// every Fock build, how many batches of basis values on the grid are
// kept, how many occupied orbitals an MP2 pass transforms at once — and
// every one of those choices gives the same bits, so the limit is not part
// of the job's input and never changes a number.
const (
	// DefaultMemoryShare is the share of the memory the operating system
	// reports available (MemAvailable in /proc/meminfo) that a job may use
	// when no limit is given.
	DefaultMemoryShare = 0.5
	// FallbackMemoryLimitBytes is the default limit where the available
	// memory cannot be read (systems without /proc/meminfo).
	FallbackMemoryLimitBytes = int64(2) << 30
	// MinMemoryLimitBytes is the smallest limit accepted.
	MinMemoryLimitBytes = int64(64) << 20
)

// meminfoPath is read for the available memory (a variable for tests).
var meminfoPath = "/proc/meminfo"

// AvailableMemoryBytes is the memory the operating system reports
// available for new work (MemAvailable of /proc/meminfo); ok is false
// where that cannot be read.
func AvailableMemoryBytes() (bytes int64, ok bool) {
	f, err := os.Open(meminfoPath)
	if err != nil {
		return 0, false
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		fields := strings.Fields(sc.Text())
		if len(fields) < 2 || fields[0] != "MemAvailable:" {
			continue
		}
		v, err := strconv.ParseInt(fields[1], 10, 64)
		if err != nil || v <= 0 {
			return 0, false
		}
		unit := int64(1)
		if len(fields) > 2 && strings.EqualFold(fields[2], "kB") {
			unit = 1024 // the kernel's "kB" is KiB
		}
		return v * unit, true
	}
	return 0, false
}

// DefaultMemoryLimitBytes is the limit of a job when none is given:
// DefaultMemoryShare of the available memory, else
// FallbackMemoryLimitBytes; never below MinMemoryLimitBytes.
func DefaultMemoryLimitBytes() int64 {
	avail, ok := AvailableMemoryBytes()
	if !ok {
		return FallbackMemoryLimitBytes
	}
	return max(int64(DefaultMemoryShare*float64(avail)), MinMemoryLimitBytes)
}

// memoryUnits are the size suffixes ParseMemorySize accepts (case does not
// matter): decimal kB, MB, GB, TB and binary KiB, MiB, GiB, TiB.
var memoryUnits = []struct {
	suffix string
	bytes  float64
}{
	{"kib", 1 << 10}, {"mib", 1 << 20}, {"gib", 1 << 30}, {"tib", 1 << 40},
	{"kb", 1e3}, {"mb", 1e6}, {"gb", 1e9}, {"tb", 1e12},
}

// ParseMemorySize reads a memory size such as "3.5GiB", "800MB" or
// "2 TiB": a positive number and one of the units kB, MB, GB, TB (powers of
// 1000) or KiB, MiB, GiB, TiB (powers of 1024). The size must be at least
// MinMemoryLimitBytes.
func ParseMemorySize(s string) (int64, error) {
	t := strings.ToLower(strings.TrimSpace(s))
	for _, u := range memoryUnits {
		if !strings.HasSuffix(t, u.suffix) {
			continue
		}
		num := strings.TrimSpace(strings.TrimSuffix(t, u.suffix))
		v, err := strconv.ParseFloat(num, 64)
		if err != nil || !(v > 0) || math.IsInf(v, 0) {
			return 0, fmt.Errorf("memory size %q: %q is not a positive number", s, num)
		}
		b := v * u.bytes
		if b > math.MaxInt64/2 {
			return 0, fmt.Errorf("memory size %q is too large", s)
		}
		if int64(b) < MinMemoryLimitBytes {
			return 0, fmt.Errorf("memory size %q is below the smallest limit, %s", s, FormatMemorySize(MinMemoryLimitBytes))
		}
		return int64(b), nil
	}
	return 0, fmt.Errorf("memory size %q needs a unit: kB, MB, GB, TB or KiB, MiB, GiB, TiB (e.g. 4GiB)", s)
}

// FormatMemorySize writes bytes in KiB below 1 MiB, MiB below 1 GiB,
// else in GiB.
func FormatMemorySize(b int64) string {
	switch {
	case b < 1<<20:
		return fmt.Sprintf("%.0f KiB", float64(b)/(1<<10))
	case b < 1<<30:
		return fmt.Sprintf("%.1f MiB", float64(b)/(1<<20))
	}
	return fmt.Sprintf("%.2f GiB", float64(b)/(1<<30))
}

// memoryPlan divides a job's memory limit between the parts of the engine
// that can trade memory for time.
type memoryPlan struct {
	limit int64
}

func (o RunOptions) memory() memoryPlan {
	if o.MemoryLimitBytes > 0 {
		return memoryPlan{limit: o.MemoryLimitBytes}
	}
	return memoryPlan{limit: DefaultMemoryLimitBytes()}
}

// baseBytes is what a calculation on n basis functions needs whatever it
// stores: the program itself, the one-electron matrices, the SCF's Fock,
// density and DIIS matrices and the J/K work units' accumulators (up to
// two densities).
func baseBytes(n int) int64 {
	const program = int64(64) << 20
	const matrices = 64 + 4*32 // SCF matrices + 2 densities × (J, K) × 32 work units
	return program + matrices*8*int64(n)*int64(n)
}

// integrals is the budget of the in-core two-electron integrals: what is
// left of the limit after the base needs and the grid's basis values.
func (p memoryPlan) integrals(n int, gridBytes int64) int64 {
	return max(p.limit-baseBytes(n)-gridBytes, 1)
}

// correlated is the budget of the MP2 half-transformed integrals: what is
// left after the base needs and the integrals held in memory, and at least
// a quarter of the limit (the estimate of the base needs is rough).
func (p memoryPlan) correlated(n int, storedBytes int64) int64 {
	return max(p.limit-baseBytes(n)-storedBytes, p.limit/4)
}

// integralMode says for the progress log where the SCF's integrals were.
func integralMode(st integral.Stats) string {
	if st.InCore {
		return fmt.Sprintf("held in memory, %s (budget %s)", FormatMemorySize(st.StoredBytes), FormatMemorySize(st.MemoryBudgetBytes))
	}
	if st.MemoryBudgetBytes <= 1 {
		return fmt.Sprintf("recomputed at every Fock build (storing them would take up to %s; the job's memory limit leaves nothing for them)", FormatMemorySize(st.StoreBoundBytes))
	}
	return fmt.Sprintf("recomputed at every Fock build (storing them would take up to %s, the budget is %s)", FormatMemorySize(st.StoreBoundBytes), FormatMemorySize(st.MemoryBudgetBytes))
}
