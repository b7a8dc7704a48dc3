package integral

import (
	"fmt"
	"math"
	"runtime"
	"sync"
	"sync/atomic"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/basis"
)

// Two-electron part of the nuclear gradient, contracted on the fly.
//
// With the Hermite expansion of a primitive pair, Ω_ab = Σ_h E^{ab}_h Λ_h,
//
//	(ab|cd) = 2π^{5/2}/(pq√(p+q)) Σ_{h,h'} E^{ab}_h (−1)^{|h'|} E^{cd}_{h'} R_{h+h'}(α, P−Q).
//
// The derivative with respect to the centre A of function a replaces E^{ab}
// by the coefficients of ∂Ω_ab/∂A_x = (2a G_{a+1x} − a_x G_{a−1x}) G_b,
// which have one more Hermite order; likewise for B. For one shell quartet
// the density factor Γ is first folded into the ket coefficients,
// KΓ^c[f][h'] = Σ_g Γ[f][g] (−1)^{|h'|} E^c[g][h'], then for each bra
// primitive X[f][h] = Σ_c Σ_h' R_{h+h'} KΓ^c[f][h'] is accumulated and the
// six bra-centre derivatives are Σ_{f,h} E'^{a}_{Ax..Bz}[f][h] X[f][h].
// The ket centres follow from the same routine with bra and ket exchanged;
// when one pair sits on a single atom its total derivative is minus that of
// the other pair (translational invariance), so one pass suffices.
//
// Screening: quartets with Q_ij·Q_kl below the Schwarz threshold, or with
// Q_ij·Q_kl·max|Γ| below it, are skipped. Determinism: bra shell pairs are
// dealt to a fixed number of chunks (independent of the thread count),
// each accumulating its own gradient in a fixed order; the chunks are summed
// in index order.

// numGradChunks is the fixed number of work units of a gradient build.
const numGradChunks = 64

// GradientOptions control TwoElectronGradient.
type GradientOptions struct {
	// SchwarzThreshold for dropping quartets; 0 means
	// DefaultSchwarzThreshold (or the threshold of Bounds when given).
	SchwarzThreshold float64
	// Threads; 0 means runtime.NumCPU().
	Threads int
	// Bounds optionally supplies the shell-pair Schwarz bounds of an
	// existing engine for the same basis (e.g. the SCF's); otherwise they
	// are computed.
	Bounds *ERI
}

// dPair holds the Gaussian-product data of shell pair (i, j), i ≥ j, with
// the Hermite coefficients of the final function pairs and of their
// centre derivatives.
type dPair struct {
	i, j         int
	atomA, atomB int
	la, lb       int
	nfa, nfb, nf int
	nh0, nh1     int // nHerm(la+lb), nHerm(la+lb+1)
	np           int
	p            []float64
	px           []float64 // 3 per primitive pair
	kp           []float64 // c_a c_b exp(−μ R_AB²)/p
	e            []float64 // [np][nf][nh0]
	// derivative coefficients in sparse form: for function pair f the
	// Hermite indices uH[uStart[f]:uStart[f+1]] where some primitive and
	// some direction has a nonzero coefficient; edU[k][d][j] the values
	// (d = ∂/∂A_x,y,z, ∂/∂B_x,y,z) at those nu positions.
	uStart []int32
	uH     []int32
	nu     int
	edU    []float64
	// Schwarz-type size estimates of each primitive pair's distribution
	// (b0) and of its centre derivatives (b1):
	// |kp| sqrt(2π^{5/2}/sqrt(2p)) max|E|; b0max is the largest b0.
	b0, b1 []float64
	b0max  float64
}

