package mp2

import (
	"fmt"
	"runtime"
	"sync"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/mat"
)

// integrals is what the MP2 code needs from an ERI engine: shell-quartet
// blocks (μν|λσ) in final basis functions, row-major [nμ][nν][nλ][nσ],
// Schwarz factors, and J/K builds for symmetric densities.
type integrals interface {
	Shell(i, j, k, l int, out []float64)
	Schwarz(i, j int) float64
	JK(D []*mat.SymDense, wantK bool) (J, K []*mat.SymDense)
}

// layout is the shell structure of the AO basis.
type layout struct {
	off, size []int // first function and function count of each shell
	n         int   // number of basis functions
}

func (l layout) nshell() int { return len(l.off) }

// spinRef is the reference determinant of one spin.
type spinRef struct {
	C    *mat.Dense // N × nmo, columns are orbitals in ascending energy
	eps  []float64
	nocc int
}

// problem is one MP2 calculation.
type problem struct {
	lay        layout
	eri        integrals
	spin       [2]spinRef
	restricted bool
	frozen     int
	relaxed    bool
	threads    int
	memory     int64
	schwarz    float64
	// scale weights the same-spin [0] and opposite-spin [1] parts of the
	// energy whose relaxed density is wanted (1, 1 for MP2).
	scale [2]float64
}

// accum holds the contributions of one batch spin ρ: index 0 goes to
// target spin ρ ("same"), index 1 to the other spin ("other"); see
// relaxed.go for the assignment of terms.
type accum struct {
	pvv [2][]float64 // v_t × v_t (target t)
	poo [2][]float64 // a_t × a_t, active occupied
	z   [2][]float64 // a_t × N: term-1 AO vectors
	l2  [2][]float64 // v_t × o_t: term-2 Lagrangian (all occupied)
	ess float64      // same-spin pair energy of spin ρ
	eos float64      // opposite-spin pair energy (first index ρ)
}

func (p *problem) nact(s int) int { return p.spin[s].nocc - p.frozen }
func (p *problem) nvir(s int) int { _, m := p.spin[s].C.Dims(); return m - p.spin[s].nocc }
func (p *problem) nmo(s int) int  { _, m := p.spin[s].C.Dims(); return m }

// check validates the dimensions of the problem.
func (p *problem) check() error {
	for s := 0; s < 2; s++ {
		r, m := p.spin[s].C.Dims()
		if r != p.lay.n {
			return fmt.Errorf("mp2: orbital matrix has %d rows but the basis has %d functions", r, p.lay.n)
		}
		if len(p.spin[s].eps) != m {
			return fmt.Errorf("mp2: %d orbital energies for %d orbitals", len(p.spin[s].eps), m)
		}
		if p.spin[s].nocc > m {
			return fmt.Errorf("mp2: %d occupied orbitals but only %d orbitals", p.spin[s].nocc, m)
		}
		if p.frozen < 0 || p.frozen > p.spin[s].nocc {
			return fmt.Errorf("mp2: cannot freeze %d orbitals with %d occupied", p.frozen, p.spin[s].nocc)
		}
	}
	return nil
}

// pairIndex is the packed index of λ ≥ σ.
func pairIndex(l, s int) int {
	if l < s {
		l, s = s, l
	}
	return l*(l+1)/2 + s
}

// sub returns columns [c0, c1) of a row-major dense matrix as a blas64.General.
func sub(m *mat.Dense, c0, c1 int) blas64.General {
	raw := m.RawMatrix()
	if c1 == c0 {
		return blas64.General{Rows: raw.Rows, Cols: 0, Stride: raw.Stride, Data: nil}
	}
	return blas64.General{Rows: raw.Rows, Cols: c1 - c0, Stride: raw.Stride, Data: raw.Data[c0:]}
}

func gen(rows, cols int, data []float64) blas64.General {
	return blas64.General{Rows: rows, Cols: cols, Stride: max(cols, 1), Data: data}
}

// gemm is C = alpha op(A) op(B) + beta C, skipping empty products.
func gemm(tA, tB blas.Transpose, alpha float64, a, b blas64.General, beta float64, c blas64.General) {
	if c.Rows == 0 || c.Cols == 0 {
		return
	}
	k := a.Cols
	if tA == blas.Trans {
		k = a.Rows
	}
	if k == 0 {
		if beta == 0 {
			for i := 0; i < c.Rows; i++ {
				row := c.Data[i*c.Stride : i*c.Stride+c.Cols]
				for j := range row {
					row[j] = 0
				}
			}
		}
		return
	}
	blas64.Gemm(tA, tB, alpha, a, b, beta, c)
}

