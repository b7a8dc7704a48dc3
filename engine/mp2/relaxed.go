package mp2

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/mat"
)

// The relaxed MP2 density (spin orbitals, canonical HF reference, real
// orbitals; i, j, k occupied, a, b, c virtual, t_ij^ab = ⟨ij||ab⟩/D_ij^ab):
//
//	P_ij = −½ Σ_kab t_ik^ab t_jk^ab          P_ab = ½ Σ_ijc t_ij^ac t_ij^bc
//	L_ai = Σ_pq P_pq (⟨pi||qa⟩ + ⟨pa||qi⟩) + Σ_jbc t_ij^bc ⟨aj||bc⟩ − Σ_jkb t_jk^ab ⟨jk||ib⟩
//	Σ_bj [(ε_a − ε_i) δ_ab δ_ij + ⟨aj||ib⟩ + ⟨ab||ij⟩] z_bj = −L_ai,   P_ai = P_ia = z_ai / 2.
//
// Then dE(MP2)/dλ = Σ_pq P_pq V_pq for a one-electron perturbation λV: the
// correction to the SCF density that gives the orbital-relaxed
// properties. (Derivation: the Hylleraas functional is stationary in t,
// so only its explicit dependence on the Fock matrix and integrals
// through the orbital response U counts; oo and vv rotations are
// redundant and the vo response is eliminated by the Z-vector.)
//
// With frozen core orbitals I the rotations between I and the active
// occupied orbitals i are not redundant; they add
// P_Ii = P_iI = L'_Ii / (2(ε_i − ε_I)) with L'_Ii = Σ_jab t_ij^ab ⟨Ij||ab⟩,
// and the second-term sum of L runs over all occupied i (frozen too).
//
// Spin-resolved (σ the spin of a and i, τ the other spin), with the
// same-spin amplitudes T^σσ (antisymmetrised) and the opposite-spin
// amplitudes T^στ_ij^ab = (ia|jb)/D:
//
//	term 1: L1_ai = 2 Σ_jbc∈σ T^σσ_ij^bc (ab|jc) + 2 Σ_{j∈τ,b∈σ,c∈τ} T^στ_ij^bc (ab|jc)
//	term 2: L2_ai = −2 Σ_jkb∈σ T^σσ_jk^ab (ji|kb) − 2 Σ_{j∈σ,k∈τ,b∈τ} T^στ_jk^ab (ji|kb)
//	separable: Σ_pq P_pq(...) = 2 [C_vᵀ (J[Pα + Pβ] − K[Pσ]) C_o]_ai
//
// and the same AO form for the Z-vector product with the symmetrised
// AO matrix of z. Every term is accumulated while the half-transformed
// integrals (j p|λσ) of one occupied j are in memory (pairs.go): term 1
// as an AO vector Z_i(λ) = 2 Σ_jcσ (jc|λσ) Σ_b T_ij^bc C_σb, so that
// L1_pi = Σ_λ C_λp Z_i(λ) for virtual and frozen p alike. Which spin's
// batch computes which term: same-spin terms in their own spin; the
// opposite-spin P_vv and term 2 in the batch of the target spin, the
// opposite-spin P_oo and term 1 in the batch of the other spin. Each term
// is thus counted once; for RHF only alpha batches run and the mirror
// image of their other-spin contributions is the missing beta-batch part.

