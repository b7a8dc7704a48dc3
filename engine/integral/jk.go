package integral

import (
	"fmt"
	"math"
	"sort"
	"sync"
	"sync/atomic"

	"gonum.org/v1/gonum/mat"
)

// numChunks is the fixed number of work units of a J/K build. Each unit
// owns its accumulation buffers and the units are summed in index order, so
// the result does not depend on the number of threads.
const numChunks = 32

// chunk is a fixed set of bra shell pairs; for each, all ket pairs Q ≤ P
// that pass the Schwarz test are processed in ascending order.
type chunk struct {
	rows []int32
	size int64 // integrals of the chunk's quartets
	// In-core integrals in processing order (see pack): for each quartet
	// and bra pair function a row of cnt values; a row of as many values
	// as the ket has pair functions is dense, any other row lists its
	// non-zero values with their ket pair-function positions in pos.
	vals []float64
	pos  []uint16
	cnt  []uint16
	jAcc [][]float64
	kAcc [][]float64
}

type incore struct {
	chunks   []*chunk
	inCore   bool
	stored   int64
	bound    int64 // upper bound of the store's bytes: 8 per integral + 2 per row
	unique   int64 // Schwarz-surviving unique quartets
	screened int64 // quartets dropped by the Schwarz test
	filled   bool
}

// Stats reports what the two-electron engine has done.
type Stats struct {
	Shells, ShellPairs   int // ShellPairs counts pairs of shell groups (shells sharing centre, l and exponents)
	SchwarzThreshold     float64
	UniqueQuartets       int64 // Schwarz-surviving unique shell quartets
	SchwarzScreened      int64 // unique shell quartets dropped by the Schwarz test
	InCore               bool  // integrals stored (true) or recomputed per build
	StoredIntegrals      int64
	StoredBytes          int64
	UniqueIntegralBytes  int64 // 8 bytes per integral of the kept quartets
	StoreBoundBytes      int64 // the most the in-core store can take (compared with the budget)
	QuartetsComputed     int64 // shell quartets evaluated so far (all calls)
	DensityScreened      int64 // quartets skipped by density screening (direct mode)
	JKBuilds             int64
	MemoryBudgetBytes    int64
	Threads              int
	PrimitiveThreshold   float64
	SchwarzScreenedShare float64
}

// Stats returns counters for the record (the screening and in-core
// decision are made on the first call of Stats or JK).
func (e *ERI) Stats() Stats {
	e.jkMu.Lock()
	if e.store == nil {
		e.setup()
	}
	e.jkMu.Unlock()
	s := Stats{
		Shells: len(e.mb.Shells), ShellPairs: len(e.pairs), SchwarzThreshold: e.thr,
		QuartetsComputed: e.stats.computed.Load(), DensityScreened: e.stats.densitySkipped.Load(),
		JKBuilds: e.stats.builds.Load(), MemoryBudgetBytes: e.budget, Threads: e.threads,
		PrimitiveThreshold: PrimitiveThreshold,
	}
	if st := e.store; st != nil {
		s.UniqueQuartets, s.SchwarzScreened, s.InCore = st.unique, st.screened, st.inCore
		s.UniqueIntegralBytes = 8 * st.stored
		s.StoreBoundBytes = st.bound
		if st.inCore && st.filled {
			for _, c := range st.chunks {
				s.StoredIntegrals += int64(len(c.vals))
				s.StoredBytes += int64(8*len(c.vals) + 2*len(c.pos) + 2*len(c.cnt))
			}
		}
		if tot := st.unique + st.screened; tot > 0 {
			s.SchwarzScreenedShare = float64(st.screened) / float64(tot)
		}
	}
	return s
}

// String is a one-line summary.
func (s Stats) String() string {
	mode := "direct"
	if s.InCore {
		mode = fmt.Sprintf("in-core %.1f MiB", float64(s.StoredBytes)/(1<<20))
	}
	return fmt.Sprintf("%d shells, %d quartets kept, %d dropped by Schwarz < %.0e, %s, %d computed, %d density-skipped, %d J/K builds",
		s.Shells, s.UniqueQuartets, s.SchwarzScreened, s.SchwarzThreshold, mode, s.QuartetsComputed, s.DensityScreened, s.JKBuilds)
}

// quartetCost is a rough operation count used to balance the chunks.
func quartetCost(A, B *pairData) float64 {
	return float64(A.np*B.np)*float64(A.nh*B.nh*(1+B.nf)+16) + float64(A.np*A.nf*A.nh*B.nf)
}

