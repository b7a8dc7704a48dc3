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

// group is a set of shells on one centre with the same angular momentum,
// representation and exponents (a general contraction, e.g. 1s and 2s of
// a correlation-consistent set): their primitive integrals are made once.
// A group acts as one "super-shell" whose functions are (member, function).
type group struct {
	l       int
	nf      int // functions per member shell
	members []int
	coefs   [][]float64
	funcs   []int32 // global function index of (member, function), member-major
	shell   *basis.Shell
}

// pairData is the precomputed Gaussian-product data of group pair (I, J),
// I ≥ J, over its surviving primitive pairs.
type pairData struct {
	I, J     int
	la, lb   int
	nfa, nfb int // functions per member shell
	nf, nh   int // nf = nfa·nfb; nh = nHerm(la+lb)
	nma, nmb int // members
	nm       int // member combinations nma·nmb
	ntot     int // nm·nf pair functions, index (ma·nmb+mb)·nf + fa·nfb + fb
	np       int // surviving primitive pairs
	p        []float64
	px       []float64 // P, 3 per primitive pair
	kp       []float64 // exp(−μ R_AB²)/p
	w        []float64 // w[k*nm+m]: contraction coefficient products
	bound    []float64 // primitive Schwarz-type estimate, descending
	// Hermite coefficients E^{ab}_{tuv} of the final function pairs
	// (normalisation and spherical transformation included), in sparse
	// form: for function pair f the Hermite indices
	// nzH[nzStart[f]:nzStart[f+1]] where some primitive pair has E ≠ 0;
	// es[k*nnz+j] the values, esK the same times (−1)^{t+u+v} (ket use).
	nzStart []int32
	nzH     []int32
	nnz     int
	es, esK []float64
	usedH   []int32 // Hermite indices used by any function pair
	nzPos   []int32 // position of nzH[j] in usedH
	mu, nu  []int32 // global functions of each pair function
	// views[m] is the pair restricted to member combination m (sharing
	// all primitive data), for single shell quartets; nil when nm = 1.
	views []pairData
}

// ERI computes electron-repulsion integrals (ij|kl) over the shells of a
// basis and contracts them with densities. Shell and Schwarz are safe for
// concurrent use; JK calls are serialised.
type ERI struct {
	mb       *basis.Molecular
	thr      float64
	threads  int
	budget   int64
	groups   []group
	shellGrp []int // group of each shell
	shellMem []int // position of each shell in its group
	pairs    []pairData
	schwarzP []float64 // per group pair
	schwarzS []float64 // per shell pair
	maxL     int
	maxTot   int
	maxX     int
	workPool sync.Pool
	jkMu     sync.Mutex
	store    *incore
	stats    statCounters
}

type statCounters struct {
	computed, densitySkipped atomic.Int64
	builds                   atomic.Int64
}

func pairIndex(i, j int) int {
	if i < j {
		i, j = j, i
	}
	return i*(i+1)/2 + j
}

