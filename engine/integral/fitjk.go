package integral

import (
	"fmt"
	"sync"
	"sync/atomic"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/internal/gemm"
)

// FittedJK builds density-fitted Coulomb and exchange matrices,
//
//	J_μν = Σ_Q B^Q_μν d_Q,  d_Q = Σ_λσ B^Q_λσ D_λσ,
//	K_μν = Σ_Q Σ_k s_k (B^Q x_k)_μ (B^Q x_k)_ν,
//
// from the fitted three-index integrals B^Q_μν = Σ_P M_QP (P|μν) (see
// FitMetric) and a factorisation of each density D = Σ_k s_k x_k x_kᵀ (for
// the density of occupied orbitals the x_k are those orbitals, so the cost
// of K grows with the number of occupied orbitals, not with the square of
// the basis).
//
// Storage. The fitted integrals of the orbital function pairs that pass the
// three-centre Schwarz test are kept in memory when they fit
// Options.MemoryBudgetBytes. Otherwise every build recomputes them in
// blocks of orbital functions (blocked mode): the exchange needs one pass
// over the blocks per group of factor columns whose half-transformed
// integrals fit in the budget (at least one group per pass, whatever the
// budget), and the Coulomb matrix one more pass.
//
// Determinism. The arithmetic is defined by blocks fixed by the basis
// (orbital function blocks, groups of 64 factor columns, ranges of the
// fitted index), never by the thread count or the memory budget: every
// element is summed in the same order in memory and in blocked mode, on one
// thread or many, so they give the same bits.
type FittedJK struct {
	tc      *ThreeCentre
	metric  *FitMetric
	threads int
	budget  int64
	n, nPad int
	fitPad  int // row stride of the fitted rows (metric.ld)
	pairs   []fitPair
	nrows   int
	rowMu   []int32
	rowNu   []int32
	blocks  []fitBlock
	fBlock  []int32 // block of each orbital function
	fLoc    []int32 // its position in the block
	nQ      int     // width of a range of the fitted index
	nChunks int
	maxBlk  int // functions of the largest block
	inCore  bool
	b       []float64 // in-core fitted rows [row][fitPad]
	// blocked mode: factor batches whose half-transformed integrals are held at once
	passBatches int
	blockBytes  int64 // blocked mode: the rows of one block and the half-transformed integrals of one pass
	maxTouch    int   // rows of the largest block's pair set
	screened    int   // orbital group pairs left out by the Schwarz test

	kpool  sync.Pool
	mu     sync.Mutex
	builds atomic.Int64
	sweeps atomic.Int64
}

// fitPair is an orbital shell-group pair kept by the Schwarz test.
type fitPair struct {
	k     int     // index into the orbital engine's pairs
	start int     // first row (in memory)
	count int     // rows
	rows  []int32 // per pair function: row offset within the pair, −1 for the mirrored half of a diagonal pair
}

// fitBlock is a set of orbital shell groups (contiguous in group order).
type fitBlock struct {
	funcs []int32 // functions, in group order
	touch []int32 // pairs with either group in the block
	own   []int32 // pairs whose first (larger) group is in the block
}

// FitOptions control a fitted J/K builder.
type FitOptions struct {
	// MetricCutoff is the relative eigenvalue cut-off of the metric
	// inversion (0 = DefaultMetricCutoff); see FitMetric.
	MetricCutoff float64
	// Threads (0 = the three-centre engine's).
	Threads int
	// MemoryBudgetBytes for keeping the fitted integrals in memory
	// (0 = DefaultMemoryBudgetBytes).
	MemoryBudgetBytes int64
}

const (
	fitBatch      = 64  // factor columns per batch
	fitBlockFuncs = 64  // target functions per orbital block
	fitChunkRows  = 256 // rows per transformation task
	fitChunks     = 24  // ranges of the fitted index
)