// setup decides in-core or direct and distributes bra pairs over chunks.
func (e *ERI) setup() {
	np := len(e.pairs)
	st := &incore{}
	rowCost := make([]float64, np)
	rowVals := make([]int64, np)
	var rows int64
	for P := 0; P < np; P++ {
		A := &e.pairs[P]
		qp := e.schwarzP[P]
		for Q := 0; Q <= P; Q++ {
			if qp*e.schwarzP[Q] < e.thr {
				st.screened++
				continue
			}
			B := &e.pairs[Q]
			st.unique++
			rowVals[P] += int64(A.ntot * B.ntot)
			rows += int64(A.ntot)
			rowCost[P] += quartetCost(A, B)
		}
	}
	var total int64
	for _, v := range rowVals {
		total += v
	}
	st.stored = total
	st.bound = 8*total + 2*rows
	st.inCore = st.bound <= e.budget
	// Longest-processing-time assignment of rows to chunks, in a fixed order.
	order := make([]int, np)
	for i := range order {
		order[i] = i
	}
	sort.SliceStable(order, func(a, b int) bool { return rowCost[order[a]] > rowCost[order[b]] })
	nc := numChunks
	if np < nc {
		nc = np
	}
	st.chunks = make([]*chunk, nc)
	load := make([]float64, nc)
	for i := range st.chunks {
		st.chunks[i] = &chunk{}
	}
	for _, P := range order {
		if rowCost[P] == 0 {
			continue
		}
		best := 0
		for c := 1; c < nc; c++ {
			if load[c] < load[best] {
				best = c
			}
		}
		load[best] += rowCost[P]
		st.chunks[best].rows = append(st.chunks[best].rows, int32(P))
		st.chunks[best].size += rowVals[P]
	}
	for _, c := range st.chunks {
		sort.Slice(c.rows, func(a, b int) bool { return c.rows[a] < c.rows[b] })
	}
	e.store = st
}

// JK returns, for each density D[n], J[n]_μν = Σ (μν|λσ) D_λσ and, when
// wantK, K[n]_μν = Σ (μλ|νσ) D_λσ. The work runs on Options.Threads
// goroutines; the result is bit-identical for any thread count. Calls are
// serialised.
func (e *ERI) JK(D []*mat.SymDense, wantK bool) (J, K []*mat.SymDense) {
	e.jkMu.Lock()
	defer e.jkMu.Unlock()
	n := e.mb.NBasis
	nd := len(D)
	dens := make([][]float64, nd)
	for d, m := range D {
		if m.SymmetricDim() != n {
			panic(fmt.Sprintf("integral: JK density %d has dimension %d, the basis has %d functions", d, m.SymmetricDim(), n))
		}
		dens[d] = make([]float64, n*n)
		for a := 0; a < n; a++ {
			for b := 0; b < n; b++ {
				dens[d][a*n+b] = m.At(a, b)
			}
		}
	}
	if e.store == nil {
		e.setup()
	}
	st := e.store
	mode := modeDirect
	if st.inCore {
		mode = modeReplay
		if !st.filled {
			mode = modeStore
		}
	}
	dmax := e.densityBlockMax(dens)
	for _, c := range st.chunks {
		c.jAcc = resize(c.jAcc, nd, n*n)
		if wantK {
			c.kAcc = resize(c.kAcc, nd, n*n)
		}
	}
	var next atomic.Int64
	var wg sync.WaitGroup
	threads := e.threads
	if threads > len(st.chunks) {
		threads = len(st.chunks)
	}
	for t := 0; t < threads; t++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			w := e.getWork()
			defer e.workPool.Put(w)
			for {
				k := int(next.Add(1) - 1)
				if k >= len(st.chunks) {
					return
				}
				e.runChunk(st.chunks[k], mode, dens, dmax, wantK, w)
			}
		}()
	}
	wg.Wait()
	if mode == modeStore {
		st.filled = true
	}
	e.stats.builds.Add(1)
	J = make([]*mat.SymDense, nd)
	if wantK {
		K = make([]*mat.SymDense, nd)
	}
	for d := 0; d < nd; d++ {
		ja := make([]float64, n*n)
		var ka []float64
		if wantK {
			ka = make([]float64, n*n)
		}
		for _, c := range st.chunks {
			for x, v := range c.jAcc[d] {
				ja[x] += v
			}
			if wantK {
				for x, v := range c.kAcc[d] {
					ka[x] += v
				}
			}
		}
		jm := mat.NewSymDense(n, nil)
		for a := 0; a < n; a++ {
			for b := a; b < n; b++ {
				jm.SetSym(a, b, 2*(ja[a*n+b]+ja[b*n+a]))
			}
		}
		J[d] = jm
		if wantK {
			km := mat.NewSymDense(n, nil)
			for a := 0; a < n; a++ {
				for b := a; b < n; b++ {
					km.SetSym(a, b, ka[a*n+b]+ka[b*n+a])
				}
			}
			K[d] = km
		}
	}
	return J, K
}

