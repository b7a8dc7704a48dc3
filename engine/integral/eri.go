package integral

import (
	"fmt"
	"math"
	"runtime"
	"sort"
	"sync"
	"sync/atomic"

	"moltrail/engine/basis"
)

// DefaultSchwarzThreshold is the Schwarz screening threshold used when
// Options.SchwarzThreshold is zero: a shell quartet is dropped when
// Q_ij·Q_kl < threshold, Q_ij = sqrt(max |(ij|ij)|).
const DefaultSchwarzThreshold = 1e-12

// PrimitiveThreshold drops a primitive pair from a shell pair when
// |c_a c_b| exp(−μ R_AB²) (π/p)^{3/2} is below it.
const PrimitiveThreshold = 1e-20

// PrimitiveQuartetThreshold drops a primitive quartet when the product of
// the two primitive pairs' Schwarz-type estimates
// |K_ab|/p · sqrt(2π^{5/2}/sqrt(2p)) · max|E^{ab}| is below it.
const PrimitiveQuartetThreshold = 1e-15

// DefaultMemoryBudgetBytes is the in-core budget used when
// Options.MemoryBudgetBytes is zero (1 GiB).
const DefaultMemoryBudgetBytes = 1 << 30

// MaxL is the highest angular momentum the two-electron code handles.
const MaxL = 4

// Options control the two-electron engine.
type Options struct {
	// SchwarzThreshold for dropping shell quartets; 0 means
	// DefaultSchwarzThreshold. To keep every quartet give a tiny positive
	// value.
	SchwarzThreshold float64
	// Threads for the J/K build; 0 means runtime.NumCPU().
	Threads int
	// MemoryBudgetBytes for storing the unique screened integrals; 0 means
	// DefaultMemoryBudgetBytes. When they do not fit, every J/K build
	// recomputes them (direct mode) with density screening.
	MemoryBudgetBytes int64
}

// pairData is the precomputed Gaussian-product data of shell pair (i, j),
// i ≥ j, over its surviving primitive pairs.
type pairData struct {
	i, j     int
	la, lb   int
	nfa, nfb int
	nf, nh   int // nf = nfa·nfb final function pairs; nh = nHerm(la+lb)
	np       int // surviving primitive pairs
	p        []float64
	px       []float64 // P, 3 per primitive pair
	kp       []float64 // c_a c_b exp(−μ R_AB²)/p
	bound    []float64 // primitive Schwarz-type estimate, descending
	// Sparse form of e: for function pair f the Hermite indices
	// nzH[nzStart[f]:nzStart[f+1]] where some primitive has E ≠ 0;
	// es[k*nnz+j] the values, esK the same times (−1)^{t+u+v} (ket use).
	nzStart []int32
	nzH     []int32
	nnz     int
	es, esK []float64
	usedH   []int32 // Hermite indices used by any function pair
	// e[k*nf*nh + f*nh + h]: Hermite coefficients E^{ab}_{tuv} of the
	// final function pair f = fa*nfb+fb (normalisation and spherical
	// transformation included) for primitive pair k.
	e []float64
}

// ERI computes electron-repulsion integrals (ij|kl) over the shells of a
// basis and contracts them with densities. It is safe for concurrent use
// except that JK calls are serialised.
type ERI struct {
	mb        *basis.Molecular
	thr       float64
	threads   int
	budget    int64
	pairs     []pairData // index i*(i+1)/2+j
	schwarz   []float64  // per pair
	maxL      int
	workPool  sync.Pool
	jkMu      sync.Mutex
	store     *incore
	stats     statCounters
	maxPrimNH int
}

type statCounters struct {
	computed, schwarzSkipped, densitySkipped atomic.Int64
	builds                                   atomic.Int64
}

func pairIndex(i, j int) int {
	if i < j {
		i, j = j, i
	}
	return i*(i+1)/2 + j
}

