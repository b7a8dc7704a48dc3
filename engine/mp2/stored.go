package mp2

import (
	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"

	"moltrail/engine/integral"
)

// In-core first half-transformation. When the SCF's integral engine holds
// the screened unique integrals in memory, (j p|λσ) is formed from them
// instead of recomputing every shell quartet: the ket pairs λ ≥ σ are
// taken in slabs (whole pair classes of the store, as many as fit
// maxSlabBytes); for each slab one sweep over the stored blocks scatters
// (μν|λσ) into X[λσ][μ][ν] (each element comes from exactly one block,
// using the 8-fold symmetry), and the two quarter transformations are
// dense matrix products over fixed tiles of the slab. Every element of
// the result is one fixed sequence of products whatever the number of
// threads, so the bits do not depend on it.

// storedSource is an integral engine that may hold its integrals in core.
type storedSource interface {
	Stored() *integral.Stored
}

// maxSlabBytes caps the X buffer of one slab.
const maxSlabBytes = int64(128) << 20

// minSlabBytes is what a slab may use even when the budget is spent on
// the half-transformed integrals.
const minSlabBytes = int64(16) << 20

// slabTile is the number of ket pairs per matrix-product work item.
const slabTile = 16

// blockRun is the number of consecutive stored blocks per scatter work item.
const blockRun = 512

// storedPlan is the slab layout of the in-core path.
type storedPlan struct {
	st *integral.Stored
	// rank[P][f] is the position of pair function f among the canonical
	// pairs of class P, or −1 for the second listing of a pair in a
	// self-paired class.
	rank  [][]int32
	ncan  []int // canonical pairs per class
	slabs [][]int
	maxNB int // largest block (values)
}

// newStoredPlan splits the pair classes into slabs of at most
// slabBytes of X (at least one class each).
func newStoredPlan(st *integral.Stored, n int, slabBytes int64) *storedPlan {
	nc := st.NumClasses()
	sp := &storedPlan{st: st, rank: make([][]int32, nc), ncan: make([]int, nc)}
	for P := 0; P < nc; P++ {
		c := st.Class(P)
		r := make([]int32, len(c.Mu))
		k := 0
		for f := range c.Mu {
			if c.Self && c.Mu[f] < c.Nu[f] {
				r[f] = -1
				continue
			}
			r[f] = int32(k)
			k++
		}
		sp.rank[P], sp.ncan[P] = r, k
	}
	perSlot := int64(8) * int64(n) * int64(n)
	maxSlots := int(slabBytes / perSlot)
	var cur []int
	slots := 0
	for P := 0; P < nc; P++ {
		if sp.ncan[P] == 0 {
			continue
		}
		if len(cur) > 0 && slots+sp.ncan[P] > maxSlots {
			sp.slabs = append(sp.slabs, cur)
			cur, slots = nil, 0
		}
		cur = append(cur, P)
		slots += sp.ncan[P]
	}
	if len(cur) > 0 {
		sp.slabs = append(sp.slabs, cur)
	}
	for k := 0; k < st.NumBlocks(); k++ {
		P, Q := st.Block(k)
		sp.maxNB = max(sp.maxNB, len(st.Class(P).Mu)*len(st.Class(Q).Mu))
	}
	return sp
}

// halfTransformStored fills buf exactly as halfTransform does, from the
// in-core integrals.
func (p *problem) halfTransformStored(sp *storedPlan, rho, j0, j1, pStart, nP int, buf []float64) {
	n := p.lay.n
	npair := n * (n + 1) / 2
	nb := j1 - j0
	st := sp.st
	cb := sub(p.spin[rho].C, j0, j1)
	cp := sub(p.spin[rho].C, pStart, pStart+nP)
	base := make([]int, st.NumClasses())
	var x []float64
	for _, slab := range sp.slabs {
		for P := range base {
			base[P] = -1
		}
		nls := 0
		for _, P := range slab {
			base[P] = nls
			nls += sp.ncan[P]
		}
		// packed λσ index of each slot
		slotPI := make([]int, nls)
		for _, P := range slab {
			c := st.Class(P)
			for f, r := range sp.rank[P] {
				if r >= 0 {
					slotPI[base[P]+int(r)] = pairIndex(int(c.Mu[f]), int(c.Nu[f]))
				}
			}
		}
		x = grow(x, nls*n*n) // X[slot][μ][ν]
		nblk := st.NumBlocks()
		p.parallel((nblk+blockRun-1)/blockRun, func(w, item int, scr *scratch) {
			for k := item * blockRun; k < min((item+1)*blockRun, nblk); k++ {
				P, Q := st.Block(k)
				bp, bq := base[P], base[Q]
				if bp < 0 && bq < 0 {
					continue
				}
				if P == Q {
					bp = -1 // (P|P) lists both orientations: the ket side covers it
				}
				if cap(scr.m) < sp.maxNB {
					scr.m = make([]float64, sp.maxNB)
				}
				m := scr.m
				st.Unpack(k, m)
				bra, ket := st.Class(P), st.Class(Q)
				rb, rk := sp.rank[P], sp.rank[Q]
				nk := len(ket.Mu)
				if bq >= 0 {
					for g, r := range rk {
						if r < 0 {
							continue
						}
						s := bq + int(r)
						for f, rf := range rb {
							v := m[f*nk+g]
							if rf < 0 || v == 0 {
								continue
							}
							mu, nu := int(bra.Mu[f]), int(bra.Nu[f])
							x[(s*n+mu)*n+nu] = v
							x[(s*n+nu)*n+mu] = v
						}
					}
				}
				if bp >= 0 {
					for f, r := range rb {
						if r < 0 {
							continue
						}
						s := bp + int(r)
						row := m[f*nk : (f+1)*nk]
						for g, rg := range rk {
							v := row[g]
							if rg < 0 || v == 0 {
								continue
							}
							la, si := int(ket.Mu[g]), int(ket.Nu[g])
							x[(s*n+la)*n+si] = v
							x[(s*n+si)*n+la] = v
						}
					}
				}
			}
		})
		ntile := (nls + slabTile - 1) / slabTile
		p.parallel(ntile, func(w, t int, scr *scratch) {
			s0 := t * slabTile
			ts := min(slabTile, nls-s0)
			// Y[j][(s,ν)] = Σ_μ C[μ][j] X[s][μ][ν]
			scr.y = fit(scr.y, nb*ts*n)
			for s := 0; s < ts; s++ {
				xs := gen(n, n, x[(s0+s)*n*n:(s0+s+1)*n*n])
				ys := blas64.General{Rows: nb, Cols: n, Stride: ts * n, Data: scr.y[s*n:]}
				gemm(blas.Trans, blas.NoTrans, 1, cb, xs, 0, ys)
			}
			// Z[(j,s)][p] = Σ_ν Y[(j,s)][ν] C[ν][p]
			scr.z = fit(scr.z, nb*ts*nP)
			gemm(blas.NoTrans, blas.NoTrans, 1, gen(nb*ts, n, scr.y), cp, 0, gen(nb*ts, nP, scr.z))
			for j := 0; j < nb; j++ {
				dst := buf[j*nP*npair:]
				for s := 0; s < ts; s++ {
					pi := slotPI[s0+s]
					row := scr.z[(j*ts+s)*nP : (j*ts+s+1)*nP]
					for q, val := range row {
						dst[q*npair+pi] = val
					}
				}
			}
		})
	}
}

// fit returns s with length n, reallocated when too small, not cleared
// (for outputs that are overwritten).
func fit(s []float64, n int) []float64 {
	if cap(s) < n {
		return make([]float64, n)
	}
	return s[:n]
}