func resize(b [][]float64, nd, size int) [][]float64 {
	if len(b) != nd {
		b = make([][]float64, nd)
	}
	for d := range b {
		if len(b[d]) != size {
			b[d] = make([]float64, size)
		} else {
			for k := range b[d] {
				b[d][k] = 0
			}
		}
	}
	return b
}

const (
	modeDirect = iota
	modeStore
	modeReplay
)

// densityBlockMax is max |D_μν| per group pair over all densities.
func (e *ERI) densityBlockMax(dens [][]float64) []float64 {
	n := e.mb.NBasis
	ng := len(e.groups)
	out := make([]float64, ng*ng)
	for i := range e.groups {
		for j := range e.groups {
			m := 0.0
			for _, d := range dens {
				for _, a := range e.groups[i].funcs {
					row := d[int(a)*n:]
					for _, b := range e.groups[j].funcs {
						m = math.Max(m, math.Abs(row[b]))
					}
				}
			}
			out[i*ng+j] = m
		}
	}
	return out
}

// runChunk contracts the chunk's quartets with the densities. Every mode
// skips the same quartets (Schwarz bound times the largest density element
// the quartet meets below the threshold) and contracts the same integral
// values in the same order, so in-core and direct builds have the same
// bits; in-core the values are read from the store (modeReplay) or
// computed and stored (modeStore, the first build), direct they are
// computed each time.
func (e *ERI) runChunk(c *chunk, mode int, dens [][]float64, dmax []float64, wantK bool, w *work) {
	ns := len(e.groups)
	var ov, op, oc int // replay offsets into vals, pos and cnt
	if mode == modeStore {
		c.vals = make([]float64, 0, c.size)
		c.pos = c.pos[:0]
		c.cnt = make([]uint16, 0, c.rowsCount(e))
	}
	var computed, dskip int64
	for _, P32 := range c.rows {
		P := int(P32)
		A := &e.pairs[P]
		qp := e.schwarzP[P]
		for Q := 0; Q <= P; Q++ {
			if qp*e.schwarzP[Q] < e.thr {
				continue
			}
			B := &e.pairs[Q]
			i, j, k, l := A.I, A.J, B.I, B.J
			dm := 4 * math.Max(dmax[k*ns+l], dmax[i*ns+j])
			if wantK {
				dm = math.Max(dm, math.Max(math.Max(dmax[i*ns+k], dmax[i*ns+l]), math.Max(dmax[j*ns+k], dmax[j*ns+l])))
			}
			skip := qp*e.schwarzP[Q]*dm < e.thr
			var vals []float64
			var pos, cnt []uint16
			switch mode {
			case modeReplay:
				cnt = c.cnt[oc : oc+A.ntot]
				nv, np := rowSizes(cnt, B.ntot)
				vals, pos = c.vals[ov:ov+nv], c.pos[op:op+np]
				ov += nv
				op += np
				oc += A.ntot
			case modeStore:
				blk := w.out[:A.ntot*B.ntot]
				e.quartet(A, B, w, blk)
				computed++
				v0, p0, c0 := len(c.vals), len(c.pos), len(c.cnt)
				c.vals, c.pos, c.cnt = pack(blk, A.ntot, B.ntot, c.vals, c.pos, c.cnt)
				vals, pos, cnt = c.vals[v0:], c.pos[p0:], c.cnt[c0:]
			default:
				if skip {
					break
				}
				blk := w.out[:A.ntot*B.ntot]
				e.quartet(A, B, w, blk)
				computed++
				w.pv, w.pp, w.pc = pack(blk, A.ntot, B.ntot, w.pv[:0], w.pp[:0], w.pc[:0])
				vals, pos, cnt = w.pv, w.pp, w.pc
			}
			if skip {
				dskip++
				continue
			}
			e.contract(A, B, P == Q, vals, pos, cnt, dens, c, wantK)
		}
	}
	if mode == modeStore && cap(c.vals)-len(c.vals) > cap(c.vals)/8 {
		c.vals = append(make([]float64, 0, len(c.vals)), c.vals...)
	}
	e.stats.computed.Add(computed)
	e.stats.densitySkipped.Add(dskip)
}