// FitStats describes a fitted J/K builder for the record.
type FitStats struct {
	AuxFunctions, FittedFunctions int
	MetricMethod                  string
	MetricCondition               float64
	MetricCutoff                  float64
	MetricRemoved                 int
	SchwarzThreshold              float64
	PairRows                      int // orbital function pairs kept
	ScreenedGroupPairs            int
	InCore                        bool
	StoredBytes                   int64 // in memory: the fitted integrals
	BlockBytes                    int64 // in blocks: what one pass holds
	MemoryBudgetBytes             int64
	Builds, Sweeps                int64
}

// Stats returns what the builder holds and has done.
func (f *FittedJK) Stats() FitStats {
	s := FitStats{AuxFunctions: f.metric.NAux, FittedFunctions: f.metric.NFit, MetricMethod: f.metric.Method,
		MetricCondition: f.metric.Condition, MetricCutoff: f.metric.Cutoff, MetricRemoved: f.metric.Removed,
		SchwarzThreshold: f.tc.thr, PairRows: f.nrows, ScreenedGroupPairs: f.screened, InCore: f.inCore,
		MemoryBudgetBytes: f.budget, Builds: f.builds.Load(), Sweeps: f.sweeps.Load()}
	if f.inCore {
		s.StoredBytes = int64(8 * len(f.b))
	} else {
		s.BlockBytes = f.blockBytes
	}
	return s
}

// Metric is the inverted metric in use.
func (f *FittedJK) Metric() *FitMetric { return f.metric }

// NewFittedJK inverts the metric of tc and, when they fit the memory
// budget, computes and keeps the fitted three-index integrals.
func NewFittedJK(tc *ThreeCentre, opt FitOptions) (*FittedJK, error) {
	if tc == nil {
		return nil, fmt.Errorf("integral: fitted J/K: no three-centre integrals")
	}
	if opt.MemoryBudgetBytes < 0 {
		return nil, fmt.Errorf("integral: fitted J/K: memory budget %d bytes is negative", opt.MemoryBudgetBytes)
	}
	m, err := FactorMetric(tc.metric, opt.MetricCutoff)
	if err != nil {
		return nil, err
	}
	orb := tc.orb
	f := &FittedJK{tc: tc, metric: m, threads: opt.Threads, budget: opt.MemoryBudgetBytes, n: orb.mb.NBasis, fitPad: m.ld}
	if f.threads <= 0 {
		f.threads = tc.threads
	}
	if f.budget == 0 {
		f.budget = DefaultMemoryBudgetBytes
	}
	f.nPad = gemm.RoundUp(f.n, gemm.Cols)
	for k := range orb.pairs {
		if !tc.groupPairKept(k) {
			f.screened++
			continue
		}
		pd := &orb.pairs[k]
		fp := fitPair{k: k, start: f.nrows, rows: make([]int32, pd.ntot)}
		for q := 0; q < pd.ntot; q++ {
			mu, nu := pd.mu[q], pd.nu[q]
			if pd.I == pd.J && mu < nu {
				fp.rows[q] = -1
				continue
			}
			fp.rows[q] = int32(fp.count)
			f.rowMu = append(f.rowMu, mu)
			f.rowNu = append(f.rowNu, nu)
			fp.count++
		}
		f.nrows += fp.count
		f.pairs = append(f.pairs, fp)
	}
	// Orbital blocks: shell groups in order, closed at fitBlockFuncs functions.
	ng := len(orb.groups)
	gBlock := make([]int, ng)
	f.fBlock = make([]int32, f.n)
	f.fLoc = make([]int32, f.n)
	for g := 0; g < ng; g++ {
		if len(f.blocks) == 0 || len(f.blocks[len(f.blocks)-1].funcs) >= fitBlockFuncs {
			f.blocks = append(f.blocks, fitBlock{})
		}
		b := len(f.blocks) - 1
		gBlock[g] = b
		for _, mu := range orb.groups[g].funcs {
			f.fBlock[mu], f.fLoc[mu] = int32(b), int32(len(f.blocks[b].funcs))
			f.blocks[b].funcs = append(f.blocks[b].funcs, mu)
		}
	}
	for i, fp := range f.pairs {
		pd := &orb.pairs[fp.k]
		bi, bj := gBlock[pd.I], gBlock[pd.J]
		f.blocks[bi].own = append(f.blocks[bi].own, int32(i))
		f.blocks[bi].touch = append(f.blocks[bi].touch, int32(i))
		if bj != bi {
			f.blocks[bj].touch = append(f.blocks[bj].touch, int32(i))
		}
	}
	for _, b := range f.blocks {
		f.maxBlk = max(f.maxBlk, len(b.funcs))
		rows := 0
		for _, i := range b.touch {
			rows += f.pairs[i].count
		}
		f.maxTouch = max(f.maxTouch, rows)
	}
	// About fitChunks ranges of the fitted index (at least 16 wide), for
	// the balance of the exchange work between threads.
	f.nQ = max(16, gemm.RoundUp((f.fitPad+fitChunks-1)/fitChunks, gemm.Cols))
	f.nChunks = (f.fitPad + f.nQ - 1) / f.nQ
	stored := int64(8) * int64(f.nrows) * int64(f.fitPad)
	if stored <= f.budget {
		f.inCore = true
		f.b = make([]float64, f.nrows*f.fitPad)
		all := make([]int32, len(f.pairs))
		off := make([]int, len(f.pairs))
		for i := range all {
			all[i], off[i] = int32(i), f.pairs[i].start
		}
		f.computeRows(all, off, f.b)
		return f, nil
	}
	// Blocked mode: as many batches of factor columns per pass as the
	// budget holds, at least one (the least the blocks need, even over a
	// budget smaller than that).
	rowsBuf := int64(8) * int64(f.maxTouch) * int64(f.fitPad)
	perBatch := int64(8) * fitBatch * int64(f.fitPad) * int64(f.nPad)
	f.passBatches = int(max(1, (f.budget-rowsBuf)/perBatch))
	f.blockBytes = rowsBuf + int64(f.passBatches)*perBatch
	return f, nil
}