func makeDPair(mb *basis.Molecular, i, j int, ta, tb []float64) *dPair {
	A, B := &mb.Shells[i], &mb.Shells[j]
	la, lb := A.L, B.L
	dp := &dPair{i: i, j: j, atomA: A.Atom, atomB: B.Atom, la: la, lb: lb, nfa: A.NFunc(), nfb: B.NFunc()}
	dp.nf = dp.nfa * dp.nfb
	dp.nh0, dp.nh1 = nHerm(la+lb), nHerm(la+lb+1)
	ca, cb := basis.CartComponents(la), basis.CartComponents(lb)
	nca, ncb := len(ca), len(cb)
	la1, lb1 := la+1, lb+1
	nt := la1 + lb1 + 1
	ex := make([][]float64, 3)
	for d := range ex {
		ex[d] = make([]float64, (la1+1)*(lb1+1)*nt)
	}
	E := func(d, i, j int) []float64 {
		if i < 0 || j < 0 {
			return nil
		}
		o := (i*(lb1+1) + j) * nt
		return ex[d][o : o+nt]
	}
	cart0 := make([]float64, nca*ncb*dp.nh0)
	cartD := make([]float64, 6*nca*ncb*dp.nh1)
	var e0, eA, eB [3][]float64
	for d := 0; d < 3; d++ {
		e0[d] = make([]float64, nt)
		eA[d] = make([]float64, nt)
		eB[d] = make([]float64, nt)
	}
	ab2 := dist2(A.Centre, B.Centre)
	var ed []float64 // dense [np][6][nf][nh1]
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
				eCoef1D(la1, lb1, p, P[d]-A.Centre[d], P[d]-B.Centre[d], ex[d])
			}
			for k := range cart0 {
				cart0[k] = 0
			}
			for k := range cartD {
				cartD[k] = 0
			}
			for ia, x := range ca {
				for ib, y := range cb {
					q := ia*ncb + ib
					for d := 0; d < 3; d++ {
						i, j := x[d], y[d]
						e, eu, ev := E(d, i, j), E(d, i+1, j), E(d, i, j+1)
						for t := 0; t < nt; t++ {
							e0[d][t] = e[t]
							eA[d][t] = 2 * a * eu[t]
							eB[d][t] = 2 * b * ev[t]
						}
						if i > 0 {
							for t, v := range E(d, i-1, j) {
								eA[d][t] -= float64(i) * v
							}
						}
						if j > 0 {
							for t, v := range E(d, i, j-1) {
								eB[d][t] -= float64(j) * v
							}
						}
					}
					dst := cart0[q*dp.nh0:]
					for t := 0; t <= x[0]+y[0]; t++ {
						for u := 0; u <= x[1]+y[1]; u++ {
							for v := 0; v <= x[2]+y[2]; v++ {
								dst[herm.idx[t][u][v]] = e0[0][t] * e0[1][u] * e0[2][v]
							}
						}
					}
					for t := 0; t <= x[0]+y[0]+1; t++ {
						for u := 0; u <= x[1]+y[1]+1; u++ {
							for v := 0; v <= x[2]+y[2]+1; v++ {
								if t+u+v > la+lb+1 {
									continue
								}
								h := int(herm.idx[t][u][v])
								vals := [6]float64{
									eA[0][t] * e0[1][u] * e0[2][v], e0[0][t] * eA[1][u] * e0[2][v], e0[0][t] * e0[1][u] * eA[2][v],
									eB[0][t] * e0[1][u] * e0[2][v], e0[0][t] * eB[1][u] * e0[2][v], e0[0][t] * e0[1][u] * eB[2][v],
								}
								for k, val := range vals {
									cartD[(k*nca*ncb+q)*dp.nh1+h] = val
								}
							}
						}
					}
				}
			}
			fin := transformHerm(ta, dp.nfa, nca, tb, dp.nfb, ncb, cart0, dp.nh0)
			dp.e = append(dp.e, fin...)
			m0, m1 := 0.0, 0.0
			for _, v := range fin {
				m0 = math.Max(m0, math.Abs(v))
			}
			for k := 0; k < 6; k++ {
				blk := cartD[k*nca*ncb*dp.nh1 : (k+1)*nca*ncb*dp.nh1]
				fd := transformHerm(ta, dp.nfa, nca, tb, dp.nfb, ncb, blk, dp.nh1)
				for _, v := range fd {
					m1 = math.Max(m1, math.Abs(v))
				}
				ed = append(ed, fd...)
			}
			sz := math.Abs(K/p) * math.Sqrt(twoPi52/math.Sqrt(2*p))
			dp.b0 = append(dp.b0, sz*m0)
			dp.b1 = append(dp.b1, sz*m1)
			dp.b0max = math.Max(dp.b0max, sz*m0)
			dp.p = append(dp.p, p)
			dp.px = append(dp.px, P[0], P[1], P[2])
			dp.kp = append(dp.kp, K/p)
			dp.np++
		}
	}
	makeSparseDeriv(dp, ed)
	return dp
}