// rowsCount is the number of stored rows of the chunk (bra pair functions
// over its kept quartets).
func (c *chunk) rowsCount(e *ERI) int {
	n := 0
	for _, P32 := range c.rows {
		P := int(P32)
		qp := e.schwarzP[P]
		for Q := 0; Q <= P; Q++ {
			if qp*e.schwarzP[Q] >= e.thr {
				n += e.pairs[P].ntot
			}
		}
	}
	return n
}

// rowSizes is the number of values and of positions that the packed rows
// with counts cnt take (see pack).
func rowSizes(cnt []uint16, nB int) (nv, np int) {
	for _, m := range cnt {
		nv += int(m)
		if int(m) != nB {
			np += int(m)
		}
	}
	return nv, np
}

// pack appends the nA×nB block row by row: a row goes in whole (count nB,
// no positions) unless listing its non-zero values with a 2-byte position
// each takes less room, i.e. unless 10 bytes per non-zero value come to
// less than 8 per value of the whole row.
func pack(blk []float64, nA, nB int, vals []float64, pos, cnt []uint16) ([]float64, []uint16, []uint16) {
	for a := 0; a < nA; a++ {
		row := blk[a*nB : (a+1)*nB]
		k := 0
		for _, v := range row {
			if v != 0 {
				k++
			}
		}
		if 10*k >= 8*nB {
			vals = append(vals, row...)
			cnt = append(cnt, uint16(nB))
			continue
		}
		for b, v := range row {
			if v != 0 {
				vals = append(vals, v)
				pos = append(pos, uint16(b))
			}
		}
		cnt = append(cnt, uint16(k))
	}
	return vals, pos, cnt
}

// contract adds one unique quartet's contributions (scaled for its
// degeneracy) to the chunk's accumulators: A[μν] += v D[λσ], A[λσ] += v D[μν]
// for J = 2(A+Aᵀ), and the four K terms for K = B+Bᵀ. The rows are packed
// as pack writes them.
func (e *ERI) contract(A, B *pairData, samePair bool, vals []float64, pos, cnt []uint16, dens [][]float64, c *chunk, wantK bool) {
	n := e.mb.NBasis
	deg := 1.0
	if A.I == A.J {
		deg *= 0.5
	}
	if B.I == B.J {
		deg *= 0.5
	}
	if samePair {
		deg *= 0.5
	}
	lam, sig := B.mu, B.nu
	nB := B.ntot
	for d, D := range dens {
		ja := c.jAcc[d]
		var ka []float64
		if wantK {
			ka = c.kAcc[d]
		}
		o, op := 0, 0
		for pa := 0; pa < A.ntot; pa++ {
			k := int(cnt[pa])
			row := vals[o : o+k]
			o += k
			if k == 0 {
				continue
			}
			var rpos []uint16
			if k != nB {
				rpos = pos[op : op+k]
				op += k
			}
			mu, nu := int(A.mu[pa]), int(A.nu[pa])
			dmn := deg * D[mu*n+nu]
			jmn := 0.0
			if !wantK {
				if rpos == nil {
					lr, sr := lam[:len(row)], sig[:len(row)]
					for t, v := range row {
						l, s := int(lr[t]), int(sr[t])
						jmn += v * D[l*n+s]
						ja[l*n+s] += v * dmn
					}
				} else {
					for t, v := range row {
						pb := rpos[t]
						l, s := int(lam[pb]), int(sig[pb])
						jmn += v * D[l*n+s]
						ja[l*n+s] += v * dmn
					}
				}
				ja[mu*n+nu] += deg * jmn
				continue
			}
			dMu, dNu := D[mu*n:(mu+1)*n], D[nu*n:(nu+1)*n]
			kMu, kNu := ka[mu*n:(mu+1)*n], ka[nu*n:(nu+1)*n]
			if rpos == nil {
				lr, sr := lam[:len(row)], sig[:len(row)]
				for t, v := range row {
					l, s := int(lr[t]), int(sr[t])
					jmn += v * D[l*n+s]
					ja[l*n+s] += v * dmn
					vd := deg * v
					kMu[l] += vd * dNu[s]
					kNu[l] += vd * dMu[s]
					kMu[s] += vd * dNu[l]
					kNu[s] += vd * dMu[l]
				}
			} else {
				for t, v := range row {
					pb := rpos[t]
					l, s := int(lam[pb]), int(sig[pb])
					jmn += v * D[l*n+s]
					ja[l*n+s] += v * dmn
					vd := deg * v
					kMu[l] += vd * dNu[s]
					kNu[l] += vd * dMu[s]
					kMu[s] += vd * dNu[l]
					kNu[s] += vd * dMu[l]
				}
			}
			ja[mu*n+nu] += deg * jmn
		}
	}
}
