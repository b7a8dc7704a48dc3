package mp2

import (
	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"

	"moltrail/engine/integral"
)

// First half-transformation from blocks of the integral engine. The ket
// pairs λ ≥ σ are taken in slabs (whole pair classes, as many as fit the
// slab budget); for each slab one sweep over the engine's blocks of pair
// classes scatters (μν|λσ) into X[λσ][μ][ν] (each element comes from
// exactly one block, using the 8-fold symmetry), and the two quarter
// transformations are dense matrix products over fixed tiles of the slab.
// When the SCF's engine holds the screened integrals in core the blocks
// are read from there; otherwise each block touching the slab is computed
// (a block whose two classes lie in different slabs is computed once for
// each, so larger slabs save work). Only blocks kept by the engine's
// Schwarz test are used; the rest are zero to the threshold. Every
// element of the result is one fixed sequence of products whatever the
// number of threads, so the bits do not depend on it.

// blockSource is an integral engine that offers its integrals by blocks.
type blockSource interface {
	StoredBlocks() *integral.Blocks
	ComputedBlocks() *integral.Blocks
}

// Caps of the X buffer of one slab: reading stored blocks again is cheap,
// computing them is not.
const (
	maxSlabBytesStored   = int64(128) << 20
	maxSlabBytesComputed = int64(512) << 20
)

// minSlabBytes is what a slab may use even when the budget is spent on
// the half-transformed integrals.
const minSlabBytes = int64(16) << 20

// slabTile is the number of ket pairs per matrix-product work item.
const slabTile = 16

// classRun is the number of partner classes per scatter work item.
const classRun = 64

// storedPlan is the slab layout of the in-core path.
type storedPlan struct {
	st *integral.Blocks
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
func newStoredPlan(st *integral.Blocks, n int, slabBytes int64) *storedPlan {
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
	for P := 0; P < nc; P++ {
		sp.maxNB = max(sp.maxNB, len(st.Class(P).Mu))
	}
	sp.maxNB *= sp.maxNB
	return sp
}

// halfTransformStored fills buf exactly as halfTransform does, from the
// blocks of sp.
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
		// Work item (slab class P, run of classes R): blocks (P|R) for R
		// outside the slab or R ≤ P; item P writes the slots of P and, for
		// R < P in the slab, those of R, so every X element has one writer.
		nc := st.NumClasses()
		nrun := (nc + classRun - 1) / classRun
		p.parallel(len(slab)*nrun, func(w, item int, scr *scratch) {
			P := slab[item/nrun]
			r0 := (item % nrun) * classRun
			if cap(scr.m) < sp.maxNB {
				scr.m = make([]float64, sp.maxNB)
			}
			m := scr.m
			cP, rP, bP := st.Class(P), sp.rank[P], base[P]
			for R := r0; R < min(r0+classRun, nc); R++ {
				bR := base[R]
				if (bR >= 0 && R > P) || !st.Kept(P, R) {
					continue
				}
				st.Fill(P, R, m)
				cR, rR := st.Class(R), sp.rank[R]
				nr := len(cR.Mu)
				for f, r := range rP {
					if r < 0 {
						continue
					}
					xs := x[(bP+int(r))*n*n : (bP+int(r)+1)*n*n]
					row := m[f*nr : (f+1)*nr]
					for g, rg := range rR {
						v := row[g]
						if rg < 0 || v == 0 {
							continue
						}
						mu, nu := int(cR.Mu[g]), int(cR.Nu[g])
						xs[mu*n+nu] = v
						xs[nu*n+mu] = v
					}
				}
				if bR < 0 || R == P {
					continue
				}
				for g, r := range rR {
					if r < 0 {
						continue
					}
					xs := x[(bR+int(r))*n*n : (bR+int(r)+1)*n*n]
					for f, rf := range rP {
						v := m[f*nr+g]
						if rf < 0 || v == 0 {
							continue
						}
						mu, nu := int(cP.Mu[f]), int(cP.Nu[f])
						xs[mu*n+nu] = v
						xs[nu*n+mu] = v
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