// NewERI prepares the shell-pair data and Schwarz bounds of mb.
func NewERI(mb *basis.Molecular, opt Options) (*ERI, error) {
	if mb == nil || len(mb.Shells) == 0 {
		return nil, fmt.Errorf("integral: two-electron setup: the basis has no shells")
	}
	if opt.SchwarzThreshold < 0 || math.IsNaN(opt.SchwarzThreshold) {
		return nil, fmt.Errorf("integral: Schwarz threshold %g is negative or not a number", opt.SchwarzThreshold)
	}
	if opt.Threads < 0 {
		return nil, fmt.Errorf("integral: thread count %d is negative", opt.Threads)
	}
	if opt.MemoryBudgetBytes < 0 {
		return nil, fmt.Errorf("integral: memory budget %d bytes is negative", opt.MemoryBudgetBytes)
	}
	e := &ERI{mb: mb, thr: opt.SchwarzThreshold, threads: opt.Threads, budget: opt.MemoryBudgetBytes}
	if e.thr == 0 {
		e.thr = DefaultSchwarzThreshold
	}
	if e.threads == 0 {
		e.threads = runtime.NumCPU()
	}
	if e.budget == 0 {
		e.budget = DefaultMemoryBudgetBytes
	}
	for i, sh := range mb.Shells {
		if sh.L < 0 || sh.L > MaxL {
			return nil, fmt.Errorf("integral: shell %d (atom %d) has angular momentum %d; two-electron integrals go up to l = %d", i, sh.Atom, sh.L, MaxL)
		}
		if len(sh.Exponents) == 0 || len(sh.Exponents) != len(sh.Coefs) {
			return nil, fmt.Errorf("integral: shell %d (atom %d) has %d exponents and %d coefficients", i, sh.Atom, len(sh.Exponents), len(sh.Coefs))
		}
		if sh.L > e.maxL {
			e.maxL = sh.L
		}
	}
	boysOnce.Do(initBoys)
	ns := len(mb.Shells)
	trans := make([][]float64, ns)
	for i := range mb.Shells {
		trans[i] = shellTransform(&mb.Shells[i])
	}
	e.pairs = make([]pairData, ns*(ns+1)/2)
	for i := 0; i < ns; i++ {
		for j := 0; j <= i; j++ {
			e.pairs[pairIndex(i, j)] = makePair(mb, i, j, trans)
		}
	}
	e.workPool.New = func() any { return newWork(e.maxL) }
	// Schwarz bounds, computed in parallel over pairs; each pair's value
	// is independent, so the result does not depend on the schedule.
	e.schwarz = make([]float64, len(e.pairs))
	var next atomic.Int64
	var wg sync.WaitGroup
	for t := 0; t < e.threads; t++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			w := e.getWork()
			defer e.workPool.Put(w)
			for {
				k := int(next.Add(1) - 1)
				if k >= len(e.pairs) {
					return
				}
				pd := &e.pairs[k]
				out := w.block(pd.nf * pd.nf)
				e.quartet(pd, pd, w, out)
				m := 0.0
				for f := 0; f < pd.nf; f++ {
					m = math.Max(m, math.Abs(out[f*pd.nf+f]))
				}
				e.schwarz[k] = math.Sqrt(m)
			}
		}()
	}
	wg.Wait()
	return e, nil
}

