package integral

import (
	"math"
	"runtime"
	"syscall"
	"testing"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/basis"
	"moltrail/engine/molecule"
)

// benzene in the D6h geometry C–C 1.39 Å, C–H 1.09 Å, in the xy plane.
func benzene() []molecule.Atom {
	var atoms []molecule.Atom
	for k := 0; k < 6; k++ {
		phi := float64(k) * math.Pi / 3
		rc := 1.39 * molecule.AngstromBohr
		rh := (1.39 + 1.09) * molecule.AngstromBohr
		atoms = append(atoms, molecule.MustAtom("C", rc*math.Cos(phi), rc*math.Sin(phi), 0))
		atoms = append(atoms, molecule.MustAtom("H", rh*math.Cos(phi), rh*math.Sin(phi), 0))
	}
	return atoms
}

// water in the geometry of the textbook programming exercise (bohr).
func water() []molecule.Atom {
	return []molecule.Atom{
		molecule.MustAtom("O", 0, -0.143225816552, 0),
		molecule.MustAtom("H", 1.638036840407, 1.136548822547, 0),
		molecule.MustAtom("H", -1.638036840407, 1.136548822547, 0),
	}
}

// testDensity is a symmetric test density (not a physical one):
// the overlap scaled down and modulated, which has the sparsity of a real one.
func testDensity(mb *basis.Molecular) *mat.SymDense {
	S := Overlap(mb)
	n := mb.NBasis
	D := mat.NewSymDense(n, nil)
	for a := 0; a < n; a++ {
		for b := a; b < n; b++ {
			D.SetSym(a, b, 0.1*S.At(a, b)*math.Cos(float64(a-b)))
		}
	}
	return D
}

// cpuSeconds is the process's user+system CPU time: on a shared, loaded
// machine it measures the work better than wall time.
func cpuSeconds() float64 {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return math.NaN()
	}
	return float64(ru.Utime.Nano()+ru.Stime.Nano()) * 1e-9
}

func benchJK(b *testing.B, name string, atoms []molecule.Atom, threads int, budget int64) {
	mb, _ := buildBasis(b, name, "", atoms...)
	D := testDensity(mb)
	b.ResetTimer()
	c0 := cpuSeconds()
	defer func() { b.ReportMetric((cpuSeconds()-c0)/float64(b.N), "cpu-s/op") }()
	for it := 0; it < b.N; it++ {
		eri, err := NewERI(mb, Options{Threads: threads, MemoryBudgetBytes: budget})
		if err != nil {
			b.Fatal(err)
		}
		eri.JK([]*mat.SymDense{D}, true) // computes and stores (or direct)
		if it == 0 {
			b.Logf("%s: %d functions; %v", name, mb.NBasis, eri.Stats())
		}
	}
}

func BenchmarkERIBenzeneCCPVDZ1Thread(b *testing.B)  { benchJK(b, "cc-pvdz", benzene(), 1, 0) }
func BenchmarkERIBenzeneCCPVDZ2Threads(b *testing.B) { benchJK(b, "cc-pvdz", benzene(), 2, 0) }
func BenchmarkERIWaterCCPVTZ1Thread(b *testing.B)    { benchJK(b, "cc-pvtz", water(), 1, 0) }
func BenchmarkERIWaterCCPVQZ1Thread(b *testing.B)    { benchJK(b, "cc-pvqz", water(), 1, 0) }

// One in-core J/K contraction (integrals already stored).
func benchReplay(b *testing.B, threads int) {
	mb, _ := buildBasis(b, "cc-pvdz", "", benzene()...)
	D := testDensity(mb)
	eri, err := NewERI(mb, Options{Threads: threads})
	if err != nil {
		b.Fatal(err)
	}
	eri.JK([]*mat.SymDense{D}, true)
	b.ResetTimer()
	c0 := cpuSeconds()
	defer func() { b.ReportMetric((cpuSeconds()-c0)/float64(b.N), "cpu-s/op") }()
	for it := 0; it < b.N; it++ {
		eri.JK([]*mat.SymDense{D}, true)
	}
}

func BenchmarkJKReplayBenzene1Thread(b *testing.B)  { benchReplay(b, 1) }
func BenchmarkJKReplayBenzene2Threads(b *testing.B) { benchReplay(b, 2) }

// threadCPU is the calling OS thread's CPU time (Linux RUSAGE_THREAD).
func threadCPU() float64 {
	var ru syscall.Rusage
	if err := syscall.Getrusage(1, &ru); err != nil {
		return math.NaN()
	}
	return float64(ru.Utime.Nano()+ru.Stime.Nano()) * 1e-9
}

// BenchmarkJKWorkBalance runs the work units of the first (integral
// computing) benzene J/K build one after another on one locked thread,
// measures each one's CPU time, and replays the dynamic schedule JK uses
// for 2 workers: est-speedup-2 = total work / longest worker. On a loaded
// machine this shows what the decomposition allows even when two free
// cores are not available to measure a wall-clock speed-up.
func BenchmarkJKWorkBalance(b *testing.B) {
	mb, _ := buildBasis(b, "cc-pvdz", "", benzene()...)
	D := testDensity(mb)
	for it := 0; it < b.N; it++ {
		e, err := NewERI(mb, Options{Threads: 1})
		if err != nil {
			b.Fatal(err)
		}
		e.setup()
		st := e.store
		n := mb.NBasis
		dens := [][]float64{make([]float64, n*n)}
		for x := 0; x < n; x++ {
			for y := 0; y < n; y++ {
				dens[0][x*n+y] = D.At(x, y)
			}
		}
		runtime.LockOSThread()
		w := e.getWork()
		cost := make([]float64, len(st.chunks))
		for k, c := range st.chunks {
			c.jAcc = resize(c.jAcc, 1, n*n)
			c.kAcc = resize(c.kAcc, 1, n*n)
			t0 := threadCPU()
			e.runChunk(c, modeStore, dens, nil, true, w)
			cost[k] = threadCPU() - t0
		}
		runtime.UnlockOSThread()
		// dynamic schedule: the next unit goes to the worker that is free first
		var tw [2]float64
		total := 0.0
		for _, c := range cost {
			total += c
			if tw[0] <= tw[1] {
				tw[0] += c
			} else {
				tw[1] += c
			}
		}
		b.ReportMetric(total/math.Max(tw[0], tw[1]), "est-speedup-2")
		b.ReportMetric(total, "work-cpu-s")
	}
}
