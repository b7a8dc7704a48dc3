package dft

import (
	"fmt"
	"math"
	"sync"

	"gonum.org/v1/gonum/mat"
)

// Nuclear gradient of the exchange–correlation energy.
//
// E_xc = Σ_p W_p e(ρ_p, σ_p) on a grid whose points move rigidly with
// their atoms, W_p = ω_p w_G(r_p) with ω_p the atomic quadrature weight and
// w_G = P_G/Σ_B P_B the Becke partition weight of the point's atom G. Its
// derivative with respect to atom A has three parts:
//
//  1. basis functions centred on A (∂φ_μ/∂A = −∇φ_μ):
//     −2 Σ_σ Σ_p W_p Σ_{μ∈A} [ vρσ ∂_xφ_μ Xσ_μ + Gσ · (∇∂_xφ_μ Xσ_μ + ∂_xφ_μ ∇Xσ_μ) ],
//     Xσ_μ = Σ_ν Dσ_μν φ_ν, ∇Xσ_μ = Σ_ν Dσ_μν ∇φ_ν, Gσ the gradient
//     coefficient of the potential (G = 2 vσ ∇ρ unpolarised; Gα = 2 vσαα ∇ρα
//     + vσαβ ∇ρβ polarised);
//  2. the points of A's own grid moving with it: Σ_{p∈A} W_p ∇_r e =
//     Σ_{p∈A} W_p Σ_σ (vρσ ∇ρσ + ∇∇ρσ · Gσ);
//  3. the partition weights: Σ_p ω_p e_p ∂w_G(r_p)/∂A, from the derivatives
//     of Becke's cell functions with the size adjustment, through the atom
//     positions and the point position (B. G. Johnson, P. M. W. Gill and
//     J. A. Pople, J. Chem. Phys. 98, 5612 (1993), from memory).
//
// With all three the result is the exact derivative of the quadrature (so
// it sums to zero over the atoms), apart from the points dropped for
// negligible weight when the grid was built.

