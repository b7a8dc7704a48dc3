package dft

import (
	"math"

	"moltrail/engine/basis"
)

// gridShell is one basis shell prepared for evaluation on grid points.
type gridShell struct {
	l        int
	exps     []float64
	coefs    []float64
	centre   [3]float64
	offset   int // first basis function
	nfunc    int
	cart     [][3]int
	cartNorm []float64
	c2s      [][]float64 // nil for Cartesian shells
	extent   float64     // beyond this distance values and gradients are below the cutoff
	atom     int
	// expIdx[k] indexes primitive k's exponent in the atom's list of
	// distinct exponents (general contractions share them)
	expIdx []int
}

// atomExps lists the distinct exponents of each atom's shells.
type atomExps [][]float64

func prepareShells(mb *basis.Molecular, cut float64) ([]gridShell, atomExps) {
	out := make([]gridShell, len(mb.Shells))
	nat := 0
	for _, sh := range mb.Shells {
		nat = max(nat, sh.Atom+1)
	}
	ae := make(atomExps, nat)
	for i, sh := range mb.Shells {
		g := gridShell{l: sh.L, exps: sh.Exponents, coefs: sh.Coefs, centre: sh.Centre, offset: mb.Offsets[i], nfunc: sh.NFunc(), atom: sh.Atom}
		for _, a := range sh.Exponents {
			k := -1
			for u, b := range ae[sh.Atom] {
				if a == b {
					k = u
					break
				}
			}
			if k < 0 {
				k = len(ae[sh.Atom])
				ae[sh.Atom] = append(ae[sh.Atom], a)
			}
			g.expIdx = append(g.expIdx, k)
		}
		g.cart = basis.CartComponents(sh.L)
		cmax := 0.0
		for _, c := range g.cart {
			n := basis.CartNorm(c[0], c[1], c[2])
			g.cartNorm = append(g.cartNorm, n)
			cmax = math.Max(cmax, n)
		}
		if sh.Pure {
			g.c2s = basis.CartToSpherical(sh.L)
			// the spherical combination can exceed a single component
			sum := 0.0
			for _, row := range g.c2s {
				s := 0.0
				for _, v := range row {
					s += math.Abs(v)
				}
				sum = math.Max(sum, s)
			}
			cmax *= sum
		}
		g.extent = shellExtent(sh.L, sh.Exponents, sh.Coefs, cmax, cut)
		out[i] = g
	}
	return out, ae
}

// maxDistinct is the largest number of distinct exponents on one atom.
func (ae atomExps) maxDistinct() int {
	m := 0
	for _, e := range ae {
		m = max(m, len(e))
	}
	return m
}

// shellExtent is the largest r at which a bound on the shell's functions
// and gradients, f(r) = cmax Σ|c_k| r^l (1 + l/r + 2α_k r) e^{−α_k r²},
// reaches cut (bisection after an outward search; f decreases there).
func shellExtent(l int, exps, coefs []float64, cmax, cut float64) float64 {
	if cut <= 0 {
		return math.Inf(1)
	}
	f := func(r float64) float64 {
		s := 0.0
		for k, a := range exps {
			s += math.Abs(coefs[k]) * math.Pow(r, float64(l)) * (1 + float64(l)/r + 2*a*r) * math.Exp(-a*r*r)
		}
		return cmax * s
	}
	amin := math.Inf(1)
	for _, a := range exps {
		amin = math.Min(amin, a)
	}
	// start beyond the maximum of the slowest primitive
	lo := math.Sqrt(float64(l+1)/(2*amin)) + 1e-3
	if f(lo) < cut {
		// the bound is below cut already past its peak; walk back in
		hi := lo
		lo = 1e-6
		if f(lo) < cut {
			return lo
		}
		for it := 0; it < 100; it++ {
			m := 0.5 * (lo + hi)
			if f(m) > cut {
				lo = m
			} else {
				hi = m
			}
		}
		return hi
	}
	hi := 2 * lo
	for f(hi) > cut {
		lo, hi = hi, 2*hi
	}
	for it := 0; it < 100 && hi-lo > 1e-6; it++ {
		m := 0.5 * (lo + hi)
		if f(m) > cut {
			lo = m
		} else {
			hi = m
		}
	}
	return hi
}

