package integral

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/basis"
)

// First derivatives of the one-electron integrals with respect to nuclear
// coordinates.
//
// A primitive Cartesian Gaussian x_A^i e^{−a x_A²} obeys
//
//	∂/∂A_x [x_A^i e^{−a x_A²}] = 2a x_A^{i+1} e^{−a x_A²} − i x_A^{i−1} e^{−a x_A²},
//
// so the derivative of an integral with respect to the centre of one of its
// functions is a combination of integrals with that function's angular
// momentum raised and lowered by one, formed here primitive by primitive
// from the same one-dimensional overlaps and Hermite coefficients as the
// integrals themselves. Overlap and kinetic-energy integrals depend on
// A − B only, so their B derivative is minus the A derivative. The
// attraction to one point charge C depends on A − C and B − C only, so its
// derivative with respect to C (the operator's own centre, the
// Hellmann–Feynman term) is minus the sum of the A and B derivatives.

// OneElectronDerivs holds ∂S/∂R, ∂T/∂R and ∂V/∂R for one Cartesian
// coordinate R of one atom, as full symmetric matrices in the final basis
// functions. V includes the derivative with respect to the positions of
// the charges that sit on that atom.
type OneElectronDerivs struct {
	S, T, V *mat.SymDense
}

// OneElectronDerivatives returns, for atom atom and directions x, y, z,
// the derivative matrices of the overlap, kinetic-energy and nuclear-
// attraction integrals. chargeAtom[c] names the atom that carries point
// charge c (−1 for a charge that does not move with any atom).
func OneElectronDerivatives(mb *basis.Molecular, charges []PointCharge, chargeAtom []int, atom int) ([3]OneElectronDerivs, error) {
	var out [3]OneElectronDerivs
	if len(chargeAtom) != len(charges) {
		return out, fmt.Errorf("integral: one-electron derivatives: %d charges but %d charge atoms", len(charges), len(chargeAtom))
	}
	n := mb.NBasis
	for d := range out {
		out[d] = OneElectronDerivs{S: mat.NewSymDense(n, nil), T: mat.NewSymDense(n, nil), V: mat.NewSymDense(n, nil)}
	}
	trans := shellTransforms(mb)
	for i := range mb.Shells {
		for j := 0; j <= i; j++ {
			A, B := &mb.Shells[i], &mb.Shells[j]
			involved := A.Atom == atom || B.Atom == atom
			for _, ca := range chargeAtom {
				involved = involved || ca == atom
			}
			if !involved {
				continue
			}
			blk := onePairDerivCart(A, B, charges)
			nfa, nfb := A.NFunc(), B.NFunc()
			nca, ncb := basis.NCart(A.L), basis.NCart(B.L)
			fin := func(x []float64) []float64 { return transformPair(trans[i], nfa, nca, trans[j], nfb, ncb, x) }
			for d := 0; d < 3; d++ {
				s := make([]float64, nfa*nfb)
				t := make([]float64, nfa*nfb)
				v := make([]float64, nfa*nfb)
				add := func(dst []float64, src []float64, f float64) {
					for k := range dst {
						dst[k] += f * src[k]
					}
				}
				if A.Atom == atom {
					add(s, fin(blk.sA[d]), 1)
					add(t, fin(blk.tA[d]), 1)
					add(v, fin(blk.vA[d]), 1)
				}
				if B.Atom == atom {
					add(s, fin(blk.sA[d]), -1)
					add(t, fin(blk.tA[d]), -1)
					add(v, fin(blk.vB[d]), 1)
				}
				for c, ca := range chargeAtom {
					if ca == atom {
						add(v, fin(blk.vC[c][d]), 1)
					}
				}
				for a := 0; a < nfa; a++ {
					for b := 0; b < nfb; b++ {
						mu, nu := mb.Offsets[i]+a, mb.Offsets[j]+b
						if i == j && nu > mu {
							continue
						}
						out[d].S.SetSym(mu, nu, s[a*nfb+b])
						out[d].T.SetSym(mu, nu, t[a*nfb+b])
						out[d].V.SetSym(mu, nu, v[a*nfb+b])
					}
				}
			}
		}
	}
	return out, nil
}

