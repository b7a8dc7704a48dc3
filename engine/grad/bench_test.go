package grad

import (
	"syscall"
	"testing"

	"moltrail/engine/basis"
	"moltrail/engine/molecule"
	"moltrail/engine/opt"
	"moltrail/engine/scf"
)

// butadiene is trans-1,3-butadiene with rough, slightly non-planar
// coordinates (ångström): ten atoms.
func butadiene() *molecule.Molecule {
	xyz := []struct {
		s       string
		x, y, z float64
	}{
		{"C", 1.4598, 1.1238, 0.02}, {"C", 0.7300, 0.0000, -0.01}, {"C", -0.7300, 0.0000, 0.01}, {"C", -1.4598, -1.1238, -0.02},
		{"H", 0.9695, 2.0861, 0.05}, {"H", 2.5383, 1.0673, -0.03}, {"H", 1.2750, -0.9440, 0.04},
		{"H", -1.2750, 0.9440, -0.04}, {"H", -0.9695, -2.0861, 0.03}, {"H", -2.5383, -1.0673, -0.05},
	}
	m := &molecule.Molecule{Name: "trans-butadiene", Multiplicity: 1}
	for _, a := range xyz {
		m.Atoms = append(m.Atoms, molecule.MustAtom(a.s, a.x/molecule.BohrAngstrom, a.y/molecule.BohrAngstrom, a.z/molecule.BohrAngstrom))
	}
	return m
}

// BenchmarkHFGradient631Gs is the RHF/6-31G* gradient of a ten-atom
// molecule at a converged SCF (the SCF itself is outside the timing).
func BenchmarkHFGradient631Gs(b *testing.B) {
	mol := butadiene()
	mb := build(b, "6-31g*", mol, "")
	sr, err := scf.Run(mol, mb, scf.Options{Reference: "rhf"})
	if err != nil || !sr.Converged {
		b.Fatal("SCF failed", err)
	}
	b.Logf("%d basis functions, SCF %d iterations", mb.NBasis, len(sr.Iterations))
	b.ResetTimer()
	c0 := cpuSeconds()
	for i := 0; i < b.N; i++ {
		if _, err := SCF(mol, mb, sr, Options{}); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric((cpuSeconds()-c0)/float64(b.N), "cpu-s/op")
}

// cpuSeconds is the process's user+system CPU time: on a shared machine
// it tracks the work done better than wall time.
func cpuSeconds() float64 {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return float64(ru.Utime.Sec+ru.Stime.Sec) + 1e-6*float64(ru.Utime.Usec+ru.Stime.Usec)
}

// BenchmarkHFEnergy631Gs is the SCF the gradient follows, for scale.
func BenchmarkHFEnergy631Gs(b *testing.B) {
	mol := butadiene()
	mb := build(b, "6-31g*", mol, basis.Angular(""))
	c0 := cpuSeconds()
	for i := 0; i < b.N; i++ {
		if _, err := scf.Run(mol, mb, scf.Options{Reference: "rhf"}); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric((cpuSeconds()-c0)/float64(b.N), "cpu-s/op")
}

// BenchmarkHFOptimisation631Gs optimises the rough ten-atom geometry at
// RHF/6-31G* with analytic gradients and the engine's default criteria
// (forces 3e-5/2e-5 Eh/bohr, step 1e-4 bohr, energy 1e-8 Eh).
func BenchmarkHFOptimisation631Gs(b *testing.B) {
	mol := butadiene()
	set, err := basis.Builtin("6-31g*")
	if err != nil {
		b.Fatal(err)
	}
	eg := func(x []float64) (float64, []float64, error) {
		m := opt.WithCoordinates(mol, x)
		mb, err := basis.Build(set, m, "")
		if err != nil {
			return 0, nil, err
		}
		sr, err := scf.Run(m, mb, scf.Options{Reference: "rhf"})
		if err != nil {
			return 0, nil, err
		}
		g, err := SCF(m, mb, sr, Options{})
		return sr.Energy, g, err
	}
	c0 := cpuSeconds()
	var res *opt.Result
	for i := 0; i < b.N; i++ {
		res, err = opt.Minimize(mol, eg, opt.Settings{MaxForce: 3e-5, RMSForce: 2e-5, MaxStep: 1e-4, EnergyChange: 1e-8, MaxSteps: 100, TrustRadius: 0.3})
		if err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric((cpuSeconds()-c0)/float64(b.N), "cpu-s/op")
	b.ReportMetric(float64(len(res.Steps)), "steps")
	if !res.Converged {
		b.Fatalf("not converged after %d steps: %s", len(res.Steps), res.Reason)
	}
	b.Logf("converged in %d steps, E = %.8f Eh", len(res.Steps), res.Energy)
}
