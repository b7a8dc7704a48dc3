package integral

import (
	"math"
	"sync"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// The stored view lists every kept integral exactly once up to the 8-fold
// symmetry, with the values Shell gives, and unpacks the same from several
// goroutines while J/K builds replay the store.
func TestStoredView(t *testing.T) {
	mb, _ := buildBasis(t, "cc-pvdz", "", water()...)
	n := mb.NBasis
	e, err := NewERI(mb, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if e.InCore() || e.Stored() != nil {
		t.Fatal("integrals reported in core before the first J/K build")
	}
	D := []*mat.SymDense{testDensity(mb)}
	e.JK(D, true)
	if !e.InCore() {
		t.Fatal("water cc-pVDZ integrals are not in core after a J/K build with the default budget")
	}
	s := e.Stored()
	if got, want := s.NumValues(), e.Stats().StoredIntegrals; got != want {
		t.Errorf("view holds %d values, the engine reports %d stored", got, want)
	}
	full := fullERI(e)
	owner := make([]int, n*n*n*n) // 1 + block listing the element (any of its 8 orientations)
	buf := make([]float64, 0)
	worst := 0.0
	for k := 0; k < s.NumBlocks(); k++ {
		P, Q := s.Block(k)
		if P < Q {
			t.Fatalf("block %d: bra class %d below ket class %d", k, P, Q)
		}
		bra, ket := s.Class(P), s.Class(Q)
		nb, nk := len(bra.Mu), len(ket.Mu)
		if cap(buf) < nb*nk {
			buf = make([]float64, nb*nk)
		}
		s.Unpack(k, buf)
		for f := 0; f < nb; f++ {
			for g := 0; g < nk; g++ {
				a, b, c, d := int(bra.Mu[f]), int(bra.Nu[f]), int(ket.Mu[g]), int(ket.Nu[g])
				worst = math.Max(worst, math.Abs(buf[f*nk+g]-full[((a*n+b)*n+c)*n+d]))
				for _, x := range [8][4]int{{a, b, c, d}, {b, a, c, d}, {a, b, d, c}, {b, a, d, c}, {c, d, a, b}, {d, c, a, b}, {c, d, b, a}, {d, c, b, a}} {
					i := ((x[0]*n+x[1])*n+x[2])*n + x[3]
					if owner[i] != 0 && owner[i] != k+1 {
						t.Fatalf("(%d %d|%d %d) is listed in blocks %d and %d", a, b, c, d, owner[i]-1, k)
					}
					owner[i] = k + 1
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
		t.Errorf("%d integrals above 1e-11 are in no stored block", missing)
	}

	// concurrent readers alongside a replaying J/K build
	sum := func(k int, out []float64) float64 {
		s.Unpack(k, out)
		P, Q := s.Block(k)
		x := 0.0
		for _, v := range out[:len(s.Class(P).Mu)*len(s.Class(Q).Mu)] {
			x += v
		}
		return x
	}
	want := make([]float64, s.NumBlocks())
	for k := range want {
		want[k] = sum(k, buf)
	}
	var wg sync.WaitGroup
	bad := make([]int, 3)
	for w := range bad {
		wg.Add(1)
		go func(w int) {
			defer wg.Done()
			out := make([]float64, len(buf))
			for k := w; k < s.NumBlocks(); k += len(bad) {
				if sum(k, out) != want[k] {
					bad[w]++
				}
			}
		}(w)
	}
	e.JK(D, true)
	wg.Wait()
	for w, b := range bad {
		if b > 0 {
			t.Errorf("reader %d: %d blocks unpacked differently", w, b)
		}
	}

	direct, err := NewERI(mb, Options{MemoryBudgetBytes: 1})
	if err != nil {
		t.Fatal(err)
	}
	direct.JK(D, false)
	if direct.InCore() || direct.Stored() != nil {
		t.Error("a direct-mode engine reports stored integrals")
	}
}