// targets combines the batch accumulators into per-spin totals.
func (p *problem) targets(acc [2]*accum) (pvv, poo, z, l2 [2][]float64) {
	if p.restricted {
		a := acc[0]
		s := func(x, y []float64) []float64 {
			out := make([]float64, len(x))
			for i := range x {
				out[i] = x[i] + y[i]
			}
			return out
		}
		pvv[0], poo[0], z[0], l2[0] = s(a.pvv[0], a.pvv[1]), s(a.poo[0], a.poo[1]), s(a.z[0], a.z[1]), s(a.l2[0], a.l2[1])
		pvv[1], poo[1], z[1], l2[1] = pvv[0], poo[0], z[0], l2[0]
		return
	}
	for s := 0; s < 2; s++ {
		o := 1 - s
		sum := func(x, y []float64) []float64 {
			out := make([]float64, len(x))
			copy(out, x)
			if y != nil {
				for i := range y {
					out[i] += y[i]
				}
			}
			return out
		}
		pvv[s] = sum(acc[s].pvv[0], acc[o].pvv[1])
		poo[s] = sum(acc[s].poo[0], acc[o].poo[1])
		z[s] = sum(acc[s].z[0], acc[o].z[1])
		l2[s] = sum(acc[s].l2[0], acc[o].l2[1])
	}
	return
}

// zResult is the outcome of the relaxed-density step.
type zResult struct {
	dP         [2]*mat.SymDense // AO correction to the SCF density, per spin
	iterations int
	residual   float64
}

// relaxedDensity assembles P, the Lagrangian, solves the Z-vector
// equations and returns the AO density correction of each spin.
func (p *problem) relaxedDensity(acc [2]*accum, tol float64, maxIter int) (*zResult, error) {
	pvv, poo, zao, l2 := p.targets(acc)
	n := p.lay.n
	nspin := 2
	if p.restricted {
		nspin = 1
	}
	var pmo [2]*mat.Dense
	var lag [2][]float64
	for s := 0; s < nspin; s++ {
		sr := p.spin[s]
		nmo, no, f, na, nv := p.nmo(s), sr.nocc, p.frozen, p.nact(s), p.nvir(s)
		P := mat.NewDense(nmo, nmo, nil)
		for i := 0; i < na; i++ {
			for k := 0; k < na; k++ {
				P.Set(f+i, f+k, poo[s][i*na+k])
			}
		}
		for a := 0; a < nv; a++ {
			for b := 0; b < nv; b++ {
				P.Set(no+a, no+b, pvv[s][a*nv+b])
			}
		}
		// L1[p][i] = Σ_λ C[λ][p] Z[i][λ]
		l1 := make([]float64, nmo*na)
		if na > 0 {
			gemm(blas.Trans, blas.Trans, 1, sub(sr.C, 0, nmo), gen(na, n, zao[s]), 0, gen(nmo, na, l1))
		}
		for I := 0; I < f; I++ {
			for i := 0; i < na; i++ {
				d := sr.eps[f+i] - sr.eps[I]
				if math.Abs(d) < 1e-8 {
					return nil, fmt.Errorf("mp2: frozen orbital %d and active orbital %d are degenerate (%.3g Eh apart); the frozen-core relaxed density is undefined", I+1, f+i+1, d)
				}
				v := l1[I*na+i] / (2 * d)
				P.Set(I, f+i, v)
				P.Set(f+i, I, v)
			}
		}
		pmo[s] = P
		L := make([]float64, nv*no)
		copy(L, l2[s])
		for a := 0; a < nv; a++ {
			for i := 0; i < na; i++ {
				L[a*no+f+i] += l1[(no+a)*na+i]
			}
		}
		lag[s] = L
	}
	if p.restricted {
		pmo[1], lag[1] = pmo[0], lag[0]
	}
	var pao [2]*mat.SymDense
	for s := 0; s < nspin; s++ {
		pao[s] = toAO(p.spin[s].C, pmo[s])
	}
	g := p.fockLike(pao, nspin)
	for s := 0; s < nspin; s++ {
		sr := p.spin[s]
		no, nv := sr.nocc, p.nvir(s)
		x := vo(sr.C, g[s], no)
		for k := 0; k < nv*no; k++ {
			lag[s][k] += 2 * x[k]
		}
	}
	z, it, res, err := p.solveZ(lag, nspin, tol, maxIter)
	if err != nil {
		return nil, err
	}
	out := &zResult{iterations: it, residual: res}
	for s := 0; s < nspin; s++ {
		P := pmo[s]
		no, nv := p.spin[s].nocc, p.nvir(s)
		for a := 0; a < nv; a++ {
			for i := 0; i < no; i++ {
				v := 0.5 * z[s][a*no+i]
				P.Set(no+a, i, v)
				P.Set(i, no+a, v)
			}
		}
		out.dP[s] = toAO(p.spin[s].C, P)
	}
	if p.restricted {
		out.dP[1] = out.dP[0]
	}
	return out, nil
}