func (p *problem) threadCount() int {
	if p.threads > 0 {
		return p.threads
	}
	return runtime.GOMAXPROCS(0)
}

// DefaultMemoryBytes bounds the half-transformed integral buffer.
const DefaultMemoryBytes = int64(1536) << 20

// run performs the transformation batch by batch and returns, per batch
// spin, the accumulated contributions.
func (p *problem) run() ([2]*accum, int, error) {
	var acc [2]*accum
	nspin := 2
	if p.restricted {
		nspin = 1
	}
	n := p.lay.n
	npair := n * (n + 1) / 2
	mem := p.memory
	if mem <= 0 {
		mem = DefaultMemoryBytes
	}
	var sp *storedPlan
	slabCap := maxSlabBytesStored
	if src, ok := p.eri.(blockSource); ok {
		st := src.StoredBlocks()
		if st == nil {
			st, slabCap = src.ComputedBlocks(), maxSlabBytesComputed
		}
		sp = &storedPlan{st: st}
	}
	passes := 0
	for rho := 0; rho < nspin; rho++ {
		a := p.newAccum(rho)
		acc[rho] = a
		nact := p.nact(rho)
		if nact == 0 || p.nvir(rho) == 0 {
			continue
		}
		pStart := p.spin[rho].nocc
		if p.relaxed {
			pStart = 0
		}
		nP := p.nmo(rho) - pStart
		perJ := int64(nP) * int64(npair) * 8
		nb := int(mem / perJ)
		if nb < 1 {
			return acc, passes, fmt.Errorf("mp2: one occupied orbital needs %d MiB of half-transformed integrals, more than the %d MiB allowed", perJ>>20, mem>>20)
		}
		if nb > nact {
			nb = nact
		}
		buf := make([]float64, nb*nP*npair)
		if sp != nil && sp.slabs == nil {
			slab := min(max(mem-int64(len(buf))*8, minSlabBytes), slabCap)
			sp = newStoredPlan(sp.st, n, slab)
		}
		for j0 := p.frozen; j0 < p.spin[rho].nocc; j0 += nb {
			j1 := min(j0+nb, p.spin[rho].nocc)
			if sp != nil {
				p.halfTransformStored(sp, rho, j0, j1, pStart, nP, buf)
			} else {
				p.halfTransform(rho, j0, j1, pStart, nP, buf)
			}
			passes++
			parts := make([]*accum, j1-j0)
			p.parallel(j1-j0, func(w, jj int, scr *scratch) {
				parts[jj] = p.pairTerms(rho, j0+jj, pStart, nP, buf[jj*nP*npair:(jj+1)*nP*npair], scr)
			})
			for _, q := range parts {
				a.add(q)
			}
		}
	}
	return acc, passes, nil
}

func (p *problem) newAccum(rho int) *accum {
	a := &accum{}
	if !p.relaxed {
		return a
	}
	tg := [2]int{rho, 1 - rho}
	if p.restricted {
		tg[1] = rho
	}
	for k, t := range tg {
		v, o, na := p.nvir(t), p.spin[t].nocc, p.nact(t)
		a.pvv[k] = make([]float64, v*v)
		a.poo[k] = make([]float64, na*na)
		a.z[k] = make([]float64, na*p.lay.n)
		a.l2[k] = make([]float64, v*o)
	}
	return a
}

func (a *accum) add(b *accum) {
	a.ess += b.ess
	a.eos += b.eos
	for k := 0; k < 2; k++ {
		for _, pr := range [][2][]float64{{a.pvv[k], b.pvv[k]}, {a.poo[k], b.poo[k]}, {a.z[k], b.z[k]}, {a.l2[k], b.l2[k]}} {
			for i := range pr[1] {
				pr[0][i] += pr[1][i]
			}
		}
	}
}

// scratch is per-worker work space.
type scratch struct {
	x, y, z []float64
	m       []float64
	t       [][]float64
}

// parallel runs f(worker, item) for items 0..n-1 on the worker pool. Each
// item is computed by exactly one worker, so results stored per item do
// not depend on the scheduling.
func (p *problem) parallel(n int, f func(w, item int, scr *scratch)) {
	nt := min(p.threadCount(), n)
	if nt <= 1 {
		scr := &scratch{}
		for i := 0; i < n; i++ {
			f(0, i, scr)
		}
		return
	}
	next := make(chan int)
	var wg sync.WaitGroup
	for w := 0; w < nt; w++ {
		wg.Add(1)
		go func(w int) {
			defer wg.Done()
			scr := &scratch{}
			for i := range next {
				f(w, i, scr)
			}
		}(w)
	}
	for i := 0; i < n; i++ {
		next <- i
	}
	close(next)
	wg.Wait()
}