// NuclearGradient returns ∂E_xc/∂R (3·natoms, hartree/bohr) at fixed
// density matrices, grid-weight derivatives included. When Da and Db are the
// same matrix the density is restricted (each the half of the total).
func (x *XC) NuclearGradient(Da, Db *mat.SymDense, natoms int) ([]float64, error) {
	if Da == nil || Db == nil {
		return nil, fmt.Errorf("dft: gradient: density matrix missing")
	}
	n := x.nbf
	if Da.SymmetricDim() != n || Db.SymmetricDim() != n {
		return nil, fmt.Errorf("dft: gradient: density matrices are %d×%d and %d×%d, the basis has %d functions", Da.SymmetricDim(), Da.SymmetricDim(), Db.SymmetricDim(), Db.SymmetricDim(), n)
	}
	if len(x.grid.pos) != natoms {
		return nil, fmt.Errorf("dft: gradient: the grid belongs to %d atoms, not %d", len(x.grid.pos), natoms)
	}
	for i, s := range x.shells {
		if s.atom < 0 || s.atom >= natoms {
			return nil, fmt.Errorf("dft: gradient: shell %d sits on atom %d of %d", i, s.atom, natoms)
		}
	}
	restricted := Da == Db
	var da, db []float64
	if restricted {
		da = fullScaled(Da, 2, n)
	} else {
		da, db = fullScaled(Da, 1, n), fullScaled(Db, 1, n)
	}
	nb := len(x.grid.batches)
	acc := make([][]float64, x.nchunk)
	jobs := make(chan int, x.nchunk)
	for c := 0; c < x.nchunk; c++ {
		jobs <- c
	}
	close(jobs)
	var wg sync.WaitGroup
	for t := 0; t < min(x.threads, x.nchunk); t++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			w := &gradWork{}
			for c := range jobs {
				g := make([]float64, 3*natoms)
				for b := c * nb / x.nchunk; b < (c+1)*nb/x.nchunk; b++ {
					x.gradBatch(b, da, db, w, g)
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
	for k, v := range out {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, fmt.Errorf("dft: %s: gradient component %d is not finite", x.fn.def, k)
		}
	}
	return out, nil
}

func fullScaled(d *mat.SymDense, f float64, n int) []float64 {
	out := make([]float64, n*n)
	for i := 0; i < n; i++ {
		for j := i; j < n; j++ {
			v := f * d.At(i, j)
			out[i*n+j], out[j*n+i] = v, v
		}
	}
	return out
}

// gradWork is one worker's scratch space for the gradient.
type gradWork struct {
	phi    []float64
	d1     [3][]float64 // ∇φ
	d2     [6][]float64 // xx, xy, xz, yy, yz, zz
	dloc   []float64
	xs     [2][]float64    // Φ·Dσ
	ys     [2][3][]float64 // ∇Φ·Dσ
	rho    []float64
	sigma  []float64
	e      []float64
	vrho   []float64
	vsigma []float64
	grho   [2][3][]float64
	gcoef  [2][3][]float64
	cart   []float64
	dw     [][3]float64
	bk     []float64
}

func growV(b [][3]float64, n int) [][3]float64 {
	if cap(b) < n {
		return make([][3]float64, n)
	}
	return b[:n]
}

// partitionDeriv returns the Becke weight w = P_G/Σ_B P_B of atom G at
// point r (see beckeWeight) and fills dw[X] with dw/dR_X, the point moving
// with atom G. scratch holds at least 5·nat + 3·nat² values.
func (g *Grid) partitionDeriv(G int, r [3]float64, dw [][3]float64, scratch []float64) float64 {
	nat := len(g.pos)
	dist := scratch[:nat]
	P := scratch[nat : 2*nat]
	uv := scratch[2*nat : 5*nat]
	dl := scratch[5*nat : 5*nat+3*nat*nat] // dl[(B*nat+X)*3+d] = ∂ln P_B/∂R_X,d
	for k := range dl {
		dl[k] = 0
	}
	unit := func(i int) [3]float64 { return [3]float64{uv[3*i], uv[3*i+1], uv[3*i+2]} }
	for i, c := range g.pos {
		dx, dy, dz := r[0]-c[0], r[1]-c[1], r[2]-c[2]
		dist[i] = math.Sqrt(dx*dx + dy*dy + dz*dz)
		uv[3*i], uv[3*i+1], uv[3*i+2] = 0, 0, 0
		if dist[i] > 0 {
			uv[3*i], uv[3*i+1], uv[3*i+2] = dx/dist[i], dy/dist[i], dz/dist[i]
		}
		P[i] = 1
	}
	addv := func(B, X int, f float64, v [3]float64) {
		o := (B*nat + X) * 3
		dl[o] += f * v[0]
		dl[o+1] += f * v[1]
		dl[o+2] += f * v[2]
	}
	for i := 0; i < nat; i++ {
		for j := 0; j < i; j++ {
			ir := g.invR[i*nat+j]
			a := g.aij[i*nat+j]
			mu := (dist[i] - dist[j]) * ir
			nu := mu + a*(1-mu*mu)
			f, df := nu, 1.0
			for k := 0; k < 3; k++ {
				df *= 1.5 * (1 - f*f)
				f = 1.5*f - 0.5*f*f*f
			}
			s := 0.5 * (1 - f)
			P[i] *= s
			P[j] *= 1 - s
			dsdmu := -0.5 * df * (1 - 2*a*mu)
			var e, gi, gj, gr [3]float64
			ui, uj := unit(i), unit(j)
			for d := 0; d < 3; d++ {
				e[d] = (g.pos[i][d] - g.pos[j][d]) * ir
			}
			for d := 0; d < 3; d++ {
				gi[d] = (-ui[d] - mu*e[d]) * ir
				gj[d] = (uj[d] + mu*e[d]) * ir
				gr[d] = (ui[d] - uj[d]) * ir
			}
			if s > 0 {
				t := dsdmu / s
				addv(i, i, t, gi)
				addv(i, j, t, gj)
				addv(i, G, t, gr)
			}
			if 1-s > 0 {
				t := -dsdmu / (1 - s)
				addv(j, i, t, gi)
				addv(j, j, t, gj)
				addv(j, G, t, gr)
			}
		}
	}
	Z := 0.0
	for _, v := range P {
		Z += v
	}
	if Z == 0 {
		for X := range dw {
			dw[X] = [3]float64{}
		}
		return 0
	}
	w := P[G] / Z
	for X := 0; X < nat; X++ {
		for d := 0; d < 3; d++ {
			dz := 0.0
			for B := 0; B < nat; B++ {
				dz += P[B] * dl[(B*nat+X)*3+d]
			}
			dw[X][d] = P[G]*dl[(G*nat+X)*3+d]/Z - w*dz/Z
		}
	}
	return w
}

// hessIndex[d][e] is the position of ∂_d∂_e in the six second derivatives.
var hessIndex = [3][3]int{{0, 1, 2}, {1, 3, 4}, {2, 4, 5}}

// evalHess writes values, gradients and (when d2 is wanted) second
// derivatives of the listed shells' functions at the points, row-major
// npts × nloc.
func (x *XC) evalHess(list []int, X, Y, Z []float64, nloc int, w *gradWork, second bool) {
	npts := len(X)
	col := 0
	for _, si := range list {
		s := &x.shells[si]
		nc := len(s.cart)
		w.cart = growF(w.cart, 10*nc)
		cv := w.cart
		var px, py, pz [12]float64
		for p := 0; p < npts; p++ {
			dx, dy, dz := X[p]-s.centre[0], Y[p]-s.centre[1], Z[p]-s.centre[2]
			r2 := dx*dx + dy*dy + dz*dz
			px[0], py[0], pz[0] = 1, 1, 1
			for i := 1; i <= s.l+2; i++ {
				px[i], py[i], pz[i] = px[i-1]*dx, py[i-1]*dy, pz[i-1]*dz
			}
			for k := range cv[:10*nc] {
				cv[k] = 0
			}
			for kp, a := range s.exps {
				if a*r2 > 40 {
					continue
				}
				ek := s.coefs[kp] * math.Exp(-a*r2)
				for k, c := range s.cart {
					var f0, f1, f2 [3]float64
					pw := [3]*[12]float64{&px, &py, &pz}
					for d := 0; d < 3; d++ {
						i := c[d]
						q := pw[d]
						f0[d] = q[i]
						f1[d] = -2 * a * q[i+1]
						f2[d] = -2*a*float64(2*i+1)*q[i] + 4*a*a*q[i+2]
						if i >= 1 {
							f1[d] += float64(i) * q[i-1]
						}
						if i >= 2 {
							f2[d] += float64(i*(i-1)) * q[i-2]
						}
					}
					o := cv[10*k : 10*k+10]
					o[0] += ek * f0[0] * f0[1] * f0[2]
					o[1] += ek * f1[0] * f0[1] * f0[2]
					o[2] += ek * f0[0] * f1[1] * f0[2]
					o[3] += ek * f0[0] * f0[1] * f1[2]
					if second {
						o[4] += ek * f2[0] * f0[1] * f0[2]
						o[5] += ek * f1[0] * f1[1] * f0[2]
						o[6] += ek * f1[0] * f0[1] * f1[2]
						o[7] += ek * f0[0] * f2[1] * f0[2]
						o[8] += ek * f0[0] * f1[1] * f1[2]
						o[9] += ek * f0[0] * f0[1] * f2[2]
					}
				}
			}
			for k := range s.cart {
				nk := s.cartNorm[k]
				for m := 0; m < 10; m++ {
					cv[10*k+m] *= nk
				}
			}
			row := p * nloc
			put := func(f int, vals []float64) {
				w.phi[row+col+f] = vals[0]
				for d := 0; d < 3; d++ {
					w.d1[d][row+col+f] = vals[1+d]
				}
				if second {
					for m := 0; m < 6; m++ {
						w.d2[m][row+col+f] = vals[4+m]
					}
				}
			}
			if s.c2s == nil {
				for k := 0; k < nc; k++ {
					put(k, cv[10*k:10*k+10])
				}
				continue
			}
			var tmp [10]float64
			for m, cm := range s.c2s {
				for q := range tmp {
					tmp[q] = 0
				}
				for k, c := range cm {
					if c == 0 {
						continue
					}
					for q := 0; q < 10; q++ {
						tmp[q] += c * cv[10*k+q]
					}
				}
				put(m, tmp[:])
			}
		}
		col += s.nfunc
	}
}

func growF(b []float64, n int) []float64 {
	if cap(b) < n {
		return make([]float64, n)
	}
	return b[:n]
}

func (x *XC) gradBatch(b int, da, db []float64, w *gradWork, g []float64) {
	bt := x.grid.batches[b]
	list := x.blist[b]
	nl := 0
	for _, si := range list {
		nl += x.shells[si].nfunc
	}
	if nl == 0 {
		return
	}
	np := bt.end - bt.start
	X, Y, Z, W := x.grid.X[bt.start:bt.end], x.grid.Y[bt.start:bt.end], x.grid.Z[bt.start:bt.end], x.grid.W[bt.start:bt.end]
	gga := x.fn.gga
	m := np * nl
	w.phi = growF(w.phi, m)
	for d := 0; d < 3; d++ {
		w.d1[d] = growF(w.d1[d], m)
	}
	if gga {
		for d := 0; d < 6; d++ {
			w.d2[d] = growF(w.d2[d], m)
		}
	}
	x.evalHess(list, X, Y, Z, nl, w, gga)
	funcs := make([]int, 0, nl)
	atoms := make([]int, 0, nl)
	for _, si := range list {
		s := &x.shells[si]
		for k := 0; k < s.nfunc; k++ {
			funcs = append(funcs, s.offset+k)
			atoms = append(atoms, s.atom)
		}
	}
	nspin := 1
	dens := [2][]float64{da, db}
	if db != nil {
		nspin = 2
	}
	n := x.nbf
	w.dloc = growF(w.dloc, nl*nl)
	for s := 0; s < nspin; s++ {
		for i, fi := range funcs {
			for j, fj := range funcs {
				w.dloc[i*nl+j] = dens[s][fi*n+fj]
			}
		}
		w.xs[s] = growF(w.xs[s], m)
		mulLocal(w.phi, w.dloc, np, nl, w.xs[s])
		for d := 0; d < 3; d++ {
			w.grho[s][d] = growF(w.grho[s][d], np)
			if gga {
				w.ys[s][d] = growF(w.ys[s][d], m)
				mulLocal(w.d1[d], w.dloc, np, nl, w.ys[s][d])
				w.gcoef[s][d] = growF(w.gcoef[s][d], np)
			}
		}
	}
	w.rho = growF(w.rho, 2*np)
	w.sigma = growF(w.sigma, 3*np)
	w.e = growF(w.e, np)
	w.vrho = growF(w.vrho, 2*np)
	w.vsigma = growF(w.vsigma, 3*np)
	// densities and their gradients per spin channel
	for s := 0; s < nspin; s++ {
		for p := 0; p < np; p++ {
			xr := w.xs[s][p*nl : (p+1)*nl]
			ph := w.phi[p*nl : (p+1)*nl]
			r := 0.0
			for k, v := range xr {
				r += v * ph[k]
			}
			w.rho[p*nspin+s] = r
			{
				for d := 0; d < 3; d++ {
					gd := w.d1[d][p*nl : (p+1)*nl]
					t := 0.0
					for k, v := range xr {
						t += v * gd[k]
					}
					w.grho[s][d][p] = 2 * t
				}
			}
		}
	}
	cut := x.grid.Spec.DensityCut
	if nspin == 1 {
		for p := 0; p < np; p++ {
			if gga {
				a := w.grho[0]
				w.sigma[p] = a[0][p]*a[0][p] + a[1][p]*a[1][p] + a[2][p]*a[2][p]
			}
			if !(w.rho[p] > cut) {
				w.rho[p] = 0
			}
		}
		x.fn.EvalUnpolarized(w.rho[:np], w.sigma[:np], w.e[:np], w.vrho[:np], w.vsigma[:np])
		if gga {
			for p := 0; p < np; p++ {
				f := 2 * w.vsigma[p]
				for d := 0; d < 3; d++ {
					w.gcoef[0][d][p] = f * w.grho[0][d][p]
				}
			}
		}
	} else {
		for p := 0; p < np; p++ {
			if gga {
				a, bb := w.grho[0], w.grho[1]
				w.sigma[3*p] = a[0][p]*a[0][p] + a[1][p]*a[1][p] + a[2][p]*a[2][p]
				w.sigma[3*p+1] = a[0][p]*bb[0][p] + a[1][p]*bb[1][p] + a[2][p]*bb[2][p]
				w.sigma[3*p+2] = bb[0][p]*bb[0][p] + bb[1][p]*bb[1][p] + bb[2][p]*bb[2][p]
			}
			if !(w.rho[2*p]+w.rho[2*p+1] > cut) {
				w.rho[2*p], w.rho[2*p+1] = 0, 0
			}
		}
		x.fn.EvalPolarized(w.rho[:2*np], w.sigma[:3*np], w.e[:np], w.vrho[:2*np], w.vsigma[:3*np])
		if gga {
			for p := 0; p < np; p++ {
				saa, sab, sbb := w.vsigma[3*p], w.vsigma[3*p+1], w.vsigma[3*p+2]
				for d := 0; d < 3; d++ {
					ga, gb := w.grho[0][d][p], w.grho[1][d][p]
					w.gcoef[0][d][p] = 2*saa*ga + sab*gb
					w.gcoef[1][d][p] = 2*sbb*gb + sab*ga
				}
			}
		}
	}
	// the point moves with its atom: W_p ∇_r e = W_p Σσ (vρσ ∇ρσ + ∇∇ρσ Gσ);
	// and the partition weight changes with every atom
	nat := len(g) / 3
	if len(x.grid.pos) > 1 {
		w.dw = growV(w.dw, nat)
		w.bk = growF(w.bk, 5*nat+3*nat*nat)
	}
	for p := 0; p < np; p++ {
		if w.e[p] == 0 && w.vrho[p*nspin] == 0 && (nspin == 1 || w.vrho[p*nspin+1] == 0) {
			continue
		}
		parent := x.grid.Atom[bt.start+p]
		var mv [3]float64
		for s := 0; s < nspin; s++ {
			vr := w.vrho[p*nspin+s]
			for d := 0; d < 3; d++ {
				mv[d] += vr * w.grho[s][d][p]
			}
			if gga {
				xr := w.xs[s][p*nl : (p+1)*nl]
				for d := 0; d < 3; d++ {
					for e := 0; e < 3; e++ {
						h := 0.0
						d2 := w.d2[hessIndex[d][e]][p*nl : (p+1)*nl]
						d1 := w.d1[d][p*nl : (p+1)*nl]
						ye := w.ys[s][e][p*nl : (p+1)*nl]
						for k, xv := range xr {
							h += d2[k]*xv + d1[k]*ye[k]
						}
						mv[d] += 2 * h * w.gcoef[s][e][p]
					}
				}
			}
		}
		for d := 0; d < 3; d++ {
			g[3*parent+d] += W[p] * mv[d]
		}
		if len(x.grid.pos) > 1 && w.e[p] != 0 {
			rel := x.grid.partitionDeriv(parent, [3]float64{X[p], Y[p], Z[p]}, w.dw, w.bk)
			if rel > 0 {
				f := W[p] * w.e[p] / rel
				for a := 0; a < nat; a++ {
					for d := 0; d < 3; d++ {
						g[3*a+d] += f * w.dw[a][d]
					}
				}
			}
		}
	}
	// −2 Σ_p w_p Σ_{μ∈A} [vρ ∂_dφ_μ X_μ + G·(∇∂_dφ_μ X_μ + ∂_dφ_μ ∇X_μ)]
	loc := make([]float64, 3*nl)
	for s := 0; s < nspin; s++ {
		for p := 0; p < np; p++ {
			wp := W[p]
			vr := w.vrho[p*nspin+s] * wp
			if vr == 0 && !gga {
				continue
			}
			xr := w.xs[s][p*nl : (p+1)*nl]
			var G [3]float64
			if gga {
				for d := 0; d < 3; d++ {
					G[d] = wp * w.gcoef[s][d][p]
				}
			}
			for k := 0; k < nl; k++ {
				q := p*nl + k
				xk := xr[k]
				for d := 0; d < 3; d++ {
					dphi := w.d1[d][q]
					v := vr * dphi * xk
					if gga {
						for e := 0; e < 3; e++ {
							v += G[e] * (w.d2[hessIndex[d][e]][q]*xk + dphi*w.ys[s][e][q])
						}
					}
					loc[3*k+d] += v
				}
			}
		}
	}
	for k := 0; k < nl; k++ {
		a := atoms[k]
		for d := 0; d < 3; d++ {
			g[3*a+d] -= 2 * loc[3*k+d]
		}
	}
}

// mulLocal sets out = A·D for row-major A (np × nl) and D (nl × nl).
func mulLocal(a, d []float64, np, nl int, out []float64) {
	for p := 0; p < np; p++ {
		o := out[p*nl : (p+1)*nl]
		for k := range o {
			o[k] = 0
		}
		for k, v := range a[p*nl : (p+1)*nl] {
			if v == 0 {
				continue
			}
			dr := d[k*nl : (k+1)*nl]
			for j := range o {
				o[j] += v * dr[j]
			}
		}
	}
}
