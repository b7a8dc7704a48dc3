package mp2

import (
	"math"
	"syscall"
	"testing"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/basis"
	"moltrail/engine/integral"
	"moltrail/engine/molecule"
	"moltrail/engine/scf"
)

// hydroxylCCPVDZ is the OH radical (UHF, cc-pVDZ: general contractions
// and d shells) with a maker of relaxed frozen-core problems on it.
func hydroxylCCPVDZ(t *testing.T) (*molecule.Molecule, *basis.Molecular, *scf.Result, func(threads int) *problem) {
	m, mb := build(t, "cc-pvdz", true, 0, 2,
		molecule.MustAtom("O", 0, 0, 0), molecule.MustAtom("H", 0.3, -0.2, 1.83))
	sr := runSCF(t, m, mb, scf.Options{Reference: "uhf"})
	mk := func(threads int) *problem {
		p, err := newProblem(m, mb, sr, Options{Threads: threads, Relaxed: true, FrozenCore: true})
		if err != nil {
			t.Fatal(err)
		}
		return p
	}
	return m, mb, sr, mk
}

// The half-transformed integrals from blocks (stored or computed) agree
// with those from shell quartets, and have the same bits for any slab
// size, thread count and block source.
func TestStoredHalfTransform(t *testing.T) {
	_, _, sr, mk := hydroxylCCPVDZ(t)
	if !sr.ERI.InCore() {
		t.Fatal("OH cc-pVDZ integrals are not in core after the SCF")
	}
	stored, computed := sr.ERI.StoredBlocks(), sr.ERI.ComputedBlocks()
	for rho := 0; rho < 2; rho++ {
		p := mk(1)
		nb := p.lay.n
		npair := nb * (nb + 1) / 2
		j0, j1, nP := p.frozen, p.spin[rho].nocc, p.nmo(rho)
		size := (j1 - j0) * nP * npair
		direct := make([]float64, size)
		p.halfTransform(rho, j0, j1, 0, nP, direct)
		var ref []float64
		slot := int64(8 * nb * nb)
		for _, tc := range []struct {
			blocks  *integral.Blocks
			slab    int64
			threads int
		}{{stored, maxSlabBytesStored, 1}, {stored, 1, 1}, {stored, 7 * slot, 3}, {stored, 40 * slot, 2}, {computed, 7 * slot, 2}, {computed, maxSlabBytesComputed, 1}} {
			sp := newStoredPlan(tc.blocks, nb, tc.slab)
			if tc.slab == 1 && len(sp.slabs) < 10 {
				t.Errorf("a 1-byte slab budget gives %d slabs, expected one per pair class", len(sp.slabs))
			}
			q := mk(tc.threads)
			got := make([]float64, size)
			for i := range got {
				got[i] = math.NaN() // every element must be written
			}
			q.halfTransformStored(sp, rho, j0, j1, 0, nP, got)
			if ref == nil {
				ref = got
				worst := 0.0
				for i := range got {
					worst = math.Max(worst, math.Abs(got[i]-direct[i]))
				}
				if !(worst < 1e-11) {
					t.Errorf("spin %d: stored and recomputed (j p|λσ) differ by up to %.3g", rho, worst)
				}
				continue
			}
			for i := range got {
				if got[i] != ref[i] {
					t.Errorf("spin %d, stored %v, %d slabs, %d threads: element %d is %.17g, one stored slab gives %.17g", rho, tc.blocks.Stored(), len(sp.slabs), tc.threads, i, got[i], ref[i])
					break
				}
			}
		}
	}
}