func makePair(mb *basis.Molecular, i, j int, trans [][]float64) pairData {
	A, B := &mb.Shells[i], &mb.Shells[j]
	la, lb := A.L, B.L
	pd := pairData{i: i, j: j, la: la, lb: lb, nfa: A.NFunc(), nfb: B.NFunc()}
	pd.nf = pd.nfa * pd.nfb
	pd.nh = nHerm(la + lb)
	ca, cb := basis.CartComponents(la), basis.CartComponents(lb)
	nca, ncb := len(ca), len(cb)
	nt := la + lb + 1
	ex := make([][]float64, 3)
	for d := range ex {
		ex[d] = make([]float64, (la+1)*(lb+1)*nt)
	}
	cartE := make([]float64, nca*ncb*pd.nh)
	half := make([]float64, nca*pd.nfb*pd.nh)
	ab2 := dist2(A.Centre, B.Centre)
	ta, tb := trans[i], trans[j]
	for pa, a := range A.Exponents {
		for pb, b := range B.Exponents {
			p := a + b
			mu := a * b / p
			K := A.Coefs[pa] * B.Coefs[pb] * math.Exp(-mu*ab2)
			if math.Abs(K)*math.Pow(math.Pi/p, 1.5) < PrimitiveThreshold {
				continue
			}
			var P [3]float64
			for d := 0; d < 3; d++ {
				P[d] = (a*A.Centre[d] + b*B.Centre[d]) / p
				eCoef1D(la, lb, p, P[d]-A.Centre[d], P[d]-B.Centre[d], ex[d])
			}
			for k := range cartE {
				cartE[k] = 0
			}
			for ia, x := range ca {
				for ib, y := range cb {
					dst := cartE[(ia*ncb+ib)*pd.nh:]
					ebx := ex[0][(x[0]*(lb+1)+y[0])*nt:]
					eby := ex[1][(x[1]*(lb+1)+y[1])*nt:]
					ebz := ex[2][(x[2]*(lb+1)+y[2])*nt:]
					for t := 0; t <= x[0]+y[0]; t++ {
						for u := 0; u <= x[1]+y[1]; u++ {
							for v := 0; v <= x[2]+y[2]; v++ {
								dst[herm.idx[t][u][v]] = ebx[t] * eby[u] * ebz[v]
							}
						}
					}
				}
			}
			// transform b then a
			for k := range half {
				half[k] = 0
			}
			for ia := 0; ia < nca; ia++ {
				for fb := 0; fb < pd.nfb; fb++ {
					dst := half[(ia*pd.nfb+fb)*pd.nh : (ia*pd.nfb+fb+1)*pd.nh]
					for ib := 0; ib < ncb; ib++ {
						c := tb[fb*ncb+ib]
						if c == 0 {
							continue
						}
						src := cartE[(ia*ncb+ib)*pd.nh:]
						for h := range dst {
							dst[h] += c * src[h]
						}
					}
				}
			}
			off := len(pd.e)
			pd.e = append(pd.e, make([]float64, pd.nf*pd.nh)...)
			fin := pd.e[off:]
			for fa := 0; fa < pd.nfa; fa++ {
				for ia := 0; ia < nca; ia++ {
					c := ta[fa*nca+ia]
					if c == 0 {
						continue
					}
					for fb := 0; fb < pd.nfb; fb++ {
						dst := fin[(fa*pd.nfb+fb)*pd.nh : (fa*pd.nfb+fb+1)*pd.nh]
						src := half[(ia*pd.nfb+fb)*pd.nh:]
						for h := range dst {
							dst[h] += c * src[h]
						}
					}
				}
			}
			emax := 0.0
			for _, v := range fin[:pd.nf*pd.nh] {
				emax = math.Max(emax, math.Abs(v))
			}
			pd.p = append(pd.p, p)
			pd.px = append(pd.px, P[0], P[1], P[2])
			pd.kp = append(pd.kp, K/p)
			pd.bound = append(pd.bound, math.Abs(K/p)*math.Sqrt(twoPi52/math.Sqrt(2*p))*emax)
			pd.np++
		}
	}
	sortPrims(&pd)
	makeSparse(&pd)
	return pd
}

func makeSparse(pd *pairData) {
	used := make([]bool, pd.nh)
	pd.nzStart = make([]int32, pd.nf+1)
	for f := 0; f < pd.nf; f++ {
		for h := 0; h < pd.nh; h++ {
			nz := false
			for k := 0; k < pd.np; k++ {
				if pd.e[(k*pd.nf+f)*pd.nh+h] != 0 {
					nz = true
					break
				}
			}
			if nz {
				pd.nzH = append(pd.nzH, int32(h))
				used[h] = true
			}
		}
		pd.nzStart[f+1] = int32(len(pd.nzH))
	}
	pd.nnz = len(pd.nzH)
	pd.es = make([]float64, pd.np*pd.nnz)
	pd.esK = make([]float64, pd.np*pd.nnz)
	for k := 0; k < pd.np; k++ {
		for f := 0; f < pd.nf; f++ {
			for j := pd.nzStart[f]; j < pd.nzStart[f+1]; j++ {
				h := pd.nzH[j]
				v := pd.e[(k*pd.nf+f)*pd.nh+int(h)]
				pd.es[k*pd.nnz+int(j)] = v
				pd.esK[k*pd.nnz+int(j)] = v * herm.sign[h]
			}
		}
	}
	for h, u := range used {
		if u {
			pd.usedH = append(pd.usedH, int32(h))
		}
	}
}

// mdCost estimates the work of quartet() with A as bra and B as ket.
func mdCost(A, B *pairData) int {
	return A.np*B.np*(len(A.usedH)*B.nnz+24) + A.np*A.nnz*B.nf
}

