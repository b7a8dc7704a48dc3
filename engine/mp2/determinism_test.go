package mp2

import (
	"testing"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/molecule"
	"moltrail/engine/scf"
)

// TestBatchesAndThreads: splitting the occupied orbitals into several
// integral passes (a tiny memory budget) and changing the thread count
// must give the same bits.
func TestBatchesAndThreads(t *testing.T) {
	m, mb := build(t, "6-31g", true, 0, 2,
		molecule.MustAtom("O", 0.1, 0, 0), molecule.MustAtom("H", 0.3, 0.2, 1.83))
	sr := runSCF(t, m, mb, scf.Options{Reference: "uhf"})
	n := int64(mb.NBasis)
	onePair := n * n * (n + 1) / 2 * 8
	var ref *Result
	for _, o := range []Options{
		{Threads: 1},
		{Threads: 2, MemoryBudgetBytes: 2 * onePair},
		{Threads: 3, MemoryBudgetBytes: onePair},
	} {
		o.Relaxed, o.FrozenCore = true, true
		r, err := Run(m, mb, sr, o)
		if err != nil {
			t.Fatal(err)
		}
		if ref == nil {
			ref = r
			continue
		}
		if r.IntegralPasses <= ref.IntegralPasses {
			t.Errorf("budget %d B: %d passes, expected more than %d", o.MemoryBudgetBytes, r.IntegralPasses, ref.IntegralPasses)
		}
		if r.SameSpinHartree != ref.SameSpinHartree || r.OppositeSpinHartree != ref.OppositeSpinHartree {
			t.Errorf("threads %d, budget %d: energies %.17g %.17g differ from %.17g %.17g", o.Threads, o.MemoryBudgetBytes, r.SameSpinHartree, r.OppositeSpinHartree, ref.SameSpinHartree, ref.OppositeSpinHartree)
		}
		if !mat.Equal(r.RelaxedDa, ref.RelaxedDa) || !mat.Equal(r.RelaxedDb, ref.RelaxedDb) {
			t.Errorf("threads %d, budget %d: relaxed densities differ in the last bits", o.Threads, o.MemoryBudgetBytes)
		}
	}
	if _, err := Run(m, mb, sr, Options{MemoryBudgetBytes: onePair / 2, Relaxed: true}); err == nil {
		t.Error("a budget below one occupied orbital must be refused")
	}
}

// TestRefusals: bad references are errors, not crashes.
func TestRefusals(t *testing.T) {
	m, mb := waterSTO3G(t)
	sr := runSCF(t, m, mb, scf.Options{Reference: "rohf"})
	if _, err := Run(m, mb, sr, Options{}); err == nil {
		t.Error("ROHF reference must be refused")
	}
	if _, err := Run(m, mb, nil, Options{}); err == nil {
		t.Error("missing reference must be refused")
	}
}
