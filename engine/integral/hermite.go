package integral

import (
	"math"

	"moltrail/engine/basis"
)

// Hermite machinery of the McMurchie–Davidson scheme.
//
// Hermite indices (t, u, v) are kept in one global order: by n = t+u+v
// ascending, then t descending, then u descending. Every set t+u+v ≤ L is
// then a prefix of length nHerm(L).

// maxHermL is the largest total Hermite order handled: four g shells plus
// room for derivative integrals.
const maxHermL = 20

// maxPairL is the largest Hermite order of one shell pair (g+g plus one for
// derivatives) covered by the sum table.
const maxPairL = 9

func nHerm(L int) int { return (L + 1) * (L + 2) * (L + 3) / 6 }

type hermTables struct {
	tuv [][3]int
	idx [maxHermL + 1][maxHermL + 1][maxHermL + 1]int32
	// recursion data for index h > 0: lower along direction dir.
	dir  []int8
	lo1  []int32
	lo2  []int32 // −1 when the component along dir is 1
	c2   []float64
	ord  []int8    // t+u+v
	sign []float64 // (−1)^(t+u+v)
	// sum[h1*nPairH+h2] is the index of tuv(h1)+tuv(h2).
	sum    []int32
	nPairH int
}

var herm = buildHerm()

func buildHerm() *hermTables {
	h := &hermTables{}
	for n := 0; n <= maxHermL; n++ {
		for t := n; t >= 0; t-- {
			for u := n - t; u >= 0; u-- {
				v := n - t - u
				h.idx[t][u][v] = int32(len(h.tuv))
				h.tuv = append(h.tuv, [3]int{t, u, v})
			}
		}
	}
	nt := len(h.tuv)
	h.dir = make([]int8, nt)
	h.lo1 = make([]int32, nt)
	h.lo2 = make([]int32, nt)
	h.c2 = make([]float64, nt)
	h.ord = make([]int8, nt)
	h.sign = make([]float64, nt)
	for i, c := range h.tuv {
		n := c[0] + c[1] + c[2]
		h.ord[i] = int8(n)
		h.sign[i] = 1
		if n%2 == 1 {
			h.sign[i] = -1
		}
		if i == 0 {
			continue
		}
		d := 0
		for c[d] == 0 {
			d++
		}
		h.dir[i] = int8(d)
		l1 := c
		l1[d]--
		h.lo1[i] = h.idx[l1[0]][l1[1]][l1[2]]
		h.lo2[i] = -1
		if c[d] >= 2 {
			l2 := l1
			l2[d]--
			h.lo2[i] = h.idx[l2[0]][l2[1]][l2[2]]
			h.c2[i] = float64(c[d] - 1)
		}
	}
	h.nPairH = nHerm(maxPairL)
	h.sum = make([]int32, h.nPairH*h.nPairH)
	for a := 0; a < h.nPairH; a++ {
		for b := 0; b < h.nPairH; b++ {
			x, y := h.tuv[a], h.tuv[b]
			h.sum[a*h.nPairH+b] = h.idx[x[0]+y[0]][x[1]+y[1]][x[2]+y[2]]
		}
	}
	return h
}

// hermiteR fills r[:nHerm(L)] with pref·R_tuv(α, PQ), the Hermite Coulomb
// integrals R_tuv = (∂/∂P_x)^t (∂/∂P_y)^u (∂/∂P_z)^v F_0(α|PQ|²) built by
// R^{(n)}_{t+1,u,v} = t R^{(n+1)}_{t−1,u,v} + X_PQ R^{(n+1)}_{t,u,v} from
// R^{(n)}_000 = (−2α)^n F_n(α|PQ|²). f holds F_0..F_L at that argument;
// tmp is scratch of the same length as r.
func hermiteR(L int, alpha float64, pq [3]float64, f []float64, pref float64, r, tmp []float64) {
	m2a := -2 * alpha
	// scaled[n] = pref (−2α)^n F_n
	var scaled [maxHermL + 1]float64
	s := pref
	for n := 0; n <= L; n++ {
		scaled[n] = s * f[n]
		s *= m2a
	}
	cur := tmp
	if L%2 == 0 {
		cur = r
	}
	cur[0] = scaled[L]
	dir, lo1, lo2, c2 := herm.dir, herm.lo1, herm.lo2, herm.c2
	for n := L - 1; n >= 0; n-- {
		next := r
		if n%2 == 1 {
			next = tmp
		}
		next[0] = scaled[n]
		nh := nHerm(L - n)
		for h := 1; h < nh; h++ {
			v := pq[dir[h]] * cur[lo1[h]]
			if j := lo2[h]; j >= 0 {
				v += c2[h] * cur[j]
			}
			next[h] = v
		}
		cur = next
	}
}

