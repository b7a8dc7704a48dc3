package integral

import (
	"math"
	"math/rand"
	"testing"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/basis"
	"moltrail/engine/molecule"
)

// fitSetup places an orbital and an auxiliary set on the atoms.
func fitSetup(t testing.TB, orbital, aux string, angular basis.Angular, atoms ...molecule.Atom) (*ERI, *ThreeCentre) {
	t.Helper()
	mb, mol := buildBasis(t, orbital, angular, atoms...)
	set, err := basis.Builtin(aux)
	if err != nil {
		t.Fatal(err)
	}
	if angular == "" {
		angular = mb.Angular
	}
	amb, err := basis.Build(set, mol, angular)
	if err != nil {
		t.Fatal(err)
	}
	eri, err := NewERI(mb, Options{Threads: 2})
	if err != nil {
		t.Fatal(err)
	}
	tc, err := NewThreeCentre(eri, amb, ThreeCentreOptions{SchwarzThreshold: 1e-300})
	if err != nil {
		t.Fatal(err)
	}
	return eri, tc
}

// occupiedDensity is C Cᵀ for nocc random orbitals (positive semidefinite,
// rank nocc, the shape of an SCF density).
func occupiedDensity(n, nocc int, seed int64) *mat.SymDense {
	rng := rand.New(rand.NewSource(seed))
	c := make([]float64, n*nocc)
	for i := range c {
		c[i] = (rng.Float64() - 0.5) / math.Sqrt(float64(n))
	}
	d := mat.NewSymDense(n, nil)
	for a := 0; a < n; a++ {
		for b := a; b < n; b++ {
			s := 0.0
			for i := 0; i < nocc; i++ {
				s += c[a*nocc+i] * c[b*nocc+i]
			}
			d.SetSym(a, b, s)
		}
	}
	return d
}

// fullThreeCentre returns (μν|P) as [P][μ][ν].
func fullThreeCentre(tc *ThreeCentre) []float64 {
	orb, aux := tc.orb.mb, tc.aux
	n, na := orb.NBasis, aux.NBasis
	out := make([]float64, na*n*n)
	buf := make([]float64, 15*15*15)
	for i, si := range orb.Shells {
		for j, sj := range orb.Shells {
			for p, sp := range aux.Shells {
				ni, nj, np := si.NFunc(), sj.NFunc(), sp.NFunc()
				tc.Shell(i, j, p, buf)
				for a := 0; a < ni; a++ {
					for b := 0; b < nj; b++ {
						for c := 0; c < np; c++ {
							out[((aux.Offsets[p]+c)*n+orb.Offsets[i]+a)*n+orb.Offsets[j]+b] = buf[(a*nj+b)*np+c]
						}
					}
				}
			}
		}
	}
	return out
}

// Fitted J and K equal the plain sums Σ (μν|P) [J⁻¹]_PQ (Q|λσ) D_λσ (and
// the exchange analogue) over the full three-index tensor, for an occupied
// density, an indefinite one, and two at once.
func TestFittedJKAgainstFullSums(t *testing.T) {
	_, tc := fitSetup(t, "cc-pvdz", "cc-pvdz-jkfit", "", water()...)
	n, na := tc.orb.mb.NBasis, tc.NAux()
	A := fullThreeCentre(tc)
	var jinv mat.Dense
	if err := jinv.Inverse(tc.Metric()); err != nil {
		t.Fatal(err)
	}
	f, err := NewFittedJK(tc, FitOptions{Threads: 2})
	if err != nil {
		t.Fatal(err)
	}
	if f.Metric().Method != MetricCholesky || f.Metric().Removed != 0 {
		t.Errorf("water cc-pVDZ-JKFIT metric: %s, want the Cholesky route with nothing removed", f.Metric())
	}
	// MᵀM is the inverse metric
	var mtm mat.Dense
	M := f.Metric().Matrix()
	mtm.Mul(M.T(), M)
	for p := 0; p < na; p++ {
		for q := 0; q < na; q++ {
			if d := math.Abs(mtm.At(p, q) - jinv.At(p, q)); d > 1e-8*math.Max(1, math.Abs(jinv.At(p, q))) {
				t.Fatalf("(MᵀM)[%d,%d] = %g, inverse metric %g", p, q, mtm.At(p, q), jinv.At(p, q))
			}
		}
	}
	D := []*mat.SymDense{occupiedDensity(n, 5, 1), randomDensity(n, 2)}
	J, K := f.JK(D, true)
	for d := range D {
		// c_P = Σ_Q Jinv_PQ (Q|λσ) D_λσ
		g := make([]float64, na)
		for p := 0; p < na; p++ {
			for a := 0; a < n; a++ {
				for b := 0; b < n; b++ {
					g[p] += A[(p*n+a)*n+b] * D[d].At(a, b)
				}
			}
		}
		c := make([]float64, na)
		for p := 0; p < na; p++ {
			for q := 0; q < na; q++ {
				c[p] += jinv.At(p, q) * g[q]
			}
		}
		// W[Q][μ][σ] = Σ_λ (μλ|Q) D_λσ, then K_μν = Σ_PQ Σ_σ W... via Jinv.
		w := make([]float64, na*n*n)
		for q := 0; q < na; q++ {
			for a := 0; a < n; a++ {
				for s := 0; s < n; s++ {
					v := 0.0
					for l := 0; l < n; l++ {
						v += A[(q*n+a)*n+l] * D[d].At(l, s)
					}
					w[(q*n+a)*n+s] = v
				}
			}
		}
		wj, wk := 0.0, 0.0
		for a := 0; a < n; a++ {
			for b := 0; b < n; b++ {
				j := 0.0
				for p := 0; p < na; p++ {
					j += A[(p*n+a)*n+b] * c[p]
				}
				k := 0.0
				for p := 0; p < na; p++ {
					for q := 0; q < na; q++ {
						ji := jinv.At(p, q)
						if ji == 0 {
							continue
						}
						s := 0.0
						for x := 0; x < n; x++ {
							s += w[(p*n+a)*n+x] * A[(q*n+b)*n+x]
						}
						k += ji * s
					}
				}
				wj = math.Max(wj, math.Abs(J[d].At(a, b)-j))
				wk = math.Max(wk, math.Abs(K[d].At(a, b)-k))
			}
		}
		// common practice, no source: the two routes differ by rounding only
		if wj > 1e-10 || wk > 1e-10 {
			t.Errorf("density %d: fitted J/K deviate from the full sums by %.2e / %.2e", d, wj, wk)
		}
	}
}