// runTasks runs f(k, s) for k = 0..n−1 on threads goroutines, each with
// its own scratch s from get (handed back to put, when not nil, at the end).
func runTasks[S any](threads, n int, get func() S, put func(S), f func(k int, s S)) {
	var next atomic.Int64
	var wg sync.WaitGroup
	for th := 0; th < min(threads, n); th++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			s := get()
			if put != nil {
				defer put(s)
			}
			for {
				k := int(next.Add(1) - 1)
				if k >= n {
					return
				}
				f(k, s)
			}
		}()
	}
	wg.Wait()
}

// computeRows computes the fitted rows of the listed pairs into
// dst[(off[i]+r)*fitPad + Q]. Each row is one transformation of its own
// three-centre integrals, so the bits do not depend on the grouping.
func (f *FittedJK) computeRows(list []int32, off []int, dst []float64) {
	var tasks [][2]int
	for s := 0; s < len(list); {
		e, rows := s, 0
		for e < len(list) && (rows == 0 || rows+f.pairs[list[e]].count <= fitChunkRows) {
			rows += f.pairs[list[e]].count
			e++
		}
		tasks = append(tasks, [2]int{s, e})
		s = e
	}
	naux := f.metric.NAux
	type scratch struct {
		raw, out []float64
		rows     []int32
	}
	maxRows := fitChunkRows
	for _, i := range list {
		maxRows = max(maxRows, f.pairs[i].count)
	}
	maxRows = gemm.RoundUp(maxRows, gemm.Rows)
	runTasks(f.threads, len(tasks), func() *scratch {
		return &scratch{raw: make([]float64, naux*maxRows), out: make([]float64, maxRows*f.fitPad), rows: make([]int32, f.tc.maxTot)}
	}, nil, func(t int, s *scratch) {
		w := f.tc.getWork()
		defer f.tc.pool.Put(w)
		lo, hi := tasks[t][0], tasks[t][1]
		rows := 0
		for _, i := range list[lo:hi] {
			rows += f.pairs[i].count
		}
		rp := gemm.RoundUp(rows, gemm.Rows)
		raw := s.raw[:naux*rp]
		clear(raw)
		r0 := 0
		for _, i := range list[lo:hi] {
			fp := &f.pairs[i]
			for q, r := range fp.rows {
				s.rows[q] = -1
				if r >= 0 {
					s.rows[q] = r + int32(r0)
				}
			}
			f.tc.fillRaw(fp.k, s.rows, raw, rp, w)
			r0 += fp.count
		}
		out := s.out[:rp*f.fitPad]
		f.metric.apply(rp, raw, rp, out, f.fitPad)
		r0 = 0
		for x, i := range list[lo:hi] {
			fp := &f.pairs[i]
			copy(dst[off[lo+x]*f.fitPad:(off[lo+x]+fp.count)*f.fitPad], out[r0*f.fitPad:(r0+fp.count)*f.fitPad])
			r0 += fp.count
		}
	})
}

