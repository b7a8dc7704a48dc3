package cc

import (
	"gonum.org/v1/gonum/blas"

	"moltrail/engine/internal/gemm"
)

// triples is the (T) correction of converged amplitudes (doc.go), by
// occupied triples i ≥ j ≥ k; every triple's energy is computed by one
// worker and the triples are summed in a fixed order.
func (p *problem) triples(t1, t2 []float64) float64 {
	o := p.o
	type triple struct{ i, j, k int }
	var list []triple
	for i := 0; i < o; i++ {
		for j := 0; j <= i; j++ {
			for k := 0; k <= j; k++ {
				list = append(list, triple{i, j, k})
			}
		}
	}
	e := make([]float64, len(list))
	parallelFor(p.threads, len(list), func(n int, scr *scratch) {
		t := list[n]
		w := 6.0
		switch {
		case t.i == t.j && t.j == t.k:
			w = 1
		case t.i == t.j || t.j == t.k:
			w = 3
		}
		e[n] = w * p.tripleEnergy(t.i, t.j, t.k, t1, t2, scr)
	})
	var s float64
	for _, x := range e {
		s += x
	}
	return s / 3
}

// tripleEnergy is Σ_abc W_abc r(W + V)_abc / D_abc for one occupied
// triple (i, j, k), where r(Z)_abc = 4Z_abc + Z_bca + Z_cab − 2Z_cba −
// 2Z_acb − 2Z_bac.
func (p *problem) tripleEnergy(i, j, k int, t1, t2 []float64, scr *scratch) float64 {
	o, v := p.o, p.v
	vvv := v * v * v
	np := gemm.RoundUp(v, 2*gemm.Cols)
	scr.a = grow(scr.a, vvv)       // W
	scr.b = fit(scr.b, vvv)        // Σ_m part of one permutation's term, [a][(b,c)]
	scr.c = fit(scr.c, p.vvPad*np) // Σ_f part, [(a,b)][c] with leading dimension np
	scr.d = grow(scr.d, v*np)      // t_jk^fc as [f][c], padded
	w, x, xf, tb := scr.a, scr.b, scr.c, scr.d
	occ := [3]int{i, j, k}
	// The six permutations of the pairs (i a), (j b), (k c): slot s of the
	// term belongs to occupied occ[at[s]], whose virtual sits at position
	// at[s] of W.
	for _, at := range [6][3]int{{0, 1, 2}, {0, 2, 1}, {1, 0, 2}, {1, 2, 0}, {2, 0, 1}, {2, 1, 0}} {
		ii, jj, kk := occ[at[0]], occ[at[1]], occ[at[2]]
		// term[a][b][c] = Σ_f (ia|bf) t_kj^cf − Σ_m (ia|jm) t_mk^bc, with
		// t_kj^cf = t_jk^fc: the first product by the blocked kernel.
		src := t2[(jj*o+kk)*v*v:]
		for f := 0; f < v; f++ {
			copy(tb[f*np:f*np+v], src[f*v:(f+1)*v])
		}
		gemm.CM(p.vvPad, np, v, p.ovvvF[ii*v*p.vvPad:], p.vvPad, tb, np, xf, np, false)
		mm(blas.NoTrans, blas.NoTrans, v, v*v, o, 1, p.ovoo[(ii*v*o+jj)*o:], o*o, t2[kk*v*v:], o*v*v, 0, x, v*v)
		ws := [3]int{v * v, v, 1}
		s0, s1, s2 := ws[at[0]], ws[at[1]], ws[at[2]]
		for a := 0; a < v; a++ {
			for b := 0; b < v; b++ {
				base := a*s0 + b*s1
				xr := xf[(a*v+b)*np : (a*v+b)*np+v]
				mr := x[(a*v+b)*v : (a*v+b+1)*v]
				for c, y := range xr {
					w[base+c*s2] += y - mr[c]
				}
			}
		}
	}
	// z = W + V, V_abc = (ia|jb) t_k^c + (ia|kc) t_j^b + (jb|kc) t_i^a
	z := x
	ovov := p.ovov
	for a := 0; a < v; a++ {
		tia := t1[i*v+a]
		for b := 0; b < v; b++ {
			iajb := ovov[((i*v+a)*o+j)*v+b]
			tjb := t1[j*v+b]
			r := (a*v + b) * v
			for c := 0; c < v; c++ {
				z[r+c] = w[r+c] + iajb*t1[k*v+c] + ovov[((i*v+a)*o+k)*v+c]*tjb + ovov[((j*v+b)*o+k)*v+c]*tia
			}
		}
	}
	eijk := p.eo[i] + p.eo[j] + p.eo[k]
	var e float64
	for a := 0; a < v; a++ {
		for b := 0; b < v; b++ {
			dab := eijk - p.ev[a] - p.ev[b]
			for c := 0; c < v; c++ {
				abc, bca, cab := (a*v+b)*v+c, (b*v+c)*v+a, (c*v+a)*v+b
				cba, acb, bac := (c*v+b)*v+a, (a*v+c)*v+b, (b*v+a)*v+c
				r := 4*z[abc] + z[bca] + z[cab] - 2*z[cba] - 2*z[acb] - 2*z[bac]
				e += w[abc] * r / (dab - p.ev[c])
			}
		}
	}
	return e
}