// makeSparseDeriv keeps, per function pair, the Hermite indices where a
// derivative coefficient is nonzero for some primitive and direction.
func makeSparseDeriv(dp *dPair, ed []float64) {
	nf, nh := dp.nf, dp.nh1
	dp.uStart = make([]int32, nf+1)
	for f := 0; f < nf; f++ {
		for h := 0; h < nh; h++ {
			nz := false
			for k := 0; k < dp.np && !nz; k++ {
				for d := 0; d < 6; d++ {
					if ed[((k*6+d)*nf+f)*nh+h] != 0 {
						nz = true
						break
					}
				}
			}
			if nz {
				dp.uH = append(dp.uH, int32(h))
			}
		}
		dp.uStart[f+1] = int32(len(dp.uH))
	}
	dp.nu = len(dp.uH)
	dp.edU = make([]float64, dp.np*6*dp.nu)
	for k := 0; k < dp.np; k++ {
		for d := 0; d < 6; d++ {
			dst := dp.edU[(k*6+d)*dp.nu : (k*6+d+1)*dp.nu]
			for f := 0; f < nf; f++ {
				for j := dp.uStart[f]; j < dp.uStart[f+1]; j++ {
					dst[j] = ed[((k*6+d)*nf+f)*nh+int(dp.uH[j])]
				}
			}
		}
	}
}

// transformHerm takes Cartesian Hermite coefficients [nca·ncb][nh] to the
// final functions [nfa·nfb][nh].
func transformHerm(ta []float64, nfa, nca int, tb []float64, nfb, ncb int, cart []float64, nh int) []float64 {
	half := make([]float64, nca*nfb*nh)
	for ia := 0; ia < nca; ia++ {
		for fb := 0; fb < nfb; fb++ {
			dst := half[(ia*nfb+fb)*nh : (ia*nfb+fb+1)*nh]
			for ib := 0; ib < ncb; ib++ {
				c := tb[fb*ncb+ib]
				if c == 0 {
					continue
				}
				src := cart[(ia*ncb+ib)*nh : (ia*ncb+ib+1)*nh]
				for h := range dst {
					dst[h] += c * src[h]
				}
			}
		}
	}
	out := make([]float64, nfa*nfb*nh)
	for fa := 0; fa < nfa; fa++ {
		for ia := 0; ia < nca; ia++ {
			c := ta[fa*nca+ia]
			if c == 0 {
				continue
			}
			for fb := 0; fb < nfb; fb++ {
				dst := out[(fa*nfb+fb)*nh : (fa*nfb+fb+1)*nh]
				src := half[(ia*nfb+fb)*nh:]
				for h := range dst {
					dst[h] += c * src[h]
				}
			}
		}
	}
	return out
}

// gradWork is one worker's scratch space.
type gradWork struct {
	kg, x, g, gt []float64
	f, r, tmp    []float64
}

func grow(b []float64, n int) []float64 {
	if cap(b) < n {
		return make([]float64, n)
	}
	return b[:n]
}

// primGradThreshold drops a primitive quartet of a gradient pass when
// b1(bra) · b0(ket) · Σ|Γ| is below it.
const primGradThreshold = 1e-14