// MP2 with a direct-mode integral engine (every block computed) equals
// MP2 from the in-core store, and is itself independent of the thread count.
func TestDirectMatchesStored(t *testing.T) {
	m, bs, sr, _ := hydroxylCCPVDZ(t)
	direct := *sr
	eri, err := integral.NewERI(bs, integral.Options{MemoryBudgetBytes: 1})
	if err != nil {
		t.Fatal(err)
	}
	direct.ERI = eri
	stored, err := Run(m, bs, sr, Options{Relaxed: true, FrozenCore: true})
	if err != nil {
		t.Fatal(err)
	}
	n := int64(bs.NBasis)
	onePair := n * n * (n + 1) / 2 * 8 // one occupied orbital's (j p|λσ), p over all orbitals
	var first *Result
	for _, o := range []Options{{Threads: 1}, {Threads: 2, MemoryBudgetBytes: 2 * onePair}} {
		th := o.Threads
		o.Relaxed, o.FrozenCore = true, true
		r, err := Run(m, bs, &direct, o)
		if err != nil {
			t.Fatal(err)
		}
		if direct.ERI.InCore() {
			t.Fatal("the direct-mode engine holds integrals in core")
		}
		if first == nil {
			first = r
			// computed blocks have the bits of stored ones; only the
			// Z-vector's J/K builds (density-screened in direct mode) differ
			if r.SameSpinHartree != stored.SameSpinHartree || r.OppositeSpinHartree != stored.OppositeSpinHartree {
				t.Errorf("direct energies %.17g %.17g differ from in-core %.17g %.17g", r.SameSpinHartree, r.OppositeSpinHartree, stored.SameSpinHartree, stored.OppositeSpinHartree)
			}
			if !mat.EqualApprox(r.RelaxedDa, stored.RelaxedDa, 1e-9) || !mat.EqualApprox(r.RelaxedDb, stored.RelaxedDb, 1e-9) {
				t.Error("direct and in-core relaxed densities differ by more than 1e-9")
			}
			continue
		}
		if r.SameSpinHartree != first.SameSpinHartree || r.OppositeSpinHartree != first.OppositeSpinHartree ||
			!mat.Equal(r.RelaxedDa, first.RelaxedDa) || !mat.Equal(r.RelaxedDb, first.RelaxedDb) {
			t.Errorf("direct path with %d threads and %d integral passes differs in the last bits from 1 thread", th, r.IntegralPasses)
		}
		if o.MemoryBudgetBytes != 0 && r.IntegralPasses <= first.IntegralPasses {
			t.Errorf("budget %d B: %d integral passes, expected more than %d", o.MemoryBudgetBytes, r.IntegralPasses, first.IntegralPasses)
		}
	}
}

// BenchmarkBenzeneMP2Only is the MP2 step alone (RMP2/cc-pVDZ benzene, all
// electrons, on an SCF done once outside the timer), in-core and direct.
func BenchmarkBenzeneMP2Only(b *testing.B) {
	c := benzeneCase(b)
	c.Puream = true
	m, mb := c.system(b)
	ref, err := scf.Run(m, mb, scf.Options{Reference: "rhf"})
	if err != nil || !ref.Converged {
		b.Fatalf("scf: %v", err)
	}
	for _, mode := range []struct {
		name   string
		budget int64
	}{{"incore", 0}, {"direct", 1}} {
		b.Run(mode.name, func(b *testing.B) {
			sr := ref
			if mode.budget != 0 { // same reference, integrals recomputed
				d := *ref
				if d.ERI, err = integral.NewERI(mb, integral.Options{MemoryBudgetBytes: mode.budget}); err != nil {
					b.Fatal(err)
				}
				sr = &d
			}
			b.ResetTimer()
			cpu0 := cpuSeconds()
			for it := 0; it < b.N; it++ {
				r, err := Run(m, mb, sr, Options{})
				if err != nil {
					b.Fatal(err)
				}
				// psi4 1.3.2, testdata/psi4/mp2.json timings: −0.7981232609809013 Eh
				if d := r.CorrelationHartree - -0.7981232609809013; math.Abs(d) > 1e-7 {
					b.Errorf("benzene MP2 correlation %.10f, psi4 -0.7981232610", r.CorrelationHartree)
				}
			}
			b.ReportMetric((cpuSeconds()-cpu0)/float64(b.N), "cpu-s/op")
		})
	}
}

// cpuSeconds is the process's user+system CPU time: on a shared, loaded
// machine it measures the work better than wall time.
func cpuSeconds() float64 {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return float64(ru.Utime.Sec+ru.Stime.Sec) + 1e-6*float64(ru.Utime.Usec+ru.Stime.Usec)
}