func sameShellShape(a, b *basis.Shell) bool {
	if a.L != b.L || a.Pure != b.Pure || a.Centre != b.Centre || len(a.Exponents) != len(b.Exponents) {
		return false
	}
	for k := range a.Exponents {
		if a.Exponents[k] != b.Exponents[k] {
			return false
		}
	}
	return true
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
	if len(mb.Offsets) != len(mb.Shells) {
		return nil, fmt.Errorf("integral: the basis lists %d shell offsets for %d shells", len(mb.Offsets), len(mb.Shells))
	}
	boysOnce.Do(initBoys)
	ns := len(mb.Shells)
	trans := e.groupShells()
	ng := len(e.groups)
	e.pairs = make([]pairData, ng*(ng+1)/2)
	maxNm, maxNf := 1, 1
	for I := 0; I < ng; I++ {
		for J := 0; J <= I; J++ {
			pd := e.makePair(I, J, trans)
			e.pairs[pairIndex(I, J)] = pd
			maxNm = max(maxNm, pd.nm)
			maxNf = max(maxNf, pd.nf)
			e.maxTot = max(e.maxTot, pd.ntot)
		}
	}
	if e.maxTot > 65535 {
		return nil, fmt.Errorf("integral: a shell-group pair has %d function pairs; at most 65535 are supported", e.maxTot)
	}
	e.maxX = maxNm * nHerm(2*e.maxL) * maxNf
	e.workPool.New = func() any { return newWork(e.maxL, e.maxTot, e.maxX) }
	// Schwarz bounds, computed in parallel over pairs; each pair's value
	// is independent, so the result does not depend on the schedule.
	e.schwarzP = make([]float64, len(e.pairs))
	e.schwarzS = make([]float64, ns*(ns+1)/2)
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
				out := w.out[:pd.ntot*pd.ntot]
				e.quartet(pd, pd, w, out)
				m := 0.0
				gi, gj := &e.groups[pd.I], &e.groups[pd.J]
				for ma := 0; ma < pd.nma; ma++ {
					for mb := 0; mb < pd.nmb; mb++ {
						ms := 0.0
						for f := 0; f < pd.nf; f++ {
							q := (ma*pd.nmb+mb)*pd.nf + f
							ms = math.Max(ms, math.Abs(out[q*pd.ntot+q]))
						}
						// each shell pair is written by exactly one
						// (pair, combination) up to the mirror (mb, ma)
						// of a diagonal group pair, whose value is equal.
						e.schwarzS[pairIndex(gi.members[ma], gj.members[mb])] = math.Sqrt(ms)
						m = math.Max(m, ms)
					}
				}
				e.schwarzP[k] = math.Sqrt(m)
			}
		}()
	}
	wg.Wait()
	return e, nil
}

// groupShells sorts the shells of e.mb into groups (e.groups, e.shellGrp,
// e.shellMem) and returns each group's function transform.
func (e *ERI) groupShells() [][]float64 {
	mb := e.mb
	ns := len(mb.Shells)
	e.shellGrp = make([]int, ns)
	e.shellMem = make([]int, ns)
	for i := range mb.Shells {
		sh := &mb.Shells[i]
		g := -1
		for k := range e.groups {
			if sameShellShape(e.groups[k].shell, sh) {
				g = k
				break
			}
		}
		if g < 0 {
			g = len(e.groups)
			e.groups = append(e.groups, group{l: sh.L, nf: sh.NFunc(), shell: sh})
		}
		gr := &e.groups[g]
		e.shellGrp[i], e.shellMem[i] = g, len(gr.members)
		gr.members = append(gr.members, i)
		gr.coefs = append(gr.coefs, sh.Coefs)
		for f := 0; f < sh.NFunc(); f++ {
			gr.funcs = append(gr.funcs, int32(mb.Offsets[i]+f))
		}
	}
	trans := make([][]float64, len(e.groups))
	for g := range e.groups {
		trans[g] = shellTransform(e.groups[g].shell)
	}
	return trans
}

