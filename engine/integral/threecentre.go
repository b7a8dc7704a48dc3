package integral

import (
	"fmt"
	"math"
	"sync"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/basis"
)

// Density fitting (resolution of the identity) expands products of orbital
// basis functions in an auxiliary basis {P}: with the Coulomb metric
// J_PQ = (P|Q) and the three-centre integrals (μν|P),
//
//	(μν|λσ) ≈ Σ_PQ (μν|P) [J⁻¹]_PQ (Q|λσ).
//
// ThreeCentre computes (μν|P) and (P|Q) with the same McMurchie–Davidson
// kernels as the four-centre integrals: an auxiliary function is a shell
// pair of that function with a unit s function (exponent zero), so
// (μν|P) is the quartet (μν|P·1).

// ThreeCentre computes the two- and three-centre Coulomb integrals of an
// orbital basis (that of an ERI engine, whose shell pairs and Schwarz
// bounds it shares) and an auxiliary basis placed on the same molecule. It
// is safe for concurrent use.
type ThreeCentre struct {
	orb     *ERI
	aux     *basis.Molecular
	ae      *ERI       // the auxiliary shells in groups, the unit s function last
	apairs  []pairData // apairs[G]: auxiliary group G with the unit function
	aQ      []float64  // sqrt(max (P|P)) over the functions of auxiliary group G
	maxAQ   float64
	metric  *mat.SymDense
	thr     float64
	threads int
	maxTot  int
	pool    sync.Pool
}

// ThreeCentreOptions control the three-centre integrals.
type ThreeCentreOptions struct {
	// SchwarzThreshold: a block (μν|P) over an orbital shell-group pair and
	// an auxiliary shell group is left out (zero) when
	// sqrt((μν|μν))·sqrt((P|P)) (maxima over the blocks) is below it;
	// 0 means DefaultSchwarzThreshold.
	SchwarzThreshold float64
	// Threads for the metric and the Schwarz bounds; 0 means the ERI
	// engine's thread count.
	Threads int
}

// NewThreeCentre prepares the auxiliary shell data, the Schwarz bounds of
// the auxiliary functions and the metric (P|Q). aux must be placed on the
// molecule of orb's basis.
func NewThreeCentre(orb *ERI, aux *basis.Molecular, opt ThreeCentreOptions) (*ThreeCentre, error) {
	if orb == nil {
		return nil, fmt.Errorf("integral: three-centre setup: no orbital integral engine")
	}
	if aux == nil || len(aux.Shells) == 0 {
		return nil, fmt.Errorf("integral: three-centre setup: the auxiliary basis has no shells")
	}
	if opt.SchwarzThreshold < 0 || math.IsNaN(opt.SchwarzThreshold) {
		return nil, fmt.Errorf("integral: three-centre Schwarz threshold %g is negative or not a number", opt.SchwarzThreshold)
	}
	if len(aux.Offsets) != len(aux.Shells) {
		return nil, fmt.Errorf("integral: the auxiliary basis lists %d shell offsets for %d shells", len(aux.Offsets), len(aux.Shells))
	}
	t := &ThreeCentre{orb: orb, aux: aux, thr: opt.SchwarzThreshold, threads: opt.Threads}
	if t.thr == 0 {
		t.thr = DefaultSchwarzThreshold
	}
	if t.threads <= 0 {
		t.threads = orb.threads
	}
	auxL := 0
	for i, sh := range aux.Shells {
		if sh.L < 0 || sh.L > MaxL {
			return nil, fmt.Errorf("integral: auxiliary shell %d (atom %d) has angular momentum %d; the integrals go up to l = %d", i, sh.Atom, sh.L, MaxL)
		}
		if len(sh.Exponents) == 0 || len(sh.Exponents) != len(sh.Coefs) {
			return nil, fmt.Errorf("integral: auxiliary shell %d (atom %d) has %d exponents and %d coefficients", i, sh.Atom, len(sh.Exponents), len(sh.Coefs))
		}
		auxL = max(auxL, sh.L)
	}
	// The auxiliary shells plus one unit s function (exponent 0,
	// coefficient 1): (P·1| is the Gaussian P itself.
	shells := append(append([]basis.Shell(nil), aux.Shells...), basis.Shell{L: 0, Exponents: []float64{0}, Coefs: []float64{1}, Atom: -1})
	offsets := append(append([]int(nil), aux.Offsets...), aux.NBasis)
	t.ae = &ERI{mb: &basis.Molecular{Set: aux.Set, Angular: aux.Angular, Shells: shells, Offsets: offsets, NBasis: aux.NBasis + 1}}
	boysOnce.Do(initBoys)
	trans := t.ae.groupShells()
	unit := t.ae.shellGrp[len(shells)-1]
	if unit != len(t.ae.groups)-1 {
		return nil, fmt.Errorf("integral: three-centre setup: the unit function did not form its own group")
	}
	ng := len(t.ae.groups) - 1
	t.apairs = make([]pairData, ng)
	maxNm, maxNf, maxTot := 1, 1, orb.maxTot
	for G := 0; G < ng; G++ {
		t.apairs[G] = t.ae.makePair(G, unit, trans)
		maxNm = max(maxNm, t.apairs[G].nm)
		maxNf = max(maxNf, t.apairs[G].nf)
		maxTot = max(maxTot, t.apairs[G].ntot)
	}
	for k := range orb.pairs {
		maxNm = max(maxNm, orb.pairs[k].nm)
		maxNf = max(maxNf, orb.pairs[k].nf)
	}
	if maxTot > 65535 {
		return nil, fmt.Errorf("integral: an auxiliary shell group has %d functions; at most 65535 are supported", maxTot)
	}
	t.maxTot = maxTot
	wl := max(orb.maxL, auxL)
	maxX := maxNm * nHerm(2*wl) * maxNf
	t.pool.New = func() any { return newWork(wl, maxTot, maxX) }
	t.computeMetric()
	return t, nil
}

