package integral

import (
	"math"
	"math/rand"
	"runtime"
	"sync"
	"testing"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/molecule"
)

func randomDensity(n int, seed int64) *mat.SymDense {
	rng := rand.New(rand.NewSource(seed))
	D := mat.NewSymDense(n, nil)
	for a := 0; a < n; a++ {
		for b := a; b < n; b++ {
			D.SetSym(a, b, rng.Float64()-0.5)
		}
	}
	return D
}

// J and K from the 8-fold-symmetric build equal the brute-force sums over
// the full tensor, for two densities at once, in-core and direct.
func TestJKAgainstFullTensor(t *testing.T) {
	mb, _ := buildBasis(t, "cc-pvdz", "", water()...)
	n := mb.NBasis
	D := []*mat.SymDense{randomDensity(n, 1), randomDensity(n, 2)}
	ref, _ := NewERI(mb, Options{SchwarzThreshold: 1e-300})
	full := fullERI(ref)
	for _, tc := range []struct {
		name   string
		budget int64
	}{{"in-core", 0}, {"direct", 1}} {
		e, err := NewERI(mb, Options{SchwarzThreshold: 1e-300, MemoryBudgetBytes: tc.budget})
		if err != nil {
			t.Fatal(err)
		}
		for call := 0; call < 2; call++ { // the second in-core call replays stored integrals
			J, K := e.JK(D, true)
			for d := range D {
				wj, wk := 0.0, 0.0
				for a := 0; a < n; a++ {
					for b := 0; b < n; b++ {
						j, k := 0.0, 0.0
						for c := 0; c < n; c++ {
							for q := 0; q < n; q++ {
								j += full[((a*n+b)*n+c)*n+q] * D[d].At(c, q)
								k += full[((a*n+c)*n+b)*n+q] * D[d].At(c, q)
							}
						}
						wj = math.Max(wj, math.Abs(J[d].At(a, b)-j))
						wk = math.Max(wk, math.Abs(K[d].At(a, b)-k))
					}
				}
				if wj > 1e-11 || wk > 1e-11 {
					t.Errorf("%s call %d density %d: J/K deviate from the full-tensor sums by %.3g / %.3g", tc.name, call, d, wj, wk)
				}
			}
		}
		if st := e.Stats(); st.InCore != (tc.budget == 0) {
			t.Errorf("%s: stats report in-core = %v", tc.name, st.InCore)
		}
	}
}

// The J/K build gives the same bits for 1, 2 and 3 threads, in-core and
// direct; J without K matches J with K.
func TestJKDeterministic(t *testing.T) {
	atoms := append(water(), molecule.MustAtom("Ne", 3.1, -2.2, 1.7))
	mb, _ := buildBasis(t, "cc-pvdz", "", atoms...)
	D := []*mat.SymDense{randomDensity(mb.NBasis, 5)}
	for _, budget := range []int64{0, 1} {
		var J0, K0 *mat.SymDense
		for _, th := range []int{1, 2, 3} {
			e, err := NewERI(mb, Options{Threads: th, MemoryBudgetBytes: budget})
			if err != nil {
				t.Fatal(err)
			}
			J, K := e.JK(D, true)
			Jonly, Knil := e.JK(D, false)
			if Knil != nil {
				t.Fatal("K returned although not wanted")
			}
			if maxDiff(J[0], Jonly[0]) != 0 {
				t.Errorf("budget %d threads %d: J differs between JK(…, true) and JK(…, false)", budget, th)
			}
			if J0 == nil {
				J0, K0 = J[0], K[0]
				continue
			}
			if maxDiff(J0, J[0]) != 0 || maxDiff(K0, K[0]) != 0 {
				t.Errorf("budget %d: %d threads do not reproduce the 1-thread bits (J %.3g, K %.3g)", budget, th, maxDiff(J0, J[0]), maxDiff(K0, K[0]))
			}
		}
	}
}