func sameBits(t *testing.T, what string, a, b []*mat.SymDense) {
	t.Helper()
	for d := range a {
		n := a[d].SymmetricDim()
		for i := 0; i < n; i++ {
			for j := 0; j < n; j++ {
				if math.Float64bits(a[d].At(i, j)) != math.Float64bits(b[d].At(i, j)) {
					t.Fatalf("%s: density %d element (%d,%d): %v vs %v", what, d, i, j, a[d].At(i, j), b[d].At(i, j))
				}
			}
		}
	}
}

// In memory and in blocks (the fitted integrals recomputed block by block
// at every build, with one or several groups of factor columns per pass),
// on one thread and on three, the builds give the same bits; also for a
// density of more than one batch of factor columns and an indefinite one.
func TestFittedJKSameBits(t *testing.T) {
	for _, sys := range []struct{ orbital, aux string }{{"6-31g*", "def2-universal-jkfit"}, {"aug-cc-pvtz", "aug-cc-pvtz-jkfit"}} {
		eri, tc := fitSetup(t, sys.orbital, sys.aux, "", water()...)
		n := eri.mb.NBasis
		D := []*mat.SymDense{occupiedDensity(n, 5, 3), occupiedDensity(n, 4, 4), randomDensity(n, 5)}
		ref, err := NewFittedJK(tc, FitOptions{Threads: 1})
		if err != nil {
			t.Fatal(err)
		}
		if !ref.Stats().InCore {
			t.Fatal("the default budget should keep water's fitted integrals in memory")
		}
		J0, K0 := ref.JK(D, true)
		J0j, _ := ref.JK(D, false)
		sameBits(t, sys.orbital+" J with and without K", J0, J0j)
		for _, c := range []struct {
			name           string
			threads, passB int
		}{{"memory, 3 threads", 3, 0}, {"blocks, 1 thread, 1 batch a pass", 1, 1}, {"blocks, 3 threads, 2 batches a pass", 3, 2}, {"blocks, 2 threads, all in one pass", 2, 10}} {
			f, err := NewFittedJK(tc, FitOptions{Threads: c.threads})
			if err != nil {
				t.Fatalf("%s: %v", c.name, err)
			}
			if c.passB > 0 {
				f.inCore, f.b, f.passBatches = false, nil, c.passB
			}
			what := sys.orbital + " " + c.name
			J, K := f.JK(D, true)
			sameBits(t, what+" J", J0, J)
			sameBits(t, what+" K", K0, K)
			Jj, _ := f.JK(D, false)
			sameBits(t, what+" J alone", J0, Jj)
		}
	}
}

// A budget below what the fitted integrals take selects the blocked mode,
// with one batch of factor columns per pass when it holds no more (even a
// budget below what that needs).
func TestFittedJKBudget(t *testing.T) {
	_, tc := fitSetup(t, "cc-pvdz", "cc-pvdz-jkfit", "", water()...)
	f, err := NewFittedJK(tc, FitOptions{MemoryBudgetBytes: 64 << 20})
	if err != nil || !f.Stats().InCore {
		t.Fatalf("64 MiB: in memory %v, error %v", f != nil && f.Stats().InCore, err)
	}
	stored := int64(8 * f.nrows * f.fitPad)
	for _, budget := range []int64{stored - 1, 1} {
		g, err := NewFittedJK(tc, FitOptions{MemoryBudgetBytes: budget})
		if err != nil {
			t.Fatal(err)
		}
		if st := g.Stats(); st.InCore || g.passBatches != 1 || st.BlockBytes <= 0 {
			t.Errorf("budget %d: in memory %v, %d batches a pass, %d bytes a pass", budget, st.InCore, g.passBatches, st.BlockBytes)
		}
	}
}