// evalWork is scratch space for evalShells.
type evalWork struct {
	cart []float64 // 4·NCart(lmax)
	etab []float64 // npts × distinct exponents of one atom
}

func newEvalWork(lmax, npts, distinct int) *evalWork {
	return &evalWork{cart: make([]float64, 4*basis.NCart(lmax)), etab: make([]float64, npts*distinct)}
}

// evalShells writes the values (and gradients when grad != nil) of the
// functions of the listed shells at points (x, y, z) into row-major
// npts × nloc arrays, the shells' functions laid out consecutively in list
// order. The Gaussians e^{−α r²} are computed once per atom and distinct
// exponent.
func evalShells(shells []gridShell, ae atomExps, list []int, x, y, z []float64, nloc int, phi []float64, grad [3][]float64, ew *evalWork) {
	npts := len(x)
	col := 0
	withGrad := grad[0] != nil
	work := ew.cart
	curAtom := -1
	var nu int
	for _, si := range list {
		s := &shells[si]
		if s.atom != curAtom {
			curAtom = s.atom
			ex := ae[curAtom]
			nu = len(ex)
			for p := 0; p < npts; p++ {
				dx, dy, dz := x[p]-s.centre[0], y[p]-s.centre[1], z[p]-s.centre[2]
				r2 := dx*dx + dy*dy + dz*dz
				row := ew.etab[p*nu : (p+1)*nu]
				for u, a := range ex {
					if a*r2 > 40 { // e^{−40} ≈ 4e-18: far below any cutoff
						row[u] = 0
					} else {
						row[u] = math.Exp(-a * r2)
					}
				}
			}
		}
		nc := len(s.cart)
		cv := work[:nc]
		cgx, cgy, cgz := work[nc:2*nc], work[2*nc:3*nc], work[3*nc:4*nc]
		var px, py, pz [8]float64 // powers 0..l (l ≤ 6)
		for p := 0; p < npts; p++ {
			dx, dy, dz := x[p]-s.centre[0], y[p]-s.centre[1], z[p]-s.centre[2]
			R, dR := 0.0, 0.0 // radial part and its derivative with respect to r²
			et := ew.etab[p*nu : (p+1)*nu]
			for k, a := range s.exps {
				e := s.coefs[k] * et[s.expIdx[k]]
				R += e
				dR -= a * e
			}
			px[0], py[0], pz[0] = 1, 1, 1
			for i := 1; i <= s.l; i++ {
				px[i], py[i], pz[i] = px[i-1]*dx, py[i-1]*dy, pz[i-1]*dz
			}
			row := p * nloc
			for k, c := range s.cart {
				ang := px[c[0]] * py[c[1]] * pz[c[2]]
				n := s.cartNorm[k]
				cv[k] = n * ang * R
				if withGrad {
					gx := 2 * dx * ang * dR
					gy := 2 * dy * ang * dR
					gz := 2 * dz * ang * dR
					if c[0] > 0 {
						gx += float64(c[0]) * px[c[0]-1] * py[c[1]] * pz[c[2]] * R
					}
					if c[1] > 0 {
						gy += float64(c[1]) * px[c[0]] * py[c[1]-1] * pz[c[2]] * R
					}
					if c[2] > 0 {
						gz += float64(c[2]) * px[c[0]] * py[c[1]] * pz[c[2]-1] * R
					}
					cgx[k], cgy[k], cgz[k] = n*gx, n*gy, n*gz
				}
			}
			if s.c2s == nil {
				copy(phi[row+col:row+col+nc], cv)
				if withGrad {
					copy(grad[0][row+col:row+col+nc], cgx)
					copy(grad[1][row+col:row+col+nc], cgy)
					copy(grad[2][row+col:row+col+nc], cgz)
				}
				continue
			}
			for m, cm := range s.c2s {
				var v, gx, gy, gz float64
				for k, c := range cm {
					if c == 0 {
						continue
					}
					v += c * cv[k]
					if withGrad {
						gx += c * cgx[k]
						gy += c * cgy[k]
						gz += c * cgz[k]
					}
				}
				phi[row+col+m] = v
				if withGrad {
					grad[0][row+col+m], grad[1][row+col+m], grad[2][row+col+m] = gx, gy, gz
				}
			}
		}
		col += s.nfunc
	}
}