// OneElectronGradient returns the 3·natoms vector
//
//	g_R = Σ_μν P_μν ∂(T + V)_μν/∂R − Σ_μν W_μν ∂S_μν/∂R
//
// for a density P and an energy-weighted density W (either may be nil to
// leave its term out). chargeAtom[c] is the atom carrying charge c (−1 if
// none); the attraction term includes the derivative with respect to the
// charge positions.
func OneElectronGradient(mb *basis.Molecular, P, W *mat.SymDense, charges []PointCharge, chargeAtom []int, natoms int) ([]float64, error) {
	if len(chargeAtom) != len(charges) {
		return nil, fmt.Errorf("integral: one-electron gradient: %d charges but %d charge atoms", len(charges), len(chargeAtom))
	}
	for _, m := range []*mat.SymDense{P, W} {
		if m != nil && m.SymmetricDim() != mb.NBasis {
			return nil, fmt.Errorf("integral: one-electron gradient: matrix is %d×%d, the basis has %d functions", m.SymmetricDim(), m.SymmetricDim(), mb.NBasis)
		}
	}
	for i, sh := range mb.Shells {
		if sh.Atom < 0 || sh.Atom >= natoms {
			return nil, fmt.Errorf("integral: one-electron gradient: shell %d sits on atom %d of %d", i, sh.Atom, natoms)
		}
	}
	for c, ca := range chargeAtom {
		if ca >= natoms {
			return nil, fmt.Errorf("integral: one-electron gradient: charge %d sits on atom %d of %d", c, ca, natoms)
		}
	}
	g := make([]float64, 3*natoms)
	trans := shellTransforms(mb)
	for i := range mb.Shells {
		for j := 0; j <= i; j++ {
			A, B := &mb.Shells[i], &mb.Shells[j]
			nfa, nfb := A.NFunc(), B.NFunc()
			nca, ncb := basis.NCart(A.L), basis.NCart(B.L)
			// Cartesian density blocks: the final-function blocks back-
			// transformed, Tᵀ P T, so that tr(Pfin Xfin) = tr(Pcart Xcart).
			pb := make([]float64, nfa*nfb)
			wb := make([]float64, nfa*nfb)
			f := 2.0
			if i == j {
				f = 1
			}
			for a := 0; a < nfa; a++ {
				for b := 0; b < nfb; b++ {
					mu, nu := mb.Offsets[i]+a, mb.Offsets[j]+b
					if P != nil {
						pb[a*nfb+b] = f * P.At(mu, nu)
					}
					if W != nil {
						wb[a*nfb+b] = f * W.At(mu, nu)
					}
				}
			}
			pc := backTransform(trans[i], nfa, nca, trans[j], nfb, ncb, pb)
			wc := backTransform(trans[i], nfa, nca, trans[j], nfb, ncb, wb)
			blk := onePairDerivCart(A, B, charges)
			dot := func(x, y []float64) float64 {
				s := 0.0
				for k := range x {
					s += x[k] * y[k]
				}
				return s
			}
			for d := 0; d < 3; d++ {
				ab := dot(pc, blk.tA[d]) - dot(wc, blk.sA[d])
				g[3*A.Atom+d] += ab + dot(pc, blk.vA[d])
				g[3*B.Atom+d] += -ab + dot(pc, blk.vB[d])
				for c, ca := range chargeAtom {
					if ca >= 0 {
						g[3*ca+d] += dot(pc, blk.vC[c][d])
					}
				}
			}
		}
	}
	return g, nil
}

func shellTransforms(mb *basis.Molecular) [][]float64 {
	t := make([][]float64, len(mb.Shells))
	for i := range mb.Shells {
		t[i] = shellTransform(&mb.Shells[i])
	}
	return t
}