// rowSource gives the fitted rows of pairs: those in memory, or those
// computed for one block.
type rowSource struct {
	data []float64
	off  []int // by pair index: first row in data (−1 when not held)
	ld   int
}

func (rs *rowSource) row(pair int, r int32) []float64 {
	o := (rs.off[pair] + int(r)) * rs.ld
	return rs.data[o : o+rs.ld]
}

// inCoreSource is the source of the rows kept in memory.
func (f *FittedJK) inCoreSource() *rowSource {
	off := make([]int, len(f.pairs))
	for i := range off {
		off[i] = f.pairs[i].start
	}
	return &rowSource{data: f.b, off: off, ld: f.fitPad}
}

// blockSource computes the rows of the listed pairs (blocked mode).
func (f *FittedJK) blockSource(list []int32, buf []float64) *rowSource {
	rs := &rowSource{off: make([]int, len(f.pairs)), ld: f.fitPad}
	for i := range rs.off {
		rs.off[i] = -1
	}
	off := make([]int, len(list))
	rows := 0
	for x, i := range list {
		off[x], rs.off[i] = rows, rows
		rows += f.pairs[i].count
	}
	rs.data = buf[:rows*f.fitPad]
	f.computeRows(list, off, rs.data)
	f.sweeps.Add(1)
	return rs
}

func (f *FittedJK) chunkRange(c int) (int, int) {
	return c * f.nQ, min((c+1)*f.nQ, f.fitPad)
}

// batch is a group of at most fitBatch factor columns of one density.
type batch struct{ d, x0, x1, wp int }

func batchesOf(facs []densityFactor) []batch {
	var out []batch
	for d, fac := range facs {
		for x0 := 0; x0 < fac.rank; x0 += fitBatch {
			x1 := min(x0+fitBatch, fac.rank)
			out = append(out, batch{d: d, x0: x0, x1: x1, wp: gemm.RoundUp(x1-x0, gemm.Rows)})
		}
	}
	return out
}

// kScratch is one worker's space for the exchange of one range of Q.
type kScratch struct {
	r, cb, tmp, kt, tt, ts, part []float64
	t                            []float64 // in memory: the half-transformed integrals of one range of Q
}

// tFor returns per-batch views of s.t for one range of nq fitted
// functions, zeroed.
func (s *kScratch) tFor(bts []batch, nq, nPad int) [][]float64 {
	size := 0
	for _, bt := range bts {
		size += bt.wp * nq * nPad
	}
	if cap(s.t) < size {
		s.t = make([]float64, size)
	}
	t := s.t[:size]
	clear(t)
	out := make([][]float64, len(bts))
	for x, bt := range bts {
		out[x], t = t[:bt.wp*nq*nPad], t[bt.wp*nq*nPad:]
	}
	return out
}

func (f *FittedJK) putKScratch(s *kScratch) { f.kpool.Put(s) }

func (f *FittedJK) getKScratch() *kScratch {
	if s, ok := f.kpool.Get().(*kScratch); ok {
		return s
	}
	return f.newKScratch()
}

func (f *FittedJK) newKScratch() *kScratch {
	return &kScratch{
		r:    make([]float64, f.maxBlk*f.nQ*f.nPad),
		cb:   make([]float64, f.maxBlk*fitBatch),
		tmp:  make([]float64, fitBatch*f.nQ*f.nPad),
		kt:   make([]float64, f.nPad*f.nPad),
		tt:   make([]float64, fitBatch*f.nQ*f.nPad),
		ts:   make([]float64, fitBatch*f.nQ*f.nPad),
		part: make([]float64, f.nQ),
	}
}

