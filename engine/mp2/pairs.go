package mp2

import (
	"gonum.org/v1/gonum/blas"
)

// pairTerms finishes the transformation for one occupied orbital j of
// spin ρ (bj holds (j p|λσ) for p in [pStart, pStart+nP), λσ packed),
// forms the amplitudes of all pairs (j, k) and returns their
// contributions: the pair energies and, for relaxed densities, the
// pieces of the density and Lagrangian listed in relaxed.go.
func (p *problem) pairTerms(rho, j, pStart, nP int, bj []float64, scr *scratch) *accum {
	n := p.lay.n
	npair := n * (n + 1) / 2
	sp := [2]int{rho, 1 - rho}
	if p.restricted {
		sp[1] = rho
	}
	nspin := 2
	if p.restricted {
		nspin = 1
	}
	a := p.newAccum(rho)
	na := [2]int{p.nact(sp[0]), p.nact(sp[1])}
	nv := [2]int{p.nvir(sp[0]), p.nvir(sp[1])}
	// I[t][pp][k][b] = (j p|k b), k active and b virtual of spin sp[t].
	var I [2][]float64
	for t := 0; t < nspin; t++ {
		I[t] = make([]float64, nP*na[t]*nv[t])
	}
	if nspin == 1 {
		I[1] = I[0]
	}
	scr.y = grow(scr.y, n*n)
	m := scr.y
	tk := make([]float64, max(na[0], na[1])*n)
	for pp := 0; pp < nP; pp++ {
		unpack(bj[pp*npair:(pp+1)*npair], n, m)
		for t := 0; t < nspin; t++ {
			s := sp[t]
			fo, no, nmo := p.frozen, p.spin[s].nocc, p.nmo(s)
			co := sub(p.spin[s].C, fo, no)
			cv := sub(p.spin[s].C, no, nmo)
			gemm(blas.Trans, blas.NoTrans, 1, co, gen(n, n, m), 0, gen(na[t], n, tk))
			gemm(blas.NoTrans, blas.NoTrans, 1, gen(na[t], n, tk), cv, 0, gen(na[t], nv[t], I[t][pp*na[t]*nv[t]:]))
		}
	}
	// Amplitudes, layout [c][k][b] with c virtual of spin ρ.
	er := p.spin[rho].eps
	ej := er[j]
	or := p.spin[rho].nocc
	cOff := or - pStart
	v0 := nv[0]
	ts := make([]float64, v0*na[0]*v0)
	{
		e := er
		stride := na[0] * v0
		for c := 0; c < v0; c++ {
			ec := e[or+c]
			for k := 0; k < na[0]; k++ {
				ek := e[p.frozen+k]
				rowC := I[0][(cOff+c)*stride+k*v0:]
				for b := 0; b < v0; b++ {
					num := rowC[b] - I[0][(cOff+b)*stride+k*v0+c]
					t := num / (ej + ek - ec - e[or+b])
					ts[c*stride+k*v0+b] = t
					a.ess += 0.25 * t * num
				}
			}
		}
	}
	v1 := nv[1]
	to := make([]float64, v0*na[1]*v1)
	{
		et := p.spin[sp[1]].eps
		ot := p.spin[sp[1]].nocc
		stride := na[1] * v1
		for c := 0; c < v0; c++ {
			ec := er[or+c]
			for k := 0; k < na[1]; k++ {
				ek := et[p.frozen+k]
				row := I[1][(cOff+c)*stride+k*v1:]
				for b := 0; b < v1; b++ {
					num := row[b]
					t := num / (ej + ek - ec - et[ot+b])
					to[c*stride+k*v1+b] = t
					a.eos += t * num
				}
			}
		}
	}
	if !p.relaxed {
		return a
	}
	// Every term below is linear in the (scaled) energy functional: the
	// same-spin pieces carry css, the opposite-spin pieces cos.
	css, cos := p.scale[0], p.scale[1]
	tsM := gen(v0, na[0]*v0, ts)
	toM := gen(v0, na[1]*v1, to)
	// P_vv (target ρ): ½ Ts Tsᵀ + To Toᵀ over (k, b).
	gemm(blas.NoTrans, blas.Trans, 0.5*css, tsM, tsM, 0, gen(v0, v0, a.pvv[0]))
	gemm(blas.NoTrans, blas.Trans, cos, toM, toM, 1, gen(v0, v0, a.pvv[0]))
	// P_oo: −½ Σ_{c,b} Ts[c][i][b] Ts[c][k][b] (target ρ); −Σ To[c][i][b] To[c][k][b] (other spin).
	for c := 0; c < v0; c++ {
		tc := gen(na[0], v0, ts[c*na[0]*v0:])
		gemm(blas.NoTrans, blas.Trans, -0.5*css, tc, tc, 1, gen(na[0], na[0], a.poo[0]))
		oc := gen(na[1], v1, to[c*na[1]*v1:])
		gemm(blas.NoTrans, blas.Trans, -cos, oc, oc, 1, gen(na[1], na[1], a.poo[1]))
	}
	// Term 1: Q[c][i][σ] = Σ_b T[c][i][b] C_v[σ][b]; Z[i][λ] += 2 Σ_c Q_c M_c.
	cv0 := sub(p.spin[sp[0]].C, p.spin[sp[0]].nocc, p.nmo(sp[0]))
	cv1 := sub(p.spin[sp[1]].C, p.spin[sp[1]].nocc, p.nmo(sp[1]))
	q0 := make([]float64, v0*na[0]*n)
	q1 := make([]float64, v0*na[1]*n)
	gemm(blas.NoTrans, blas.Trans, css, gen(v0*na[0], v0, ts), cv0, 0, gen(v0*na[0], n, q0))
	gemm(blas.NoTrans, blas.Trans, cos, gen(v0*na[1], v1, to), cv1, 0, gen(v0*na[1], n, q1))
	for c := 0; c < v0; c++ {
		unpack(bj[(cOff+c)*npair:(cOff+c+1)*npair], n, m)
		mm := gen(n, n, m)
		gemm(blas.NoTrans, blas.NoTrans, 2, gen(na[0], n, q0[c*na[0]*n:]), mm, 1, gen(na[0], n, a.z[0]))
		gemm(blas.NoTrans, blas.NoTrans, 2, gen(na[1], n, q1[c*na[1]*n:]), mm, 1, gen(na[1], n, a.z[1]))
	}
	// Term 2 (target ρ): L2[a][i] = −2 Σ_{k,b} (Ts[a][k][b] (j i|k b) + To[a][k][b] (j i|k b)), i all occupied.
	gemm(blas.NoTrans, blas.Trans, -2*css, tsM, gen(or, na[0]*v0, I[0]), 0, gen(v0, or, a.l2[0]))
	gemm(blas.NoTrans, blas.Trans, -2*cos, toM, gen(or, na[1]*v1, I[1]), 1, gen(v0, or, a.l2[0]))
	return a
}
