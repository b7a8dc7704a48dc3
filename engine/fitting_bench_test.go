package engine

import (
	"math"
	"os"
	"syscall"
	"testing"

	"moltrail/engine/molecule"
)

// benzeneMolecule is D6h benzene in the xy plane, C–C 1.39 Å, C–H 1.09 Å
// (the geometry of testdata/psi4/common.py).
func benzeneMolecule() *molecule.Molecule {
	m := &molecule.Molecule{Name: "benzene", Multiplicity: 1}
	for _, el := range []struct {
		sym string
		r   float64
	}{{"C", 1.39}, {"H", 1.39 + 1.09}} {
		for k := 0; k < 6; k++ {
			a := float64(k) * math.Pi / 3
			r := el.r * molecule.AngstromBohr
			m.Atoms = append(m.Atoms, molecule.MustAtom(el.sym, r*math.Cos(a), r*math.Sin(a), 0))
		}
	}
	return m
}

func usage() (cpu float64, maxRSSMiB float64) {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0, 0
	}
	return float64(ru.Utime.Sec+ru.Stime.Sec) + 1e-6*float64(ru.Utime.Usec+ru.Stime.Usec), float64(ru.Maxrss) / 1024
}

// benchJob runs a job b.N times and reports the energy, the SCF
// iterations, the process CPU seconds per run and the peak resident memory
// of the process (run one benchmark per process for that figure).
func benchJob(b *testing.B, req Request, threads int) {
	b.Helper()
	job, err := NewJob(req)
	if err != nil {
		b.Fatal(err)
	}
	cpu0, _ := usage()
	var res *Result
	for i := 0; i < b.N; i++ {
		if res, err = Run(job, RunOptions{Threads: threads}); err != nil {
			b.Fatal(err)
		}
	}
	cpu1, rss := usage()
	b.ReportMetric(res.EnergyHartree, "hartree")
	b.ReportMetric(float64(len(res.SCFIterations)), "iterations")
	b.ReportMetric((cpu1-cpu0)/float64(b.N), "cpu-s/op")
	b.ReportMetric(rss, "maxrss-MiB")
}

func threadRuns(b *testing.B, req Request) {
	for _, th := range []int{1, 2} {
		b.Run(map[int]string{1: "threads=1", 2: "threads=2"}[th], func(b *testing.B) { benchJob(b, req, th) })
	}
}

// Fitted benzene RHF/cc-pVDZ (cc-pVDZ-JKFIT), guess to converged.
func BenchmarkFittedBenzeneRHF(b *testing.B) {
	threadRuns(b, Request{Molecule: benzeneMolecule(), Method: "rhf", Basis: "cc-pvdz", Fitting: &FittingRequest{}})
}

// Fitted benzene B3LYP/cc-pVDZ on the standard grid.
func BenchmarkFittedBenzeneB3LYP(b *testing.B) {
	threadRuns(b, Request{Molecule: benzeneMolecule(), Method: "b3lyp", Basis: "cc-pvdz", Fitting: &FittingRequest{}})
}

// Fitted phenylalanine RHF/6-31G* with def2-universal-JKFIT (202 Cartesian
// functions, 1300 auxiliary functions).
func BenchmarkFittedPhenylalanineRHF(b *testing.B) {
	f, err := os.Open("scf/testdata/phenylalanine.xyz")
	if err != nil {
		b.Skip("phenylalanine geometry: ", err)
	}
	defer f.Close()
	m, err := molecule.ParseXYZ(f, "phenylalanine.xyz")
	if err != nil {
		b.Fatal(err)
	}
	threadRuns(b, Request{Molecule: m, Method: "rhf", Basis: "6-31g*", Fitting: &FittingRequest{}})
}