// sideGrad returns the derivatives of Σ Γ[f][g] (f∈P | g∈Q) with respect
// to the two centres of P (A x, y, z, then B x, y, z); gabs is Σ|Γ|.
func sideGrad(P, Q *dPair, G []float64, gabs float64, w *gradWork) [6]float64 {
	var out [6]float64
	if P.np == 0 || Q.np == 0 {
		return out
	}
	nf, ng := P.nf, Q.nf
	nhq := Q.nh0
	L := P.la + P.lb + Q.la + Q.lb + 1
	// KΓ^c[f][h'] = Σ_g Γ[f][g] (−1)^{|h'|} E^c[g][h']
	w.kg = grow(w.kg, Q.np*nf*nhq)
	kg := w.kg
	for k := range kg {
		kg[k] = 0
	}
	sign := herm.sign
	for c := 0; c < Q.np; c++ {
		ec := Q.e[c*ng*nhq : (c+1)*ng*nhq]
		kc := kg[c*nf*nhq : (c+1)*nf*nhq]
		for f := 0; f < nf; f++ {
			dst := kc[f*nhq : (f+1)*nhq]
			for g := 0; g < ng; g++ {
				gv := G[f*ng+g]
				if gv == 0 {
					continue
				}
				src := ec[g*nhq : (g+1)*nhq]
				for h, v := range src {
					dst[h] += gv * v
				}
			}
		}
		for f := 0; f < nf; f++ {
			dst := kc[f*nhq : (f+1)*nhq]
			for h := range dst {
				dst[h] *= sign[h]
			}
		}
	}
	// X[j] for the sparse positions (f, uH[j]) of the bra
	nu := P.nu
	w.x = grow(w.x, nu)
	x := w.x
	nhr := nHerm(L)
	w.r, w.tmp = grow(w.r, nhr), grow(w.tmp, nhr)
	w.f = grow(w.f, L+1)
	r, tmp, fb := w.r, w.tmp, w.f
	sum, nph := herm.sum, herm.nPairH
	uS, uH := P.uStart, P.uH
	for a := 0; a < P.np; a++ {
		ba := P.b1[a] * gabs
		if ba*Q.b0max < primGradThreshold {
			continue
		}
		p := P.p[a]
		pa := P.px[3*a : 3*a+3]
		for k := range x {
			x[k] = 0
		}
		for c := 0; c < Q.np; c++ {
			if ba*Q.b0[c] < primGradThreshold {
				continue
			}
			q := Q.p[c]
			qc := Q.px[3*c : 3*c+3]
			pq := [3]float64{pa[0] - qc[0], pa[1] - qc[1], pa[2] - qc[2]}
			alpha := p * q / (p + q)
			boys(L, alpha*(pq[0]*pq[0]+pq[1]*pq[1]+pq[2]*pq[2]), fb)
			pref := twoPi52 * P.kp[a] * Q.kp[c] / math.Sqrt(p+q)
			hermiteR(L, alpha, pq, fb, pref, r, tmp)
			kc := kg[c*nf*nhq : (c+1)*nf*nhq]
			if nhq == 1 {
				// s–s ket: one Hermite term
				for f := 0; f < nf; f++ {
					v := kc[f]
					for j := uS[f]; j < uS[f+1]; j++ {
						x[j] += r[sum[int(uH[j])*nph]] * v
					}
				}
				continue
			}
			for f := 0; f < nf; f++ {
				kr := kc[f*nhq : (f+1)*nhq]
				for j := uS[f]; j < uS[f+1]; j++ {
					base := sum[int(uH[j])*nph : int(uH[j])*nph+nhq]
					s := 0.0
					for k, hb := range base {
						s += r[hb] * kr[k]
					}
					x[j] += s
				}
			}
		}
		ed := P.edU[a*6*nu : (a+1)*6*nu]
		for d := 0; d < 6; d++ {
			blk := ed[d*nu : (d+1)*nu]
			s := 0.0
			for k, v := range blk {
				s += v * x[k]
			}
			out[d] += s
		}
	}
	return out
}

