package integral

import (
	"math"
	"sync"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// The kept blocks hold every integral above the screening exactly once up
// to the 8-fold symmetry, with the values Shell gives; stored and computed
// blocks have the same bits, (Q|P) is the transpose of (P|Q), and several
// goroutines fill the same values while J/K builds replay the store.
func TestStoredView(t *testing.T) {
	mb, _ := buildBasis(t, "cc-pvdz", "", water()...)
	n := mb.NBasis
	e, err := NewERI(mb, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if e.InCore() || e.StoredBlocks() != nil {
		t.Fatal("integrals reported in core before the first J/K build")
	}
	D := []*mat.SymDense{testDensity(mb)}
	e.JK(D, true)
	if !e.InCore() {
		t.Fatal("water cc-pVDZ integrals are not in core after a J/K build with the default budget")
	}
	s := e.StoredBlocks()
	if got, want := s.NumValues(), e.Stats().StoredIntegrals; got != want || got == 0 {
		t.Errorf("view holds %d values, the engine reports %d stored", got, want)
	}
	full := fullERI(e)
	comp := e.ComputedBlocks()
	if comp.Stored() || !s.Stored() || comp.NumClasses() != s.NumClasses() {
		t.Fatalf("computed view: stored %v, %d classes; stored view: stored %v, %d classes", comp.Stored(), comp.NumClasses(), s.Stored(), s.NumClasses())
	}
	owner := make([]int, n*n*n*n) // 1 + index of the block (P ≥ Q) listing the element (any orientation)
	var buf, cbuf, tbuf []float64
	worst := 0.0
	for P := 0; P < s.NumClasses(); P++ {
		for Q := 0; Q <= P; Q++ {
			if !s.Kept(P, Q) {
				continue
			}
			bra, ket := s.Class(P), s.Class(Q)
			nb, nk := len(bra.Mu), len(ket.Mu)
			if cap(buf) < nb*nk {
				buf, cbuf, tbuf = make([]float64, nb*nk), make([]float64, nb*nk), make([]float64, nb*nk)
			}
			s.Fill(P, Q, buf)
			comp.Fill(P, Q, cbuf)
			for _, v := range []*Blocks{s, comp} {
				if P == Q {
					break // the same block; (ab|cd) and (cd|ab) are computed apart
				}
				v.Fill(Q, P, tbuf)
				for f := 0; f < nb; f++ {
					for g := 0; g < nk; g++ {
						if tbuf[g*nb+f] != buf[f*nk+g] {
							t.Fatalf("stored %v: block (%d|%d) is not the transpose of (%d|%d)", v.Stored(), Q, P, P, Q)
						}
					}
				}
			}
			id := pairIndex(P, Q) + 1
			for f := 0; f < nb; f++ {
				for g := 0; g < nk; g++ {
					if cbuf[f*nk+g] != buf[f*nk+g] {
						t.Fatalf("block (%d|%d): computed %.17g, stored %.17g", P, Q, cbuf[f*nk+g], buf[f*nk+g])
					}
					a, b, c, d := int(bra.Mu[f]), int(bra.Nu[f]), int(ket.Mu[g]), int(ket.Nu[g])
					worst = math.Max(worst, math.Abs(buf[f*nk+g]-full[((a*n+b)*n+c)*n+d]))
					for _, x := range [8][4]int{{a, b, c, d}, {b, a, c, d}, {a, b, d, c}, {b, a, d, c}, {c, d, a, b}, {d, c, a, b}, {c, d, b, a}, {d, c, b, a}} {
						i := ((x[0]*n+x[1])*n+x[2])*n + x[3]
						if owner[i] != 0 && owner[i] != id {
							t.Fatalf("(%d %d|%d %d) is listed in two blocks", a, b, c, d)
						}
						owner[i] = id
					}
				}
			}
		}
	}
	if worst > 1e-13 {
		t.Errorf("stored integrals differ from Shell by up to %.3g", worst)
	}
	missing := 0
	for i, v := range full {
		if owner[i] == 0 && math.Abs(v) > 1e-11 { // Schwarz threshold 1e-12 bounds what may be left out
			missing++
		}
	}
	if missing > 0 {
		t.Errorf("%d integrals above 1e-11 are in no kept block", missing)
	}

	// concurrent readers alongside a replaying J/K build
	type blk struct{ P, Q int }
	var all []blk
	for P := 0; P < s.NumClasses(); P++ {
		for Q := 0; Q <= P; Q++ {
			all = append(all, blk{P, Q})
		}
	}
	sum := func(b blk, out []float64) float64 {
		s.Fill(b.P, b.Q, out)
		x := 0.0
		for _, v := range out[:len(s.Class(b.P).Mu)*len(s.Class(b.Q).Mu)] {
			x += v
		}
		return x
	}
	want := make([]float64, len(all))
	for k, b := range all {
		want[k] = sum(b, buf)
	}
	var wg sync.WaitGroup
	bad := make([]int, 3)
	for w := range bad {
		wg.Add(1)
		go func(w int) {
			defer wg.Done()
			out := make([]float64, len(buf))
			for k := w; k < len(all); k += len(bad) {
				if sum(all[k], out) != want[k] {
					bad[w]++
				}
			}
		}(w)
	}
	e.JK(D, true)
	wg.Wait()
	for w, b := range bad {
		if b > 0 {
			t.Errorf("reader %d: %d blocks filled differently", w, b)
		}
	}

	direct, err := NewERI(mb, Options{MemoryBudgetBytes: 1})
	if err != nil {
		t.Fatal(err)
	}
	direct.JK(D, false)
	if direct.InCore() || direct.StoredBlocks() != nil {
		t.Error("a direct-mode engine reports stored integrals")
	}
}