// toAO is C P Cᵀ, symmetrised.
func toAO(C *mat.Dense, P mat.Matrix) *mat.SymDense {
	var t, u mat.Dense
	t.Mul(C, P)
	u.Mul(&t, C.T())
	n, _ := u.Dims()
	s := mat.NewSymDense(n, nil)
	for i := 0; i < n; i++ {
		for j := 0; j <= i; j++ {
			s.SetSym(i, j, 0.5*(u.At(i, j)+u.At(j, i)))
		}
	}
	return s
}

// fockLike returns G^σ = J[Dα + Dβ] − K[Dσ] (restricted: 2J[D] − K[D]).
func (p *problem) fockLike(d [2]*mat.SymDense, nspin int) [2]*mat.SymDense {
	J, K := p.eri.JK(d[:nspin], true)
	var g [2]*mat.SymDense
	n := p.lay.n
	for s := 0; s < nspin; s++ {
		gs := mat.NewSymDense(n, nil)
		for i := 0; i < n; i++ {
			for j := 0; j <= i; j++ {
				var v float64
				if nspin == 1 {
					v = 2*J[0].At(i, j) - K[0].At(i, j)
				} else {
					v = J[0].At(i, j) + J[1].At(i, j) - K[s].At(i, j)
				}
				gs.SetSym(i, j, v)
			}
		}
		g[s] = gs
	}
	return g
}

// vo returns (C_vᵀ G C_o)[a][i] as a v × o slice.
func vo(C *mat.Dense, G *mat.SymDense, no int) []float64 {
	n, nmo := C.Dims()
	nv := nmo - no
	graw := G.RawSymmetric()
	full := make([]float64, n*n)
	for i := 0; i < n; i++ {
		for j := i; j < n; j++ {
			v := graw.Data[i*graw.Stride+j]
			full[i*n+j] = v
			full[j*n+i] = v
		}
	}
	tmp := make([]float64, n*no)
	gemm(blas.NoTrans, blas.NoTrans, 1, gen(n, n, full), sub(C, 0, no), 0, gen(n, no, tmp))
	out := make([]float64, nv*no)
	gemm(blas.Trans, blas.NoTrans, 1, sub(C, no, nmo), gen(n, no, tmp), 0, gen(nv, no, out))
	return out
}

// applyA is the Z-vector (orbital Hessian) product on z (per spin v × o).
func (p *problem) applyA(z [2][]float64, nspin int) [2][]float64 {
	var d [2]*mat.SymDense
	n := p.lay.n
	for s := 0; s < nspin; s++ {
		sr := p.spin[s]
		no := sr.nocc
		nmo := p.nmo(s)
		nv := nmo - no
		// X = C_v z C_oᵀ
		tmp := make([]float64, n*no)
		gemm(blas.NoTrans, blas.NoTrans, 1, sub(sr.C, no, nmo), gen(nv, no, z[s]), 0, gen(n, no, tmp))
		x := make([]float64, n*n)
		gemm(blas.NoTrans, blas.Trans, 1, gen(n, no, tmp), sub(sr.C, 0, no), 0, gen(n, n, x))
		ds := mat.NewSymDense(n, nil)
		for i := 0; i < n; i++ {
			for j := 0; j <= i; j++ {
				ds.SetSym(i, j, 0.5*(x[i*n+j]+x[j*n+i]))
			}
		}
		d[s] = ds
	}
	g := p.fockLike(d, nspin)
	var out [2][]float64
	for s := 0; s < nspin; s++ {
		sr := p.spin[s]
		no := sr.nocc
		x := vo(sr.C, g[s], no)
		nv := p.nvir(s)
		for a := 0; a < nv; a++ {
			for i := 0; i < no; i++ {
				k := a*no + i
				x[k] = 2*x[k] + (sr.eps[no+a]-sr.eps[i])*z[s][k]
			}
		}
		out[s] = x
	}
	return out
}