// TwoElectronGradient returns the 3·natoms vector Σ_μνλσ ∂(μν|λσ)/∂R Γ_μνλσ
// with
//
//	Γ_μνλσ = ½ cJ D_μν D_λσ − ½ cK Σ_σ Dσ_μλ Dσ_νσ,   D = Dα + Dβ,
//
// the derivative of the two-electron energy ½ cJ tr(D J[D]) −
// ½ cK Σσ tr(Dσ K[Dσ]) at fixed densities. For a restricted density pass
// Dα = Dβ = D/2.
func TwoElectronGradient(mb *basis.Molecular, Da, Db *mat.SymDense, coulomb, exchange float64, natoms int, opt GradientOptions) ([]float64, error) {
	if mb == nil || len(mb.Shells) == 0 {
		return nil, fmt.Errorf("integral: two-electron gradient: the basis has no shells")
	}
	n := mb.NBasis
	if Da == nil || Db == nil || Da.SymmetricDim() != n || Db.SymmetricDim() != n {
		return nil, fmt.Errorf("integral: two-electron gradient: density matrices missing or not %d×%d", n, n)
	}
	for i, sh := range mb.Shells {
		if sh.L > MaxL {
			return nil, fmt.Errorf("integral: two-electron gradient: shell %d has angular momentum %d; derivatives go up to l = %d", i, sh.L, MaxL)
		}
		if sh.Atom < 0 || sh.Atom >= natoms {
			return nil, fmt.Errorf("integral: two-electron gradient: shell %d sits on atom %d of %d", i, sh.Atom, natoms)
		}
	}
	if opt.SchwarzThreshold < 0 || math.IsNaN(opt.SchwarzThreshold) {
		return nil, fmt.Errorf("integral: two-electron gradient: Schwarz threshold %g is negative or not a number", opt.SchwarzThreshold)
	}
	threads := opt.Threads
	if threads <= 0 {
		threads = runtime.NumCPU()
	}
	bounds := opt.Bounds
	if bounds != nil && bounds.mb.NBasis != n {
		return nil, fmt.Errorf("integral: two-electron gradient: the bounds engine belongs to a basis of %d functions, not %d", bounds.mb.NBasis, n)
	}
	thr := opt.SchwarzThreshold
	if bounds == nil {
		var err error
		bounds, err = NewERI(mb, Options{SchwarzThreshold: thr, Threads: threads})
		if err != nil {
			return nil, err
		}
	}
	if thr == 0 {
		thr = bounds.thr
	}
	boysOnce.Do(initBoys)
	ns := len(mb.Shells)
	trans := shellTransforms(mb)
	// shell-pair bounds first: pairs that can never pass the Schwarz test
	// are not prepared (their derivative data would dominate the memory)
	npair := ns * (ns + 1) / 2
	q := make([]float64, npair)
	qmax := 0.0
	for i := 0; i < ns; i++ {
		for j := 0; j <= i; j++ {
			k := i*(i+1)/2 + j
			q[k] = bounds.Schwarz(i, j)
			qmax = math.Max(qmax, q[k])
		}
	}
	pairs := make([]*dPair, npair)
	{
		var next atomic.Int64
		var wg sync.WaitGroup
		for t := 0; t < threads; t++ {
			wg.Add(1)
			go func() {
				defer wg.Done()
				for {
					i := int(next.Add(1) - 1)
					if i >= ns {
						return
					}
					for j := 0; j <= i; j++ {
						k := i*(i+1)/2 + j
						if q[k]*qmax >= thr {
							pairs[k] = makeDPair(mb, i, j, trans[i], trans[j])
						}
					}
				}
			}()
		}
		wg.Wait()
	}
	da, db := denseOf(Da), denseOf(Db)
	dt := make([]float64, n*n)
	for k := range dt {
		dt[k] = da[k] + db[k]
	}
	acc := make([][]float64, numGradChunks)
	var next atomic.Int64
	var wg sync.WaitGroup
	for t := 0; t < min(threads, numGradChunks); t++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			w := &gradWork{}
			for {
				c := int(next.Add(1) - 1)
				if c >= numGradChunks {
					return
				}
				g := make([]float64, 3*natoms)
				// the chunk's bra pairs, largest index (most ket pairs) first
				for k := len(pairs) - 1 - c; k >= 0; k -= numGradChunks {
					if pairs[k] == nil {
						continue
					}
					for l := 0; l <= k; l++ {
						if pairs[l] == nil || q[k]*q[l] < thr {
							continue
						}
						quartetGrad(mb, pairs[k], pairs[l], k == l, q[k]*q[l], thr, coulomb, exchange, dt, da, db, n, w, g)
					}
				}
				acc[c] = g
			}
		}()
	}
	wg.Wait()
	out := make([]float64, 3*natoms)
	for _, g := range acc {
		for k, v := range g {
			out[k] += v
		}
	}
	return out, nil
}