// Direct mode gives the same bits as the in-core store and its replay.
func TestDirectMatchesInCore(t *testing.T) {
	mb, _ := buildBasis(t, "cc-pvdz", "", benzene()[:4]...)
	S := Overlap(mb)
	n := mb.NBasis
	D := mat.NewSymDense(n, nil)
	for a := 0; a < n; a++ {
		for b := a; b < n; b++ {
			D.SetSym(a, b, 0.3*S.At(a, b))
		}
	}
	in, _ := NewERI(mb, Options{})
	dir, _ := NewERI(mb, Options{MemoryBudgetBytes: 1})
	// a small second density: its build skips quartets
	D2 := mat.NewSymDense(n, nil)
	D2.ScaleSym(1e-9, D)
	for _, wantK := range []bool{true, false} {
		for call, d := range []*mat.SymDense{D, D2, D} { // store, replay, replay
			J1, K1 := in.JK([]*mat.SymDense{d}, wantK)
			J2, K2 := dir.JK([]*mat.SymDense{d}, wantK)
			diff := maxDiff(J1[0], J2[0])
			if wantK {
				diff = math.Max(diff, maxDiff(K1[0], K2[0]))
			}
			if diff != 0 {
				t.Errorf("K %v, call %d: direct J/K differ from in-core by %.3g", wantK, call, diff)
			}
		}
	}
	if !in.InCore() {
		t.Error("the in-core engine holds no integrals")
	}
	st := dir.Stats()
	if st.InCore || st.QuartetsComputed == 0 || st.DensityScreened == 0 || st.SchwarzThreshold != DefaultSchwarzThreshold {
		t.Errorf("direct stats: %+v", st)
	}
	t.Log(st)
}

func TestNewERIErrors(t *testing.T) {
	mb, _ := buildBasis(t, "sto-3g", "", water()...)
	for _, o := range []Options{{SchwarzThreshold: -1}, {Threads: -2}, {MemoryBudgetBytes: -5}, {SchwarzThreshold: math.NaN()}} {
		if _, err := NewERI(mb, o); err == nil {
			t.Errorf("options %+v accepted", o)
		}
	}
	h := primitiveBasis(false, prim(5, 1, [3]float64{}))
	if _, err := NewERI(h, Options{}); err == nil {
		t.Error("an h shell was accepted")
	}
}

// A job of about 300 functions does not fit the default budget and runs
// direct; its J/K work space stays far below 2 GiB.
func TestLargeJobGoesDirect(t *testing.T) {
	if testing.Short() {
		t.Skip("-short mode: sets up a 264-function basis")
	}
	mb, _ := buildBasis(t, "cc-pvtz", "", benzene()...)
	e, err := NewERI(mb, Options{})
	if err != nil {
		t.Fatal(err)
	}
	st := e.Stats()
	if st.InCore || st.UniqueIntegralBytes <= DefaultMemoryBudgetBytes {
		t.Fatalf("%d functions: in core %v, unique integrals %d bytes", mb.NBasis, st.InCore, st.UniqueIntegralBytes)
	}
	// Set up the J/K work space for two densities (without the long
	// direct build) and measure the heap.
	n := mb.NBasis
	for _, c := range e.store.chunks {
		c.jAcc = resize(c.jAcc, 2, n*n)
		c.kAcc = resize(c.kAcc, 2, n*n)
	}
	var ms runtime.MemStats
	runtime.GC()
	runtime.ReadMemStats(&ms)
	runtime.KeepAlive(e)
	if ms.HeapAlloc > 1<<30 {
		t.Errorf("heap after set-up %d bytes", ms.HeapAlloc)
	}
	t.Logf("heap in use %.1f MiB", float64(ms.HeapAlloc)/(1<<20))
	t.Logf("%d functions: %v", mb.NBasis, st)
}

// Shell may be called from several goroutines at once.
func TestShellConcurrent(t *testing.T) {
	mb, _ := buildBasis(t, "cc-pvdz", "", water()...)
	e, err := NewERI(mb, Options{})
	if err != nil {
		t.Fatal(err)
	}
	ref := fullERI(e)
	var wg sync.WaitGroup
	errs := make(chan string, 4)
	for g := 0; g < 4; g++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			if got := fullERI(e); !slicesEqual(got, ref) {
				errs <- "concurrent Shell calls gave different integrals"
			}
		}()
	}
	wg.Wait()
	close(errs)
	for m := range errs {
		t.Error(m)
	}
}

func slicesEqual(a, b []float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}