// backTransform returns T_aᵀ · Y · T_b for a final-function block Y
// (nfa×nfb): the Cartesian block whose contraction with raw Cartesian
// integrals equals that of Y with the final-function integrals.
func backTransform(ta []float64, nfa, nca int, tb []float64, nfb, ncb int, y []float64) []float64 {
	tmp := make([]float64, nfa*ncb)
	for f := 0; f < nfa; f++ {
		for g := 0; g < nfb; g++ {
			v := y[f*nfb+g]
			if v == 0 {
				continue
			}
			for j := 0; j < ncb; j++ {
				tmp[f*ncb+j] += v * tb[g*ncb+j]
			}
		}
	}
	out := make([]float64, nca*ncb)
	for f := 0; f < nfa; f++ {
		for i := 0; i < nca; i++ {
			a := ta[f*nca+i]
			if a == 0 {
				continue
			}
			for j := 0; j < ncb; j++ {
				out[i*ncb+j] += a * tmp[f*ncb+j]
			}
		}
	}
	return out
}

// oneDerivBlocks are raw Cartesian derivative blocks (nca×ncb) of one
// shell pair: overlap and kinetic energy with respect to A (the B
// derivative is the negative), attraction with respect to A and B summed
// over the charges, and with respect to each charge's position.
type oneDerivBlocks struct {
	sA, tA, vA, vB [3][]float64
	vC             [][3][]float64
}