// dPart adds block b's part of d_Q = Σ_rows D'_r B_rQ over Q in [qa, qb)
// to acc: the block's sum first (rows in pair order), then the addition.
func (f *FittedJK) dPart(b *fitBlock, src *rowSource, dp []float64, qa, qb int, part, acc []float64) {
	part = part[:qb-qa]
	clear(part)
	for _, i := range b.own {
		fp := &f.pairs[i]
		for r := int32(0); r < int32(fp.count); r++ {
			v := dp[fp.start+int(r)]
			row := src.row(int(i), r)[qa:qb]
			for q, x := range row {
				part[q] += v * x
			}
		}
	}
	for q, v := range part {
		acc[q] += v
	}
}

// unpack fills R[l][μ][Q] = B^Q_{λμ} for the functions λ of block bi
// (local index l), all μ, Q in [qa, qb).
func (f *FittedJK) unpack(bi int, src *rowSource, qa, qb int, R []float64) {
	b := &f.blocks[bi]
	nq := qb - qa
	stride := nq * f.nPad
	R = R[:len(b.funcs)*stride]
	clear(R)
	pairs := f.tc.orb.pairs
	for _, i := range b.touch {
		fp := &f.pairs[i]
		pd := &pairs[fp.k]
		for q, r := range fp.rows {
			if r < 0 {
				continue
			}
			row := src.row(int(i), r)[qa:qb]
			mu, nu := pd.mu[q], pd.nu[q]
			if f.fBlock[mu] == int32(bi) {
				copy(R[int(f.fLoc[mu])*stride+int(nu)*nq:], row)
			}
			if mu != nu && f.fBlock[nu] == int32(bi) {
				copy(R[int(f.fLoc[nu])*stride+int(mu)*nq:], row)
			}
		}
	}
}

// halfStep adds block bi's part of T[i][μ][Q] = Σ_λ x_λi B^Q_λμ for the
// factor columns of bt: the block's product first, then the addition.
func (f *FittedJK) halfStep(bi int, fac *densityFactor, bt batch, R []float64, nq int, s *kScratch, T []float64) {
	b := &f.blocks[bi]
	nb := len(b.funcs)
	cb := s.cb[:nb*bt.wp]
	clear(cb)
	for l, lam := range b.funcs {
		copy(cb[l*bt.wp:l*bt.wp+bt.x1-bt.x0], fac.x[int(lam)*fac.rank+bt.x0:int(lam)*fac.rank+bt.x1])
	}
	cols := nq * f.nPad
	tmp := s.tmp[:bt.wp*cols]
	gemm.CM(bt.wp, cols, nb, cb, bt.wp, R, cols, tmp, cols, false)
	for x, v := range tmp {
		T[x] += v
	}
}

// kStep adds Σ_{i,Q} s_i T[i][μ][Q] T[i][ν][Q] (upper triangle) to kd,
// through the transposed copy [i][Q][μ] (and a signed one when a factor
// column has a negative sign).
func (f *FittedJK) kStep(fac *densityFactor, bt batch, T []float64, nq int, s *kScratch, kd []float64) {
	block := nq * f.nPad
	tt := s.tt[:bt.wp*block]
	for i := 0; i < bt.wp; i++ {
		src, dst := T[i*block:(i+1)*block], tt[i*block:(i+1)*block]
		for mu := 0; mu < f.nPad; mu++ {
			col := src[mu*nq : (mu+1)*nq]
			for q, v := range col {
				dst[q*f.nPad+mu] = v
			}
		}
	}
	ts := tt
	for i := bt.x0; i < bt.x1; i++ {
		if fac.sign[i] < 0 {
			ts = s.ts[:len(tt)]
			copy(ts, tt)
			for j := bt.x0; j < bt.x1; j++ {
				if fac.sign[j] < 0 {
					row := ts[(j-bt.x0)*block : (j-bt.x0+1)*block]
					for x := range row {
						row[x] = -row[x]
					}
				}
			}
			break
		}
	}
	kt := s.kt
	gemm.CM(f.nPad, f.nPad, bt.wp*nq, tt, f.nPad, ts, f.nPad, kt, f.nPad, true)
	for i := 0; i < f.n; i++ {
		a, v := kd[i*f.nPad+i:i*f.nPad+f.n], kt[i*f.nPad+i:i*f.nPad+f.n]
		for j, x := range v {
			a[j] += x
		}
	}
}