func denseOf(m *mat.SymDense) []float64 {
	n := m.SymmetricDim()
	out := make([]float64, n*n)
	for i := 0; i < n; i++ {
		for j := i; j < n; j++ {
			v := m.At(i, j)
			out[i*n+j], out[j*n+i] = v, v
		}
	}
	return out
}

// quartetGrad adds the gradient contribution of the unique shell quartet
// (P|Q), P ≥ Q, to g.
func quartetGrad(mb *basis.Molecular, P, Q *dPair, same bool, bound, thr, cJ, cK float64, dt, da, db []float64, n int, w *gradWork, g []float64) {
	aA, aB, aC, aD := P.atomA, P.atomB, Q.atomA, Q.atomB
	if aA == aB && aB == aC && aC == aD {
		return
	}
	oi, oj, ok, ol := mb.Offsets[P.i], mb.Offsets[P.j], mb.Offsets[Q.i], mb.Offsets[Q.j]
	deg := 1.0
	if P.i != P.j {
		deg *= 2
	}
	if Q.i != Q.j {
		deg *= 2
	}
	if !same {
		deg *= 2
	}
	hJ, qK := 0.5*cJ*deg, 0.25*cK*deg
	w.g = grow(w.g, P.nf*Q.nf)
	G := w.g
	gmax, gabs := 0.0, 0.0
	for a := 0; a < P.nfa; a++ {
		mu := oi + a
		for b := 0; b < P.nfb; b++ {
			nu := oj + b
			dmn := dt[mu*n+nu]
			row := G[(a*P.nfb+b)*Q.nf:]
			for c := 0; c < Q.nfa; c++ {
				la := ok + c
				for d := 0; d < Q.nfb; d++ {
					si := ol + d
					v := hJ * dmn * dt[la*n+si]
					if cK != 0 {
						v -= qK * (da[mu*n+la]*da[nu*n+si] + da[mu*n+si]*da[nu*n+la] + db[mu*n+la]*db[nu*n+si] + db[mu*n+si]*db[nu*n+la])
					}
					row[c*Q.nfb+d] = v
					gmax = math.Max(gmax, math.Abs(v))
					gabs += math.Abs(v)
				}
			}
		}
	}
	if bound*gmax < thr {
		return
	}
	add := func(atom int, v []float64) {
		for d := 0; d < 3; d++ {
			g[3*atom+d] += v[d]
		}
	}
	ketSide := func() [6]float64 {
		w.gt = grow(w.gt, P.nf*Q.nf)
		gt := w.gt
		for f := 0; f < P.nf; f++ {
			for h := 0; h < Q.nf; h++ {
				gt[h*P.nf+f] = G[f*Q.nf+h]
			}
		}
		return sideGrad(Q, P, gt, gabs, w)
	}
	switch {
	case same:
		// (P|P): Γ is symmetric under bra–ket exchange, so the ket
		// centres contribute what the bra centres do
		b := sideGrad(P, Q, G, gabs, w)
		for k := range b {
			b[k] *= 2
		}
		add(aA, b[:3])
		add(aB, b[3:])
	case aC == aD:
		b := sideGrad(P, Q, G, gabs, w)
		add(aA, b[:3])
		add(aB, b[3:])
		add(aC, []float64{-b[0] - b[3], -b[1] - b[4], -b[2] - b[5]})
	case aA == aB:
		k := ketSide()
		add(aC, k[:3])
		add(aD, k[3:])
		add(aA, []float64{-k[0] - k[3], -k[1] - k[4], -k[2] - k[5]})
	default:
		b := sideGrad(P, Q, G, gabs, w)
		add(aA, b[:3])
		add(aB, b[3:])
		k := ketSide()
		add(aC, k[:3])
		add(aD, k[3:])
	}
}