func onePairDerivCart(A, B *basis.Shell, charges []PointCharge) *oneDerivBlocks {
	la, lb := A.L, B.L
	ca, cb := basis.CartComponents(la), basis.CartComponents(lb)
	nca, ncb := len(ca), len(cb)
	nb := nca * ncb
	out := &oneDerivBlocks{vC: make([][3][]float64, len(charges))}
	for d := 0; d < 3; d++ {
		out.sA[d] = make([]float64, nb)
		out.tA[d] = make([]float64, nb)
		out.vA[d] = make([]float64, nb)
		out.vB[d] = make([]float64, nb)
		for c := range charges {
			out.vC[c][d] = make([]float64, nb)
		}
	}
	boysOnce.Do(initBoys)
	// Hermite tables with i ≤ la+1 and j ≤ lb+2 (kinetic energy raises j by
	// two; the A derivative raises i by one; the attraction's B derivative
	// raises j by one).
	la1, lb2 := la+1, lb+2
	nt := la1 + lb2 + 1
	ex := make([][]float64, 3)
	for d := range ex {
		ex[d] = make([]float64, (la1+1)*(lb2+1)*nt)
	}
	s1 := make([][]float64, 3)
	for d := range s1 {
		s1[d] = make([]float64, (la1+1)*(lb2+1))
	}
	L := la + lb + 1
	nh := nHerm(L)
	r := make([]float64, nh)
	tmp := make([]float64, nh)
	fb := make([]float64, L+1)
	// per-direction derivative Hermite coefficients of one component pair
	var dA, dB, e0 [3][]float64
	for d := 0; d < 3; d++ {
		dA[d] = make([]float64, L+1)
		dB[d] = make([]float64, L+1)
		e0[d] = make([]float64, L+1)
	}
	ab2 := dist2(A.Centre, B.Centre)
	for pa, a := range A.Exponents {
		for pb, b := range B.Exponents {
			p := a + b
			mu := a * b / p
			K := math.Exp(-mu*ab2) * A.Coefs[pa] * B.Coefs[pb]
			if math.Abs(K)*math.Pow(math.Pi/p, 1.5) < PrimitiveThreshold {
				continue
			}
			var P [3]float64
			for d := 0; d < 3; d++ {
				P[d] = (a*A.Centre[d] + b*B.Centre[d]) / p
				eCoef1D(la1, lb2, p, P[d]-A.Centre[d], P[d]-B.Centre[d], ex[d])
				sq := math.Sqrt(math.Pi / p)
				for i := 0; i <= la1; i++ {
					for j := 0; j <= lb2; j++ {
						s1[d][i*(lb2+1)+j] = ex[d][(i*(lb2+1)+j)*nt] * sq
					}
				}
			}
			S := func(d, i, j int) float64 {
				if i < 0 || j < 0 {
					return 0
				}
				return s1[d][i*(lb2+1)+j]
			}
			kin := func(d, i, j int) float64 {
				if i < 0 {
					return 0
				}
				return -2*b*b*S(d, i, j+2) + b*float64(2*j+1)*S(d, i, j) - 0.5*float64(j*(j-1))*S(d, i, j-2)
			}
			dS := func(d, i, j int) float64 { return 2*a*S(d, i+1, j) - float64(i)*S(d, i-1, j) }
			dK := func(d, i, j int) float64 { return 2*a*kin(d, i+1, j) - float64(i)*kin(d, i-1, j) }
			for ia, x := range ca {
				for ib, y := range cb {
					k := ia*ncb + ib
					var s, t, ds, dt [3]float64
					for d := 0; d < 3; d++ {
						s[d] = S(d, x[d], y[d])
						t[d] = kin(d, x[d], y[d])
						ds[d] = dS(d, x[d], y[d])
						dt[d] = dK(d, x[d], y[d])
					}
					out.sA[0][k] += K * ds[0] * s[1] * s[2]
					out.sA[1][k] += K * s[0] * ds[1] * s[2]
					out.sA[2][k] += K * s[0] * s[1] * ds[2]
					out.tA[0][k] += K * (dt[0]*s[1]*s[2] + ds[0]*t[1]*s[2] + ds[0]*s[1]*t[2])
					out.tA[1][k] += K * (t[0]*ds[1]*s[2] + s[0]*dt[1]*s[2] + s[0]*ds[1]*t[2])
					out.tA[2][k] += K * (t[0]*s[1]*ds[2] + s[0]*t[1]*ds[2] + s[0]*s[1]*dt[2])
				}
			}
			if len(charges) == 0 {
				continue
			}
			E := func(d, i, j int) []float64 {
				return ex[d][(i*(lb2+1)+j)*nt : (i*(lb2+1)+j)*nt+nt]
			}
			for c, ch := range charges {
				pc := [3]float64{P[0] - ch.Pos[0], P[1] - ch.Pos[1], P[2] - ch.Pos[2]}
				boys(L, p*(pc[0]*pc[0]+pc[1]*pc[1]+pc[2]*pc[2]), fb)
				hermiteR(L, p, pc, fb, -ch.Charge*2*math.Pi/p*K, r, tmp)
				for ia, x := range ca {
					for ib, y := range cb {
						k := ia*ncb + ib
						var top [3]int
						for d := 0; d < 3; d++ {
							i, j := x[d], y[d]
							top[d] = i + j + 1
							e := E(d, i, j)
							eu := E(d, i+1, j)
							ev := E(d, i, j+1)
							for t := 0; t <= top[d]; t++ {
								e0[d][t] = 0
								if t <= i+j {
									e0[d][t] = e[t]
								}
								dA[d][t] = 2 * a * eu[t]
								dB[d][t] = 2 * b * ev[t]
							}
							if i > 0 {
								el := E(d, i-1, j)
								for t := 0; t < i+j; t++ {
									dA[d][t] -= float64(i) * el[t]
								}
							}
							if j > 0 {
								el := E(d, i, j-1)
								for t := 0; t < i+j; t++ {
									dB[d][t] -= float64(j) * el[t]
								}
							}
						}
						var va, vb [3]float64
						for t := 0; t <= top[0]; t++ {
							for u := 0; u <= top[1]; u++ {
								for v := 0; v <= top[2]; v++ {
									if t+u+v > L {
										continue
									}
									rv := r[herm.idx[t][u][v]]
									va[0] += dA[0][t] * e0[1][u] * e0[2][v] * rv
									va[1] += e0[0][t] * dA[1][u] * e0[2][v] * rv
									va[2] += e0[0][t] * e0[1][u] * dA[2][v] * rv
									vb[0] += dB[0][t] * e0[1][u] * e0[2][v] * rv
									vb[1] += e0[0][t] * dB[1][u] * e0[2][v] * rv
									vb[2] += e0[0][t] * e0[1][u] * dB[2][v] * rv
								}
							}
						}
						for d := 0; d < 3; d++ {
							out.vA[d][k] += va[d]
							out.vB[d][k] += vb[d]
							out.vC[c][d][k] -= va[d] + vb[d]
						}
					}
				}
			}
		}
	}
	return out
}