// sortPrims orders the primitive pairs by decreasing bound so that the
// quartet loops can stop early.
func sortPrims(pd *pairData) {
	ord := make([]int, pd.np)
	for k := range ord {
		ord[k] = k
	}
	sort.SliceStable(ord, func(a, b int) bool { return pd.bound[ord[a]] > pd.bound[ord[b]] })
	n := pd.nf * pd.nh
	p, px, kp, bd, e := make([]float64, pd.np), make([]float64, 3*pd.np), make([]float64, pd.np), make([]float64, pd.np), make([]float64, len(pd.e))
	for k, o := range ord {
		p[k], kp[k], bd[k] = pd.p[o], pd.kp[o], pd.bound[o]
		copy(px[3*k:3*k+3], pd.px[3*o:3*o+3])
		copy(e[k*n:(k+1)*n], pd.e[o*n:(o+1)*n])
	}
	pd.p, pd.px, pd.kp, pd.bound, pd.e = p, px, kp, bd, e
}

// work is per-goroutine scratch space for quartet evaluation.
type work struct {
	f      []float64
	r, tmp []float64
	y      []float64
	x      []float64
	out    []float64
	perm   []float64
}

func newWork(maxL int) *work {
	L := 4 * maxL
	nhq := nHerm(L)
	nhp := nHerm(2 * maxL)
	nfp := (2*maxL + 1) * (2*maxL + 1)
	if c := basis.NCart(maxL); c*c > nfp {
		nfp = c * c
	}
	return &work{
		f:    make([]float64, L+1),
		r:    make([]float64, nhq),
		tmp:  make([]float64, nhq),
		y:    make([]float64, nhp),
		x:    make([]float64, nhp*nfp),
		out:  make([]float64, nfp*nfp),
		perm: make([]float64, nfp*nfp),
	}
}

func (e *ERI) getWork() *work { return e.workPool.Get().(*work) }

// block returns the work's output buffer cut to n elements.
func (w *work) block(n int) []float64 { return w.out[:n] }

// quartet writes (ab|cd) for bra pair A and ket pair B, row-major
// [fA][fB] with fA, fB the pairs' function-pair indices, into out.
//
// McMurchie–Davidson: for each bra primitive pair a,
// X[h][g] = Σ_c Σ_h' R_{h+h'}(α, P_a−Q_c)·(−1)^{|h'|}·E^c[g][h'], then
// out[f][g] += Σ_h E^a[f][h] X[h][g], with the prefactor
// 2π^{5/2} K_a K_c /(p q sqrt(p+q)) folded into R.
func (e *ERI) quartet(A, B *pairData, w *work, out []float64) {
	nfA, nfB := A.nf, B.nf
	for k := range out[:nfA*nfB] {
		out[k] = 0
	}
	if A.np == 0 || B.np == 0 {
		return
	}
	L := A.la + A.lb + B.la + B.lb
	if L == 0 {
		// (ss|ss): one function each, Hermite order 0.
		sum := 0.0
		for a := 0; a < A.np; a++ {
			ba := A.bound[a]
			if ba*B.bound[0] < PrimitiveQuartetThreshold {
				break
			}
			p := A.p[a]
			pa := A.px[3*a : 3*a+3]
			ka := A.kp[a] * A.e[a]
			inner := 0.0
			for c := 0; c < B.np; c++ {
				if ba*B.bound[c] < PrimitiveQuartetThreshold {
					break
				}
				q := B.p[c]
				qc := B.px[3*c : 3*c+3]
				dx, dy, dz := pa[0]-qc[0], pa[1]-qc[1], pa[2]-qc[2]
				alpha := p * q / (p + q)
				boys(0, alpha*(dx*dx+dy*dy+dz*dz), w.f)
				inner += B.kp[c] * B.e[c] * w.f[0] / math.Sqrt(p+q)
			}
			sum += ka * inner
		}
		out[0] = twoPi52 * sum
		return
	}
	if mdCost(B, A) < mdCost(A, B) {
		perm := w.perm[:nfA*nfB]
		e.quartetMD(B, A, w, perm)
		for fb := 0; fb < nfB; fb++ {
			for fa := 0; fa < nfA; fa++ {
				out[fa*nfB+fb] = perm[fb*nfA+fa]
			}
		}
		return
	}
	e.quartetMD(A, B, w, out)
}