func (e *ERI) makePair(I, J int, trans [][]float64) pairData {
	gA, gB := &e.groups[I], &e.groups[J]
	A, B := gA.shell, gB.shell
	la, lb := A.L, B.L
	pd := pairData{I: I, J: J, la: la, lb: lb, nfa: gA.nf, nfb: gB.nf, nma: len(gA.members), nmb: len(gB.members)}
	pd.nf = pd.nfa * pd.nfb
	pd.nm = pd.nma * pd.nmb
	pd.ntot = pd.nm * pd.nf
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
	ta, tb := trans[I], trans[J]
	var dense []float64
	for pa, a := range A.Exponents {
		for pb, b := range B.Exponents {
			p := a + b
			mu := a * b / p
			K := math.Exp(-mu * ab2)
			wmax := 0.0
			for ma := 0; ma < pd.nma; ma++ {
				for mb := 0; mb < pd.nmb; mb++ {
					wmax = math.Max(wmax, math.Abs(gA.coefs[ma][pa]*gB.coefs[mb][pb]))
				}
			}
			if wmax*K*math.Pow(math.Pi/p, 1.5) < PrimitiveThreshold {
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
			off := len(dense)
			dense = append(dense, make([]float64, pd.nf*pd.nh)...)
			fin := dense[off:]
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
			for ma := 0; ma < pd.nma; ma++ {
				for mb := 0; mb < pd.nmb; mb++ {
					pd.w = append(pd.w, gA.coefs[ma][pa]*gB.coefs[mb][pb])
				}
			}
			pd.p = append(pd.p, p)
			pd.px = append(pd.px, P[0], P[1], P[2])
			pd.kp = append(pd.kp, K/p)
			pd.bound = append(pd.bound, wmax*K/p*math.Sqrt(twoPi52/math.Sqrt(2*p))*emax)
			pd.np++
		}
	}
	dense = sortPrims(&pd, dense)
	makeSparse(&pd, dense)
	pd.mu = make([]int32, pd.ntot)
	pd.nu = make([]int32, pd.ntot)
	for ma := 0; ma < pd.nma; ma++ {
		for mb := 0; mb < pd.nmb; mb++ {
			for fa := 0; fa < pd.nfa; fa++ {
				for fb := 0; fb < pd.nfb; fb++ {
					q := (ma*pd.nmb+mb)*pd.nf + fa*pd.nfb + fb
					pd.mu[q] = gA.funcs[ma*pd.nfa+fa]
					pd.nu[q] = gB.funcs[mb*pd.nfb+fb]
				}
			}
		}
	}
	if pd.nm > 1 {
		pd.views = make([]pairData, pd.nm)
		for m := range pd.views {
			v := pd
			v.views = nil
			v.nma, v.nmb, v.nm, v.ntot = 1, 1, 1, pd.nf
			v.w = make([]float64, pd.np)
			for k := range v.w {
				v.w[k] = pd.w[k*pd.nm+m]
			}
			v.mu, v.nu = pd.mu[m*pd.nf:(m+1)*pd.nf], pd.nu[m*pd.nf:(m+1)*pd.nf]
			pd.views[m] = v
		}
	}
	return pd
}

// sortPrims orders the primitive pairs by decreasing bound so that the
// quartet loops can stop early; it returns the reordered dense E.
func sortPrims(pd *pairData, dense []float64) []float64 {
	ord := make([]int, pd.np)
	for k := range ord {
		ord[k] = k
	}
	sort.SliceStable(ord, func(a, b int) bool { return pd.bound[ord[a]] > pd.bound[ord[b]] })
	n := pd.nf * pd.nh
	nm := pd.nm
	p, px, kp, bd, w, e := make([]float64, pd.np), make([]float64, 3*pd.np), make([]float64, pd.np), make([]float64, pd.np), make([]float64, len(pd.w)), make([]float64, len(dense))
	for k, o := range ord {
		p[k], kp[k], bd[k] = pd.p[o], pd.kp[o], pd.bound[o]
		copy(px[3*k:3*k+3], pd.px[3*o:3*o+3])
		copy(w[k*nm:(k+1)*nm], pd.w[o*nm:(o+1)*nm])
		copy(e[k*n:(k+1)*n], dense[o*n:(o+1)*n])
	}
	pd.p, pd.px, pd.kp, pd.bound, pd.w = p, px, kp, bd, w
	return e
}

func makeSparse(pd *pairData, dense []float64) {
	used := make([]bool, pd.nh)
	pd.nzStart = make([]int32, pd.nf+1)
	for f := 0; f < pd.nf; f++ {
		for h := 0; h < pd.nh; h++ {
			nz := false
			for k := 0; k < pd.np; k++ {
				if dense[(k*pd.nf+f)*pd.nh+h] != 0 {
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
				v := dense[(k*pd.nf+f)*pd.nh+int(h)]
				pd.es[k*pd.nnz+int(j)] = v
				pd.esK[k*pd.nnz+int(j)] = v * herm.sign[h]
			}
		}
	}
	pos := make([]int32, pd.nh)
	for h, u := range used {
		if u {
			pos[h] = int32(len(pd.usedH))
			pd.usedH = append(pd.usedH, int32(h))
		}
	}
	pd.nzPos = make([]int32, pd.nnz)
	for j, h := range pd.nzH {
		pd.nzPos[j] = pos[h]
	}
}

// mdCost estimates the work of quartetMD with A as bra and B as ket.
func mdCost(A, B *pairData) int {
	inner := len(A.usedH) * B.nnz
	if B.nm > 1 {
		inner += B.nm * len(A.usedH) * B.nf
	}
	return A.np*B.np*(inner+24) + A.np*B.nm*(A.nnz*B.nf+A.nm*A.nf*B.nf)
}

// work is per-goroutine scratch space for quartet evaluation.
type work struct {
	f      []float64
	r, tmp []float64
	x, z   []float64
	y      []float64
	yb     []float64
	xs     []float64
	out    []float64
	perm   []float64
	pv     []float64 // packed block (direct mode)
	pp, pc []uint16
}

func newWork(maxL, maxTot, maxX int) *work {
	L := 4 * maxL
	nhq := nHerm(L)
	nfp := (2*maxL + 1) * (2*maxL + 1)
	if c := basis.NCart(maxL); c*c > nfp {
		nfp = c * c
	}
	return &work{
		f:    make([]float64, L+1),
		r:    make([]float64, nhq),
		tmp:  make([]float64, nhq),
		x:    make([]float64, maxX),
		z:    make([]float64, nHerm(2*maxL)*nfp),
		y:    make([]float64, nfp*nfp),
		yb:   make([]float64, nHerm(2*maxL)),
		xs:   make([]float64, maxTot),
		out:  make([]float64, maxTot*maxTot),
		perm: make([]float64, maxTot*maxTot),
	}
}

func (e *ERI) getWork() *work { return e.workPool.Get().(*work) }

// quartet writes (AB|CD) for group pairs A (bra) and B (ket), row-major
// [A.ntot][B.ntot], into out.
func (e *ERI) quartet(A, B *pairData, w *work, out []float64) {
	nA, nB := A.ntot, B.ntot
	if A.np == 0 || B.np == 0 {
		for k := range out[:nA*nB] {
			out[k] = 0
		}
		return
	}
	if mdCost(B, A) < mdCost(A, B) {
		perm := w.perm[:nA*nB]
		e.quartetMD(B, A, w, perm)
		for b := 0; b < nB; b++ {
			for a := 0; a < nA; a++ {
				out[a*nB+b] = perm[b*nA+a]
			}
		}
		return
	}
	e.quartetMD(A, B, w, out)
}

// quartetMD is the McMurchie–Davidson quartet with A as bra: for each bra
// primitive pair a,
//
//	X_m[h][g] = Σ_c w_c,m Σ_h' R_{h+h'}(α, P_a−Q_c) (−1)^{|h'|} E^c[g][h']
//	out[(m_a,f)][(m,g)] += w_a,m_a Σ_h E^a[f][h] X_m[h][g]
//
// with the prefactor 2π^{5/2} K_a K_c /(p q sqrt(p+q)) folded into R.
func (e *ERI) quartetMD(A, B *pairData, w *work, out []float64) {
	nA, nB := A.ntot, B.ntot
	for k := range out[:nA*nB] {
		out[k] = 0
	}
	L := A.la + A.lb + B.la + B.lb
	f := w.f
	if L == 0 {
		xs := w.xs[:B.nm]
		for a := 0; a < A.np; a++ {
			ba := A.bound[a]
			if ba*B.bound[0] < PrimitiveQuartetThreshold {
				break
			}
			p := A.p[a]
			pa := A.px[3*a : 3*a+3]
			for m := range xs {
				xs[m] = 0
			}
			for c := 0; c < B.np; c++ {
				if ba*B.bound[c] < PrimitiveQuartetThreshold {
					break
				}
				q := B.p[c]
				qc := B.px[3*c : 3*c+3]
				dx, dy, dz := pa[0]-qc[0], pa[1]-qc[1], pa[2]-qc[2]
				inv := 1 / (p + q)
				boys(0, p*q*inv*(dx*dx+dy*dy+dz*dz), f)
				v := B.kp[c] * B.es[c] * f[0] * math.Sqrt(inv)
				wc := B.w[c*B.nm : (c+1)*B.nm]
				for m, wm := range wc {
					xs[m] += wm * v
				}
			}
			ka := twoPi52 * A.kp[a] * A.es[a]
			wa := A.w[a*A.nm : (a+1)*A.nm]
			for ma, wm := range wa {
				o := out[ma*nB : (ma+1)*nB]
				s := ka * wm
				for m, xv := range xs {
					o[m] += s * xv
				}
			}
		}
		return
	}
	r, tmp := w.r, w.tmp
	nhA, nfB, nfA := A.nh, B.nf, A.nf
	blockX := nhA * nfB
	x := w.x[:B.nm*blockX]
	z := w.z[:blockX]
	y := w.y[:nfA*nfB]
	sum, nph := herm.sum, herm.nPairH
	nzS, nzP, usedB := B.nzStart, B.nzPos, B.usedH
	yb := w.yb[:len(usedB)]
	single := B.nm == 1
	for a := 0; a < A.np; a++ {
		ba := A.bound[a]
		if ba*B.bound[0] < PrimitiveQuartetThreshold {
			break
		}
		p := A.p[a]
		pa := A.px[3*a : 3*a+3]
		for m := 0; m < B.nm; m++ {
			for _, h := range A.usedH {
				xr := x[m*blockX+int(h)*nfB : m*blockX+int(h+1)*nfB]
				for g := range xr {
					xr[g] = 0
				}
			}
		}
		for c := 0; c < B.np; c++ {
			if ba*B.bound[c] < PrimitiveQuartetThreshold {
				break
			}
			q := B.p[c]
			qc := B.px[3*c : 3*c+3]
			pq := [3]float64{pa[0] - qc[0], pa[1] - qc[1], pa[2] - qc[2]}
			inv := 1 / (p + q)
			alpha := p * q * inv
			boys(L, alpha*(pq[0]*pq[0]+pq[1]*pq[1]+pq[2]*pq[2]), f)
			pref := twoPi52 * A.kp[a] * B.kp[c] * math.Sqrt(inv)
			if single {
				pref *= B.w[c]
			}
			hermiteR(L, alpha, pq, f, pref, r, tmp)
			if B.nh == 1 {
				// s–s ket: one function pair, Hermite order 0, so
				// X[h] = R_h · E^c_000.
				ek0 := B.esK[c]
				if single {
					for _, h := range A.usedH {
						x[h] += r[h] * ek0
					}
				} else {
					for m, wm := range B.w[c*B.nm : (c+1)*B.nm] {
						s := wm * ek0
						xm := x[m*blockX : (m+1)*blockX]
						for _, h := range A.usedH {
							xm[h] += s * r[h]
						}
					}
				}
				continue
			}
			ek := B.esK[c*B.nnz : (c+1)*B.nnz]
			dst := z
			if single {
				dst = x
			}
			for _, h := range A.usedH {
				base := sum[int(h)*nph : int(h+1)*nph]
				for k, hb := range usedB {
					yb[k] = r[base[hb]]
				}
				xr := dst[int(h)*nfB : int(h+1)*nfB]
				for g := range xr {
					v := 0.0
					for j := nzS[g]; j < nzS[g+1]; j++ {
						v += yb[nzP[j]] * ek[j]
					}
					if single {
						xr[g] += v
					} else {
						xr[g] = v
					}
				}
			}
			if !single {
				wc := B.w[c*B.nm : (c+1)*B.nm]
				for m, wm := range wc {
					xm := x[m*blockX:]
					for _, h := range A.usedH {
						zr := z[int(h)*nfB : int(h+1)*nfB]
						xr := xm[int(h)*nfB : int(h+1)*nfB]
						for g, zv := range zr {
							xr[g] += wm * zv
						}
					}
				}
			}
		}
		ea := A.es[a*A.nnz : (a+1)*A.nnz]
		wa := A.w[a*A.nm : (a+1)*A.nm]
		for m := 0; m < B.nm; m++ {
			xm := x[m*blockX:]
			for k := range y {
				y[k] = 0
			}
			for fa := 0; fa < nfA; fa++ {
				yr := y[fa*nfB : (fa+1)*nfB]
				for j := A.nzStart[fa]; j < A.nzStart[fa+1]; j++ {
					ev := ea[j]
					h := int(A.nzH[j])
					xr := xm[h*nfB : (h+1)*nfB]
					for g := range yr {
						yr[g] += ev * xr[g]
					}
				}
			}
			for ma, wm := range wa {
				for fa := 0; fa < nfA; fa++ {
					o := out[(ma*nfA+fa)*nB+m*nfB : (ma*nfA+fa)*nB+(m+1)*nfB]
					yr := y[fa*nfB : (fa+1)*nfB]
					for g, yv := range yr {
						o[g] += wm * yv
					}
				}
			}
		}
	}
}

// Threshold is the Schwarz screening threshold in use.
func (e *ERI) Threshold() float64 { return e.thr }

// Schwarz returns sqrt(max |(ij|ij)|) over the functions of shells i, j.
func (e *ERI) Schwarz(i, j int) float64 { return e.schwarzS[pairIndex(i, j)] }

// pairFunc locates function a of shell i and b of shell j: it returns the
// group pair restricted to the member combination of (i, j) and the
// index of (a, b) in it.
func (e *ERI) pairFunc(i, j int) (*pairData, func(a, b int) int) {
	gi, gj := e.shellGrp[i], e.shellGrp[j]
	mi, mj := e.shellMem[i], e.shellMem[j]
	pd := &e.pairs[pairIndex(gi, gj)]
	m, swap := mi*pd.nmb+mj, false
	if gi < gj {
		m, swap = mj*pd.nmb+mi, true
	}
	if pd.views != nil {
		pd = &pd.views[m]
	}
	nfb := pd.nfb
	if swap {
		return pd, func(a, b int) int { return b*nfb + a }
	}
	return pd, func(a, b int) int { return a*nfb + b }
}

// Shell writes the (ij|kl) block in final basis functions, row-major
// [ni][nj][nk][nl], chemists' notation, into out (len ≥ ni·nj·nk·nl).
// No screening is applied.
func (e *ERI) Shell(i, j, k, l int, out []float64) {
	w := e.getWork()
	defer e.workPool.Put(w)
	A, fa := e.pairFunc(i, j)
	B, fb := e.pairFunc(k, l)
	blk := w.out[:A.ntot*B.ntot]
	e.quartet(A, B, w, blk)
	sh := e.mb.Shells
	ni, nj, nk, nl := sh[i].NFunc(), sh[j].NFunc(), sh[k].NFunc(), sh[l].NFunc()
	for a := 0; a < ni; a++ {
		for b := 0; b < nj; b++ {
			row := blk[fa(a, b)*B.ntot:]
			for c := 0; c < nk; c++ {
				for d := 0; d < nl; d++ {
					out[((a*nj+b)*nk+c)*nl+d] = row[fb(c, d)]
				}
			}
		}
	}
}

// NumShells is the number of shells of the basis.
func (e *ERI) NumShells() int { return len(e.mb.Shells) }