// jRows computes J_r = Σ_Q B_rQ d_Q for the rows of the listed pairs.
func (f *FittedJK) jRows(list []int32, src *rowSource, dvec, jr [][]float64) {
	runTasks(f.threads, len(list), func() struct{} { return struct{}{} }, nil, func(x int, _ struct{}) {
		i := list[x]
		fp := &f.pairs[i]
		for r := int32(0); r < int32(fp.count); r++ {
			row := src.row(int(i), r)
			for d := range dvec {
				s := 0.0
				for q, v := range dvec[d] {
					s += row[q] * v
				}
				jr[d][fp.start+int(r)] = s
			}
		}
	})
}

func (f *FittedJK) allPairs() []int32 {
	all := make([]int32, len(f.pairs))
	for i := range all {
		all[i] = int32(i)
	}
	return all
}

func newVecs(nd, n int) [][]float64 {
	out := make([][]float64, nd)
	for d := range out {
		out[d] = make([]float64, n)
	}
	return out
}

// buildInCore computes J rows and the per-chunk K parts from the rows in memory.
func (f *FittedJK) buildInCore(dp [][]float64, facs []densityFactor) ([][]float64, [][][]float64) {
	nd := len(dp)
	src := f.inCoreSource()
	dvec := newVecs(nd, f.fitPad)
	bts := batchesOf(facs)
	kc := make([][][]float64, f.nChunks)
	runTasks(f.threads, f.nChunks, f.getKScratch, f.putKScratch, func(c int, s *kScratch) {
		qa, qb := f.chunkRange(c)
		nq := qb - qa
		for d := range dp {
			for bi := range f.blocks {
				f.dPart(&f.blocks[bi], src, dp[d], qa, qb, s.part, dvec[d][qa:qb])
			}
		}
		if len(bts) == 0 {
			return
		}
		ts := s.tFor(bts, nq, f.nPad)
		for bi := range f.blocks {
			f.unpack(bi, src, qa, qb, s.r)
			for x, bt := range bts {
				f.halfStep(bi, &facs[bt.d], bt, s.r, nq, s, ts[x])
			}
		}
		kc[c] = make([][]float64, nd)
		for x, bt := range bts {
			if kc[c][bt.d] == nil {
				kc[c][bt.d] = make([]float64, f.nPad*f.nPad)
			}
			f.kStep(&facs[bt.d], bt, ts[x], nq, s, kc[c][bt.d])
		}
	})
	jr := newVecs(nd, f.nrows)
	f.jRows(f.allPairs(), src, dvec, jr)
	return jr, kc
}

