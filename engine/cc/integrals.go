package cc

import (
	"fmt"
	"sync"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/mat"

	"moltrail/engine/integral"
)

// Source gives electron-repulsion integrals over the active molecular
// orbitals (chemists' notation (pq|rs), real orbitals, indices counted in
// the active space: occupied 0..o−1, then virtual o..o+v−1). It is the
// only thing the coupled-cluster code needs from the integrals, so the
// way they are made — an exact four-index transformation (Exact) or a
// product of three-index factors (Factored, e.g. fitted (Q|pq)) — is the
// caller's choice and never reaches the amplitude equations.
type Source interface {
	// NumOrbitals is the number of active orbitals n = o + v.
	NumOrbitals() int
	// Block writes (pq|rs) for p in [r[0].lo, r[0].hi), q in r[1], r in
	// r[2], s in r[3] into dst, row-major [p][q][r][s].
	Block(r [4]Range, dst []float64)
}

// Range is a half-open range of active orbital indices.
type Range struct{ Lo, Hi int }

// Len is the number of indices in the range.
func (r Range) Len() int { return r.Hi - r.Lo }

// pairIdx is the packed index of p ≥ q.
func pairIdx(p, q int) int {
	if p < q {
		p, q = q, p
	}
	return p*(p+1)/2 + q
}

// Exact holds (pq|rs) over the active orbitals from a four-index
// transformation of the exact AO integrals, packed by the (pq) ↔ (qp),
// (rs) ↔ (sr) symmetries: n²(n+1)²/4 values.
type Exact struct {
	n     int
	npair int
	v     []float64 // [pq][rs], both packed
}

// NumOrbitals implements Source.
func (e *Exact) NumOrbitals() int { return e.n }

// Block implements Source.
func (e *Exact) Block(r [4]Range, dst []float64) {
	nq, nr, ns := r[1].Len(), r[2].Len(), r[3].Len()
	for p := r[0].Lo; p < r[0].Hi; p++ {
		for q := r[1].Lo; q < r[1].Hi; q++ {
			row := e.v[pairIdx(p, q)*e.npair:]
			out := dst[((p-r[0].Lo)*nq+(q-r[1].Lo))*nr*ns:]
			k := 0
			for x := r[2].Lo; x < r[2].Hi; x++ {
				for y := r[3].Lo; y < r[3].Hi; y++ {
					out[k] = row[pairIdx(x, y)]
					k++
				}
			}
		}
	}
}

// ExactBytes is the memory an Exact source of n orbitals holds.
func ExactBytes(n int) int64 {
	np := int64(n) * int64(n+1) / 2
	return 8 * np * np
}

// NewExact transforms the AO integrals of eri to the orbitals given by the
// columns of c (N × n, N the number of basis functions), with threads
// workers. The AO integrals are taken by blocks of pair classes (read
// from the engine's in-core store when it holds them, computed
// otherwise); both quarter-transformation pairs are dense matrix
// products. Each output element is written by one worker from one fixed
// sequence of products, so the bits do not depend on the thread count.
// Memory: the result (ExactBytes) plus a half-transformed array of
// N(N+1)/2 · n(n+1)/2 values.
func NewExact(eri *integral.ERI, c *mat.Dense, threads int) (*Exact, error) {
	nbf, n := c.Dims()
	if nbf == 0 || n == 0 {
		return nil, fmt.Errorf("cc: nothing to transform (%d basis functions, %d orbitals)", nbf, n)
	}
	st := eri.StoredBlocks()
	if st == nil {
		st = eri.ComputedBlocks()
	}
	cr := c.RawMatrix()
	npMO := n * (n + 1) / 2
	npAO := nbf * (nbf + 1) / 2
	// half[rs][μν]: (μν|rs) with r ≥ s packed, μ ≥ ν packed
	half := make([]float64, npMO*npAO)
	nc := st.NumClasses()
	maxNP := 0
	for P := 0; P < nc; P++ {
		maxNP = max(maxNP, len(st.Class(P).Mu))
	}
	parallelFor(threads, nc, func(P int, scr *scratch) {
		cls := st.Class(P)
		np := len(cls.Mu)
		scr.a = grow(scr.a, np*nbf*nbf) // X[f][λ][σ]
		x := scr.a
		scr.b = grow(scr.b, maxNP*maxNP)
		blk := scr.b
		for Q := 0; Q < nc; Q++ {
			if !st.Kept(P, Q) {
				continue
			}
			q := st.Class(Q)
			nq := len(q.Mu)
			st.Fill(P, Q, blk)
			for f := 0; f < np; f++ {
				xs := x[f*nbf*nbf:]
				row := blk[f*nq : (f+1)*nq]
				for g, val := range row {
					l, s := int(q.Mu[g]), int(q.Nu[g])
					xs[l*nbf+s] = val
					xs[s*nbf+l] = val
				}
			}
		}
		// T[f][λ][s] = Σ_σ X[f][λ][σ] C[σ][s]
		scr.c = fit(scr.c, np*nbf*n)
		mm(blas.NoTrans, blas.NoTrans, np*nbf, n, nbf, 1, x, nbf, cr.Data, cr.Stride, 0, scr.c, n)
		scr.d = fit(scr.d, n*n)
		for f := 0; f < np; f++ {
			mu, nu := int(cls.Mu[f]), int(cls.Nu[f])
			if cls.Self && mu < nu {
				continue // the same pair listed again
			}
			// H[r][s] = Σ_λ C[λ][r] T[f][λ][s]
			mm(blas.Trans, blas.NoTrans, n, n, nbf, 1, cr.Data, cr.Stride, scr.c[f*nbf*n:], n, 0, scr.d, n)
			col := pairIdx(mu, nu)
			for r := 0; r < n; r++ {
				for s := 0; s <= r; s++ {
					half[pairIdx(r, s)*npAO+col] = scr.d[r*n+s]
				}
			}
		}
	})
	out := &Exact{n: n, npair: npMO, v: make([]float64, npMO*npMO)}
	parallelFor(threads, npMO, func(rs int, scr *scratch) {
		scr.a = fit(scr.a, nbf*nbf)
		y := scr.a
		row := half[rs*npAO : (rs+1)*npAO]
		k := 0
		for mu := 0; mu < nbf; mu++ {
			for nu := 0; nu <= mu; nu++ {
				y[mu*nbf+nu] = row[k]
				y[nu*nbf+mu] = row[k]
				k++
			}
		}
		scr.b = fit(scr.b, nbf*n)
		mm(blas.NoTrans, blas.NoTrans, nbf, n, nbf, 1, y, nbf, cr.Data, cr.Stride, 0, scr.b, n)
		scr.c = fit(scr.c, n*n)
		mm(blas.Trans, blas.NoTrans, n, n, nbf, 1, cr.Data, cr.Stride, scr.b, n, 0, scr.c, n)
		dst := out.v[rs*npMO:]
		for p := 0; p < n; p++ {
			for q := 0; q <= p; q++ {
				dst[pairIdx(p, q)] = scr.c[p*n+q]
			}
		}
	})
	return out, nil
}

