package cc

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// Factors B[Q][pq] of the exact integrals (eigenvectors of the (pq|rs)
// supermatrix scaled by √λ, λ > 0) reproduce every block and the CCSD(T)
// energy: the path a fitted source takes.
func TestFactoredSource(t *testing.T) {
	c := loadPsi4(t).Cases[1] // water cc-pVDZ, frozen core
	m, mb := c.system(t)
	ref := rhf(t, m, mb)
	act, err := FromRHF(ref, m.CoreOrbitals(), 2)
	if err != nil {
		t.Fatal(err)
	}
	ex := act.Source.(*Exact)
	n := ex.NumOrbitals()
	all := Range{0, n}
	full := make([]float64, n*n*n*n)
	ex.Block([4]Range{all, all, all, all}, full)
	var eig mat.EigenSym
	if !eig.Factorize(mat.NewSymDense(n*n, full), true) {
		t.Fatal("eigendecomposition failed")
	}
	var vec mat.Dense
	eig.VectorsTo(&vec)
	var b []float64
	naux := 0
	for q, l := range eig.Values(nil) {
		if l < 1e-12 {
			continue
		}
		s := math.Sqrt(l)
		for pq := 0; pq < n*n; pq++ {
			b = append(b, s*vec.At(pq, q))
		}
		naux++
	}
	fs, err := NewFactored(n, naux, b)
	if err != nil {
		t.Fatal(err)
	}
	blk := [4]Range{{0, 4}, {4, n}, {1, 3}, {2, n}}
	want := make([]float64, 4*(n-4)*2*(n-2))
	got := make([]float64, len(want))
	ex.Block(blk, want)
	fs.Block(blk, got)
	for i := range want {
		if math.Abs(got[i]-want[i]) > 1e-10 {
			t.Fatalf("block element %d: factored %.12f, exact %.12f", i, got[i], want[i])
		}
	}
	opt := Options{Triples: true, DIISSize: 8}
	re, err := Run(ex, act.Energies, act.Occupied, opt)
	if err != nil {
		t.Fatal(err)
	}
	rf, err := Run(fs, act.Energies, act.Occupied, opt)
	if err != nil {
		t.Fatal(err)
	}
	if d := re.CCSDCorrelationHartree + re.TriplesHartree - rf.CCSDCorrelationHartree - rf.TriplesHartree; math.Abs(d) > 1e-10 {
		t.Errorf("factored source changes CCSD(T) by %.2e Eh", d)
	}
}

// One thread and two give the same bits.
func TestThreadsSameBits(t *testing.T) {
	c := loadPsi4(t).Cases[3] // CO 6-31G*, frozen core
	m, mb := c.system(t)
	ref := rhf(t, m, mb)
	var e [2]float64
	for k, th := range []int{1, 2} {
		act, err := FromRHF(ref, m.CoreOrbitals(), th)
		if err != nil {
			t.Fatal(err)
		}
		r, err := Run(act.Source, act.Energies, act.Occupied, Options{Triples: true, DIISSize: 8, Threads: th, MaxIter: 4})
		if err != nil {
			t.Fatal(err)
		}
		e[k] = r.CCSDCorrelationHartree + r.TriplesHartree
	}
	if e[0] != e[1] {
		t.Errorf("1 thread %.17g, 2 threads %.17g", e[0], e[1])
	}
}