// buildBlocked computes the same sums as buildInCore, block by block, with
// the rows of each block recomputed.
func (f *FittedJK) buildBlocked(dp [][]float64, facs []densityFactor) ([][]float64, [][][]float64) {
	nd := len(dp)
	dvec := newVecs(nd, f.fitPad)
	bts := batchesOf(facs)
	kc := make([][][]float64, f.nChunks)
	for c := range kc {
		kc[c] = make([][]float64, nd)
	}
	buf := make([]float64, f.maxTouch*f.fitPad)
	first := true
	for p0 := 0; first || p0 < len(bts); p0 += f.passBatches {
		pass := bts[p0:min(p0+f.passBatches, len(bts))]
		ts := make([][][]float64, f.nChunks)
		for c := range ts {
			qa, qb := f.chunkRange(c)
			ts[c] = make([][]float64, len(pass))
			for x, bt := range pass {
				ts[c][x] = make([]float64, bt.wp*(qb-qa)*f.nPad)
			}
		}
		for bi := range f.blocks {
			list := f.blocks[bi].touch
			if len(pass) == 0 {
				list = f.blocks[bi].own
			}
			src := f.blockSource(list, buf)
			runTasks(f.threads, f.nChunks, f.getKScratch, f.putKScratch, func(c int, s *kScratch) {
				qa, qb := f.chunkRange(c)
				if first {
					for d := range dp {
						f.dPart(&f.blocks[bi], src, dp[d], qa, qb, s.part, dvec[d][qa:qb])
					}
				}
				if len(pass) == 0 {
					return
				}
				f.unpack(bi, src, qa, qb, s.r)
				for x, bt := range pass {
					f.halfStep(bi, &facs[bt.d], bt, s.r, qb-qa, s, ts[c][x])
				}
			})
		}
		runTasks(f.threads, f.nChunks, f.getKScratch, f.putKScratch, func(c int, s *kScratch) {
			qa, qb := f.chunkRange(c)
			for x, bt := range pass {
				if kc[c][bt.d] == nil {
					kc[c][bt.d] = make([]float64, f.nPad*f.nPad)
				}
				f.kStep(&facs[bt.d], bt, ts[c][x], qb-qa, s, kc[c][bt.d])
			}
		})
		first = false
	}
	jr := newVecs(nd, f.nrows)
	for bi := range f.blocks {
		src := f.blockSource(f.blocks[bi].own, buf)
		f.jRows(f.blocks[bi].own, src, dvec, jr)
	}
	return jr, kc
}

// JK returns, for each density D[i], J[D[i]] and, when wantK, K[D[i]]
// (the same contract as ERI.JK). Calls are serialised.
func (f *FittedJK) JK(D []*mat.SymDense, wantK bool) (J, K []*mat.SymDense) {
	f.mu.Lock()
	defer f.mu.Unlock()
	n := f.n
	nd := len(D)
	for d, m := range D {
		if m.SymmetricDim() != n {
			panic(fmt.Sprintf("integral: fitted JK density %d has dimension %d, the basis has %d functions", d, m.SymmetricDim(), n))
		}
	}
	// Packed densities over the kept rows (off-diagonal pairs twice).
	dp := make([][]float64, nd)
	for d, m := range D {
		dp[d] = make([]float64, f.nrows)
		for r := range dp[d] {
			mu, nu := int(f.rowMu[r]), int(f.rowNu[r])
			v := m.At(mu, nu)
			if mu != nu {
				v *= 2
			}
			dp[d][r] = v
		}
	}
	var facs []densityFactor
	if wantK {
		facs = make([]densityFactor, nd)
		for d, m := range D {
			facs[d] = factorDensity(m)
		}
	}
	var jr [][]float64
	var kc [][][]float64
	if f.inCore {
		jr, kc = f.buildInCore(dp, facs)
	} else {
		jr, kc = f.buildBlocked(dp, facs)
	}
	f.builds.Add(1)
	J = make([]*mat.SymDense, nd)
	for d := range J {
		J[d] = mat.NewSymDense(n, nil)
		for r, v := range jr[d] {
			J[d].SetSym(int(f.rowMu[r]), int(f.rowNu[r]), v)
		}
	}
	if !wantK {
		return J, nil
	}
	K = make([]*mat.SymDense, nd)
	for d := range K {
		acc := make([]float64, f.nPad*f.nPad)
		for c := 0; c < f.nChunks; c++ {
			kd := kc[c][d]
			if kd == nil {
				continue
			}
			for i := 0; i < n; i++ {
				a, s := acc[i*f.nPad+i:i*f.nPad+n], kd[i*f.nPad+i:i*f.nPad+n]
				for j, v := range s {
					a[j] += v
				}
			}
		}
		K[d] = mat.NewSymDense(n, nil)
		for i := 0; i < n; i++ {
			for j := i; j < n; j++ {
				K[d].SetSym(i, j, acc[i*f.nPad+j])
			}
		}
	}
	return J, K
}