// quartetMD is the general McMurchie–Davidson quartet with A as bra; out
// must be zero on entry.
func (e *ERI) quartetMD(A, B *pairData, w *work, out []float64) {
	nfA, nfB := A.nf, B.nf
	for k := range out[:nfA*nfB] {
		out[k] = 0
	}
	L := A.la + A.lb + B.la + B.lb
	nhA := A.nh
	r, tmp, f := w.r, w.tmp, w.f
	x := w.x[:nhA*nfB]
	sum, nph := herm.sum, herm.nPairH
	nzS, nzH := B.nzStart, B.nzH
	for a := 0; a < A.np; a++ {
		ba := A.bound[a]
		if ba*B.bound[0] < PrimitiveQuartetThreshold {
			break
		}
		p := A.p[a]
		pa := A.px[3*a : 3*a+3]
		for _, h := range A.usedH {
			xr := x[int(h)*nfB : int(h+1)*nfB]
			for g := range xr {
				xr[g] = 0
			}
		}
		for c := 0; c < B.np; c++ {
			if ba*B.bound[c] < PrimitiveQuartetThreshold {
				break
			}
			q := B.p[c]
			qc := B.px[3*c : 3*c+3]
			pq := [3]float64{pa[0] - qc[0], pa[1] - qc[1], pa[2] - qc[2]}
			alpha := p * q / (p + q)
			boys(L, alpha*(pq[0]*pq[0]+pq[1]*pq[1]+pq[2]*pq[2]), f)
			hermiteR(L, alpha, pq, f, twoPi52*A.kp[a]*B.kp[c]/math.Sqrt(p+q), r, tmp)
			ek := B.esK[c*B.nnz : (c+1)*B.nnz]
			for _, h := range A.usedH {
				base := sum[int(h)*nph : int(h+1)*nph]
				xr := x[int(h)*nfB : int(h+1)*nfB]
				for g := range xr {
					v := 0.0
					for j := nzS[g]; j < nzS[g+1]; j++ {
						v += r[base[nzH[j]]] * ek[j]
					}
					xr[g] += v
				}
			}
		}
		ea := A.es[a*A.nnz : (a+1)*A.nnz]
		for fa := 0; fa < nfA; fa++ {
			o := out[fa*nfB : (fa+1)*nfB]
			for j := A.nzStart[fa]; j < A.nzStart[fa+1]; j++ {
				ev := ea[j]
				h := int(A.nzH[j])
				xr := x[h*nfB : (h+1)*nfB]
				for g := range o {
					o[g] += ev * xr[g]
				}
			}
		}
	}
}

// Threshold is the Schwarz screening threshold in use.
func (e *ERI) Threshold() float64 { return e.thr }

// Schwarz returns sqrt(max |(ij|ij)|) over the functions of shells i, j.
func (e *ERI) Schwarz(i, j int) float64 { return e.schwarz[pairIndex(i, j)] }

// Shell writes the (ij|kl) block in final basis functions, row-major
// [ni][nj][nk][nl], chemists' notation, into out (len ≥ ni·nj·nk·nl).
// No screening is applied.
func (e *ERI) Shell(i, j, k, l int, out []float64) {
	w := e.getWork()
	defer e.workPool.Put(w)
	A := &e.pairs[pairIndex(i, j)]
	B := &e.pairs[pairIndex(k, l)]
	blk := w.out[:A.nf*B.nf]
	e.quartet(A, B, w, blk)
	sh := e.mb.Shells
	ni, nj, nk, nl := sh[i].NFunc(), sh[j].NFunc(), sh[k].NFunc(), sh[l].NFunc()
	// A stores (max,min) order: fA = fa*nfb + fb with a the shell A.i.
	for a := 0; a < ni; a++ {
		for b := 0; b < nj; b++ {
			fA := a*nj + b
			if i != A.i {
				fA = b*ni + a
			}
			for c := 0; c < nk; c++ {
				for d := 0; d < nl; d++ {
					fB := c*nl + d
					if k != B.i {
						fB = d*nk + c
					}
					out[((a*nj+b)*nk+c)*nl+d] = blk[fA*B.nf+fB]
				}
			}
		}
	}
}

// NumShells is the number of shells of the basis.
func (e *ERI) NumShells() int { return len(e.mb.Shells) }