func (t *ThreeCentre) getWork() *work  { return t.pool.Get().(*work) }
func (t *ThreeCentre) putWork(w *work) { t.pool.Put(w) }

// computeMetric fills (P|Q) and the auxiliary Schwarz bounds. Each block is
// written by exactly one task, so the result does not depend on the
// schedule.
func (t *ThreeCentre) computeMetric() {
	ng := len(t.apairs)
	na := t.aux.NBasis
	data := make([]float64, na*na)
	runTasks(t.threads, ng, t.getWork, t.putWork, func(G int, w *work) {
		A := &t.apairs[G]
		for H := 0; H <= G; H++ {
			B := &t.apairs[H]
			out := w.out[:A.ntot*B.ntot]
			t.orb.quartet(A, B, w, out)
			for a := 0; a < A.ntot; a++ {
				p := int(A.mu[a])
				for b := 0; b < B.ntot; b++ {
					q := int(B.mu[b])
					data[p*na+q] = out[a*B.ntot+b]
					data[q*na+p] = out[a*B.ntot+b]
				}
			}
		}
	})
	t.metric = mat.NewSymDense(na, data)
	t.aQ = make([]float64, ng)
	for G := range t.apairs {
		A := &t.apairs[G]
		m := 0.0
		for a := 0; a < A.ntot; a++ {
			p := int(A.mu[a])
			m = math.Max(m, math.Abs(data[p*na+p]))
		}
		t.aQ[G] = math.Sqrt(m)
		t.maxAQ = math.Max(t.maxAQ, t.aQ[G])
	}
}

// NAux is the number of auxiliary functions.
func (t *ThreeCentre) NAux() int { return t.aux.NBasis }

// Aux is the auxiliary basis.
func (t *ThreeCentre) Aux() *basis.Molecular { return t.aux }

// Orbital is the orbital integral engine the integrals are made with.
func (t *ThreeCentre) Orbital() *ERI { return t.orb }

// Threshold is the three-centre Schwarz threshold in use.
func (t *ThreeCentre) Threshold() float64 { return t.thr }

// Metric returns the two-centre Coulomb metric (P|Q) (shared; do not
// modify).
func (t *ThreeCentre) Metric() *mat.SymDense { return t.metric }

// Shell writes the block (ij|p) for orbital shells i, j and auxiliary shell
// p, row-major [ni][nj][np], into out (len ≥ ni·nj·np). No screening is
// applied.
func (t *ThreeCentre) Shell(i, j, p int, out []float64) {
	w := t.getWork()
	defer t.pool.Put(w)
	A, fa := t.orb.pairFunc(i, j)
	gp := t.ae.shellGrp[p]
	B := &t.apairs[gp]
	mp := t.ae.shellMem[p]
	blk := w.out[:A.ntot*B.ntot]
	t.orb.quartet(A, B, w, blk)
	sh := t.orb.mb.Shells
	ni, nj, np := sh[i].NFunc(), sh[j].NFunc(), t.aux.Shells[p].NFunc()
	for a := 0; a < ni; a++ {
		for b := 0; b < nj; b++ {
			row := blk[fa(a, b)*B.ntot:]
			for c := 0; c < np; c++ {
				out[(a*nj+b)*np+c] = row[mp*np+c]
			}
		}
	}
}

// groupPairKept says whether any (μν|P) of the orbital group pair can pass
// the Schwarz test.
func (t *ThreeCentre) groupPairKept(k int) bool {
	return t.orb.schwarzP[k]*t.maxAQ >= t.thr
}

// fillRaw writes the three-centre integrals of orbital group pair k into
// the column-major block a[P*lda + rows[q]] for the pair functions q with
// rows[q] ≥ 0, skipping auxiliary groups that fail the Schwarz test (their
// entries are left as they were: the caller zeroes a).
func (t *ThreeCentre) fillRaw(k int, rows []int32, a []float64, lda int, w *work) {
	A := &t.orb.pairs[k]
	qa := t.orb.schwarzP[k]
	for G := range t.apairs {
		if qa*t.aQ[G] < t.thr {
			continue
		}
		B := &t.apairs[G]
		out := w.out[:A.ntot*B.ntot]
		t.orb.quartet(A, B, w, out)
		for b := 0; b < B.ntot; b++ {
			col := a[int(B.mu[b])*lda:]
			for q, r := range rows[:A.ntot] {
				if r >= 0 {
					col[r] = out[q*B.ntot+b]
				}
			}
		}
	}
}