func grow(s []float64, n int) []float64 {
	if cap(s) < n {
		return make([]float64, n)
	}
	s = s[:n]
	for i := range s {
		s[i] = 0
	}
	return s
}

// halfTransform fills buf[(j−j0)][p−pStart][λσ] = (j p|λσ) for occupied
// j in [j0, j1) and orbitals p in [pStart, pStart+nP) of spin rho, λ ≥ σ
// packed, from single shell quartets (Shell, shell-pair Schwarz
// screening). It serves engines that offer no blocks of pair classes
// (see stored.go, the path taken with package integral's engine) and is
// the independent check of that path in the tests. Work is split by the shell pair (L, S) of λσ; each pair's slots
// are written by one worker only.
func (p *problem) halfTransform(rho, j0, j1, pStart, nP int, buf []float64) {
	lay := p.lay
	n := lay.n
	npair := n * (n + 1) / 2
	nb := j1 - j0
	ns := lay.nshell()
	type lsPair struct{ l, s int }
	var pairs []lsPair
	for l := 0; l < ns; l++ {
		for s := 0; s <= l; s++ {
			pairs = append(pairs, lsPair{l, s})
		}
	}
	cb := sub(p.spin[rho].C, j0, j1)
	cp := sub(p.spin[rho].C, pStart, pStart+nP)
	p.parallel(len(pairs), func(w, item int, scr *scratch) {
		L, S := pairs[item].l, pairs[item].s
		nl, nsz := lay.size[L], lay.size[S]
		nls := nl * nsz
		scr.x = grow(scr.x, n*nls*n) // X[μ][ls][ν]
		x := scr.x
		qLS := p.eri.Schwarz(L, S)
		for M := 0; M < ns; M++ {
			for N := 0; N <= M; N++ {
				if p.eri.Schwarz(M, N)*qLS < p.schwarz {
					continue
				}
				nm, nn := lay.size[M], lay.size[N]
				blk := nm * nn * nls
				if cap(scr.m) < blk {
					scr.m = make([]float64, blk)
				}
				v := scr.m[:blk]
				p.eri.Shell(M, N, L, S, v)
				om, on := lay.off[M], lay.off[N]
				for a := 0; a < nm; a++ {
					mu := om + a
					for b := 0; b < nn; b++ {
						nu := on + b
						src := v[(a*nn+b)*nls : (a*nn+b+1)*nls]
						for ls, val := range src {
							x[(mu*nls+ls)*n+nu] = val
							x[(nu*nls+ls)*n+mu] = val
						}
					}
				}
			}
		}
		// Y[j][(ls,ν)] = Σ_μ C[μ][j] X[μ][(ls,ν)]
		scr.y = grow(scr.y, nb*nls*n)
		gemm(blas.Trans, blas.NoTrans, 1, cb, gen(n, nls*n, x), 0, gen(nb, nls*n, scr.y))
		// Z[(j,ls)][p] = Σ_ν Y[(j,ls)][ν] C[ν][p]
		scr.z = grow(scr.z, nb*nls*nP)
		gemm(blas.NoTrans, blas.NoTrans, 1, gen(nb*nls, n, scr.y), cp, 0, gen(nb*nls, nP, scr.z))
		ol, os := lay.off[L], lay.off[S]
		for a := 0; a < nl; a++ {
			for b := 0; b < nsz; b++ {
				if L == S && b > a {
					continue
				}
				pi := pairIndex(ol+a, os+b)
				ls := a*nsz + b
				for j := 0; j < nb; j++ {
					row := scr.z[(j*nls+ls)*nP : (j*nls+ls+1)*nP]
					base := j * nP * npair
					for q, val := range row {
						buf[base+q*npair+pi] = val
					}
				}
			}
		}
	})
}

// unpack writes the packed symmetric matrix row into the full n×n m.
func unpack(row []float64, n int, m []float64) {
	k := 0
	for l := 0; l < n; l++ {
		for s := 0; s <= l; s++ {
			v := row[k]
			m[l*n+s] = v
			m[s*n+l] = v
			k++
		}
	}
}
