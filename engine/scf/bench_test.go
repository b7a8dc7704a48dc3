package scf

import (
	"math"
	"syscall"
	"testing"

	"moltrail/engine/basis"
	"moltrail/engine/molecule"
)

// benzene is D6h benzene in the xy plane, C–C 1.39 Å, C–H 1.09 Å.
func benzene(tb testing.TB) (*molecule.Molecule, *basis.Molecular) {
	var atoms []molecule.Atom
	for _, el := range []struct {
		sym string
		r   float64
	}{{"C", 1.39}, {"H", 1.39 + 1.09}} {
		for k := 0; k < 6; k++ {
			a := float64(k) * math.Pi / 3
			r := el.r * molecule.AngstromBohr
			atoms = append(atoms, molecule.MustAtom(el.sym, r*math.Cos(a), r*math.Sin(a), 0))
		}
	}
	return build(tb, "cc-pvdz", "", 0, 1, atoms...)
}

func benchRHF(b *testing.B, m *molecule.Molecule, mb *basis.Molecular, threads int) {
	b.Helper()
	var e float64
	cpu0 := cpuSeconds()
	for i := 0; i < b.N; i++ {
		r := mustRun(b, m, mb, Options{Reference: "rhf", Threads: threads})
		e = r.Energy
		b.ReportMetric(float64(len(r.Iterations)), "iterations")
	}
	b.ReportMetric(e, "hartree")
	// Process CPU time per run: on a shared machine a steadier figure than wall time.
	b.ReportMetric((cpuSeconds()-cpu0)/float64(b.N), "cpu-s/op")
}

func cpuSeconds() float64 {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return float64(ru.Utime.Sec+ru.Stime.Sec) + 1e-6*float64(ru.Utime.Usec+ru.Stime.Usec)
}

// BenchmarkBenzeneRHFccpVDZ: guess to converged, 114 functions.
func BenchmarkBenzeneRHFccpVDZ(b *testing.B) {
	m, mb := benzene(b)
	for _, th := range []int{1, 2} {
		b.Run(map[int]string{1: "threads=1", 2: "threads=2"}[th], func(b *testing.B) { benchRHF(b, m, mb, th) })
	}
}

// BenchmarkWaterRHFccpVTZ: guess to converged, 58 functions.
func BenchmarkWaterRHFccpVTZ(b *testing.B) {
	m, mb := water(b, "cc-pvtz")
	for _, th := range []int{1, 2} {
		b.Run(map[int]string{1: "threads=1", 2: "threads=2"}[th], func(b *testing.B) { benchRHF(b, m, mb, th) })
	}
}