// eCoef1D fills e with the Hermite expansion coefficients E^{ij}_t of one
// Cartesian direction for i ≤ la, j ≤ lb, 0 ≤ t ≤ i+j (without the
// exp(−μX²) factor), laid out as e[(i*(lb+1)+j)*(la+lb+1)+t]:
// E^{i+1,j}_t = E^{ij}_{t−1}/(2p) + X_PA E^{ij}_t + (t+1) E^{ij}_{t+1}, and
// likewise in j with X_PB.
func eCoef1D(la, lb int, p, xpa, xpb float64, e []float64) {
	nt := la + lb + 1
	at := func(i, j int) []float64 { return e[(i*(lb+1)+j)*nt : (i*(lb+1)+j+1)*nt] }
	for k := range e[:(la+1)*(lb+1)*nt] {
		e[k] = 0
	}
	inv2p := 0.5 / p
	for i := 0; i <= la; i++ {
		for j := 0; j <= lb; j++ {
			dst := at(i, j)
			if i == 0 && j == 0 {
				dst[0] = 1
				continue
			}
			var src []float64
			x := xpb
			if j == 0 {
				src = at(i-1, 0)
				x = xpa
			} else {
				src = at(i, j-1)
			}
			top := i + j
			for t := 0; t <= top; t++ {
				v := 0.0
				if t > 0 {
					v += inv2p * src[t-1]
				}
				if t < top {
					v += x * src[t]
				}
				if t+1 < top {
					v += float64(t+1) * src[t+1]
				}
				dst[t] = v
			}
		}
	}
}

// shellTransform is the nf×ncart matrix taking the raw Cartesian monomial
// functions of a shell (x^lx y^ly z^lz times the x^l-normalised contraction)
// to its final functions: CartNorm on the diagonal for Cartesian shells,
// CartToSpherical·diag(CartNorm) for spherical ones.
func shellTransform(sh *basis.Shell) []float64 {
	comps := basis.CartComponents(sh.L)
	nc := len(comps)
	if !sh.Pure {
		t := make([]float64, nc*nc)
		for k, c := range comps {
			t[k*nc+k] = basis.CartNorm(c[0], c[1], c[2])
		}
		return t
	}
	c := basis.CartToSpherical(sh.L)
	t := make([]float64, len(c)*nc)
	for m := range c {
		for k, cc := range comps {
			t[m*nc+k] = c[m][k] * basis.CartNorm(cc[0], cc[1], cc[2])
		}
	}
	return t
}

// transformPair returns T_a · X · T_bᵀ for a Cartesian block X (nca×ncb).
func transformPair(ta []float64, nfa, nca int, tb []float64, nfb, ncb int, x []float64) []float64 {
	tmp := make([]float64, nca*nfb)
	for i := 0; i < nca; i++ {
		for g := 0; g < nfb; g++ {
			s := 0.0
			for j := 0; j < ncb; j++ {
				s += x[i*ncb+j] * tb[g*ncb+j]
			}
			tmp[i*nfb+g] = s
		}
	}
	out := make([]float64, nfa*nfb)
	for f := 0; f < nfa; f++ {
		for i := 0; i < nca; i++ {
			a := ta[f*nca+i]
			if a == 0 {
				continue
			}
			for g := 0; g < nfb; g++ {
				out[f*nfb+g] += a * tmp[i*nfb+g]
			}
		}
	}
	return out
}

func dist2(a, b [3]float64) float64 {
	dx, dy, dz := a[0]-b[0], a[1]-b[1], a[2]-b[2]
	return dx*dx + dy*dy + dz*dz
}

var twoPi52 = 2 * math.Pow(math.Pi, 2.5)