// solveZ solves A z = −L by conjugate gradients preconditioned with the
// orbital-energy differences. Convergence: the largest residual element
// below tol.
func (p *problem) solveZ(lag [2][]float64, nspin int, tol float64, maxIter int) ([2][]float64, int, float64, error) {
	var z, r, d, pc [2][]float64
	dot := func(x, y [2][]float64) float64 {
		s := 0.0
		for sp := 0; sp < nspin; sp++ {
			s += blas64.Dot(blas64.Vector{N: len(x[sp]), Inc: 1, Data: x[sp]}, blas64.Vector{N: len(y[sp]), Inc: 1, Data: y[sp]})
		}
		return s
	}
	maxAbs := func(x [2][]float64) float64 {
		m := 0.0
		for sp := 0; sp < nspin; sp++ {
			for _, v := range x[sp] {
				m = math.Max(m, math.Abs(v))
			}
		}
		return m
	}
	for s := 0; s < nspin; s++ {
		no, nv := p.spin[s].nocc, p.nvir(s)
		pc[s] = make([]float64, nv*no)
		z[s] = make([]float64, nv*no)
		r[s] = make([]float64, nv*no)
		for a := 0; a < nv; a++ {
			for i := 0; i < no; i++ {
				de := p.spin[s].eps[no+a] - p.spin[s].eps[i]
				if de <= 0 {
					return z, 0, 0, fmt.Errorf("mp2: virtual orbital %d lies below occupied orbital %d; the reference is not an aufbau determinant and the Z-vector equations are not solved", no+a+1, i+1)
				}
				pc[s][a*no+i] = 1 / de
			}
		}
		for k := range r[s] {
			r[s][k] = -lag[s][k]
			z[s][k] = pc[s][k] * r[s][k]
		}
	}
	// r = −L − A z0
	az := p.applyA(z, nspin)
	for s := 0; s < nspin; s++ {
		for k := range r[s] {
			r[s][k] -= az[s][k]
		}
	}
	var y [2][]float64
	for s := 0; s < nspin; s++ {
		y[s] = make([]float64, len(r[s]))
		d[s] = make([]float64, len(r[s]))
		for k := range r[s] {
			y[s][k] = pc[s][k] * r[s][k]
			d[s][k] = y[s][k]
		}
	}
	ry := dot(r, y)
	res := maxAbs(r)
	for it := 1; it <= maxIter; it++ {
		if res < tol {
			return z, it - 1, res, nil
		}
		ad := p.applyA(d, nspin)
		alpha := ry / dot(d, ad)
		for s := 0; s < nspin; s++ {
			for k := range z[s] {
				z[s][k] += alpha * d[s][k]
				r[s][k] -= alpha * ad[s][k]
			}
		}
		res = maxAbs(r)
		for s := 0; s < nspin; s++ {
			for k := range r[s] {
				y[s][k] = pc[s][k] * r[s][k]
			}
		}
		ry2 := dot(r, y)
		beta := ry2 / ry
		ry = ry2
		for s := 0; s < nspin; s++ {
			for k := range d[s] {
				d[s][k] = y[s][k] + beta*d[s][k]
			}
		}
	}
	if res < tol {
		return z, maxIter, res, nil
	}
	return z, maxIter, res, fmt.Errorf("mp2: Z-vector equations not converged in %d iterations (largest residual %.2e, wanted %.0e)", maxIter, res, tol)
}
