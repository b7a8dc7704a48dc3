package dft_test

import (
	"math"
	"syscall"
	"testing"
	"time"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/basis"
	"moltrail/engine/dft"
	"moltrail/engine/molecule"
	"moltrail/engine/scf"
)

// timedXC measures the time spent in the XC part of each SCF iteration.
type timedXC struct {
	*dft.XC
	calls int
	wall  time.Duration
	cpu   float64 // process CPU seconds inside Compute (nothing else runs then)
}

func (t *timedXC) Compute(da, db *mat.SymDense) (float64, *mat.SymDense, *mat.SymDense, error) {
	t0, c0 := time.Now(), cpuSeconds()
	e, va, vb, err := t.XC.Compute(da, db)
	t.wall += time.Since(t0)
	t.cpu += cpuSeconds() - c0
	t.calls++
	return e, va, vb, err
}

func cpuSeconds() float64 {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return float64(ru.Utime.Sec+ru.Stime.Sec) + 1e-6*float64(ru.Utime.Usec+ru.Stime.Usec)
}

// BenchmarkBenzeneB3LYP: D6h benzene (C–C 1.39 Å, C–H 1.09 Å, the geometry
// of testdata/psi4/common.py), B3LYP/cc-pVDZ on the default grid, from the
// guess to convergence with exact exchange from the conventional J/K.
func BenchmarkBenzeneB3LYP(b *testing.B) {
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
	m := &molecule.Molecule{Name: "benzene", Multiplicity: 1, Atoms: atoms}
	set, _ := basis.Builtin("cc-pvdz")
	mb, err := basis.Build(set, m, "")
	if err != nil {
		b.Fatal(err)
	}
	spec, _ := dft.Level("")
	for i := 0; i < b.N; i++ {
		cpu0 := cpuSeconds()
		t0 := time.Now()
		x, err := dft.NewXC(m, mb, "b3lyp(vwn-rpa)", spec, 2)
		if err != nil {
			b.Fatal(err)
		}
		setup := time.Since(t0)
		tx := &timedXC{XC: x}
		r, err := scf.Run(m, mb, scf.Options{Reference: "rks", XC: tx, Threads: 2})
		if err != nil || !r.Converged {
			b.Fatalf("benzene B3LYP: %v (converged %v)", err, r != nil && r.Converged)
		}
		b.ReportMetric(r.Energy, "hartree")
		b.ReportMetric(float64(x.Grid().NPoints()), "points")
		b.ReportMetric(float64(tx.calls), "xc-calls")
		b.ReportMetric(setup.Seconds(), "grid-s")
		b.ReportMetric(tx.wall.Seconds()/float64(tx.calls), "xc-s/iter")
		b.ReportMetric(tx.cpu/float64(tx.calls), "xc-cpu-s/iter")
		b.ReportMetric(time.Since(t0).Seconds(), "total-s")
		b.ReportMetric(cpuSeconds()-cpu0, "cpu-s")
	}
}