// Factored gives (pq|rs) = Σ_Q B[Q][pq] B[Q][rs] from three-index factors
// over the active orbitals (for fitted integrals: B = (Q|pq) contracted
// with the inverse square root of the fitting metric). Blocks are formed
// on request by one matrix product each.
type Factored struct {
	n, naux int
	b       []float64 // [Q][p][q], n × n per Q
}

// NewFactored wraps factors b laid out [Q][p][q] (naux · n · n values,
// symmetric in p, q).
func NewFactored(n, naux int, b []float64) (*Factored, error) {
	if n <= 0 || naux <= 0 || len(b) != naux*n*n {
		return nil, fmt.Errorf("cc: factor array has %d values, want %d auxiliary × %d × %d", len(b), naux, n, n)
	}
	return &Factored{n: n, naux: naux, b: b}, nil
}

// NumOrbitals implements Source.
func (f *Factored) NumOrbitals() int { return f.n }

// Block implements Source.
func (f *Factored) Block(r [4]Range, dst []float64) {
	left := f.gather(r[0], r[1])
	right := f.gather(r[2], r[3])
	npq, nrs := r[0].Len()*r[1].Len(), r[2].Len()*r[3].Len()
	mm(blas.Trans, blas.NoTrans, npq, nrs, f.naux, 1, left, npq, right, nrs, 0, dst, nrs)
}

// gather returns B[Q][p][q] for p in a, q in b, as [Q][(p,q)].
func (f *Factored) gather(a, b Range) []float64 {
	na, nb := a.Len(), b.Len()
	out := make([]float64, f.naux*na*nb)
	for Q := 0; Q < f.naux; Q++ {
		src := f.b[Q*f.n*f.n:]
		dst := out[Q*na*nb:]
		for p := 0; p < na; p++ {
			copy(dst[p*nb:(p+1)*nb], src[(a.Lo+p)*f.n+b.Lo:(a.Lo+p)*f.n+b.Hi])
		}
	}
	return out
}

// scratch is per-worker work space.
type scratch struct{ a, b, c, d []float64 }

// parallelFor runs f(item) for items 0..n−1 on threads workers; each item
// is computed by exactly one worker.
func parallelFor(threads, n int, f func(item int, scr *scratch)) {
	nt := min(max(threads, 1), n)
	if nt <= 1 {
		scr := &scratch{}
		for i := 0; i < n; i++ {
			f(i, scr)
		}
		return
	}
	next := make(chan int, nt)
	var wg sync.WaitGroup
	for w := 0; w < nt; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			scr := &scratch{}
			for i := range next {
				f(i, scr)
			}
		}()
	}
	for i := 0; i < n; i++ {
		next <- i
	}
	close(next)
	wg.Wait()
}

// grow returns s with length n, all zero.
func grow(s []float64, n int) []float64 {
	if cap(s) < n {
		return make([]float64, n)
	}
	s = s[:n]
	clear(s)
	return s
}

// fit returns s with length n, not cleared (for outputs that are overwritten).
func fit(s []float64, n int) []float64 {
	if cap(s) < n {
		return make([]float64, n)
	}
	return s[:n]
}
