package integral

import (
	"math"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/basis"
	"moltrail/engine/molecule"
)

// PointCharge is a point charge (a nucleus or an external charge) in atomic
// units at a position in bohr.
type PointCharge struct {
	Charge float64
	Pos    [3]float64
}

// Overlap returns S_μν = ⟨μ|ν⟩ in the final functions of mb.
func Overlap(mb *basis.Molecular) *mat.SymDense {
	r := oneBody(mb, opOverlap, nil, [3]float64{})
	return r.s
}

// Kinetic returns T_μν = ⟨μ|−½∇²|ν⟩.
func Kinetic(mb *basis.Molecular) *mat.SymDense {
	return oneBody(mb, opKinetic, nil, [3]float64{}).t
}

// Nuclear returns V_μν = ⟨μ| −Σ_C Z_C/|r−R_C| |ν⟩ for the point charges
// (the attraction of an electron to positive charges is negative).
func Nuclear(mb *basis.Molecular, charges []PointCharge) *mat.SymDense {
	return oneBody(mb, opNuclear, charges, [3]float64{}).v
}

// NuclearMolecule is Nuclear for the nuclei of mol.
func NuclearMolecule(mb *basis.Molecular, mol *molecule.Molecule) *mat.SymDense {
	return Nuclear(mb, MoleculeCharges(mol))
}

// MoleculeCharges lists the nuclei of mol as point charges.
func MoleculeCharges(mol *molecule.Molecule) []PointCharge {
	q := make([]PointCharge, len(mol.Atoms))
	for i, a := range mol.Atoms {
		q[i] = PointCharge{Charge: float64(a.Z), Pos: a.PosBohr}
	}
	return q
}

// Multipole returns the dipole ⟨μ|(r−O)_i|ν⟩ (x, y, z) and second-moment
// ⟨μ|(r−O)_i (r−O)_j|ν⟩ (xx, yy, zz, xy, xz, yz) integrals about origin O
// (bohr). These are electronic position integrals, without the electron's
// negative charge.
func Multipole(mb *basis.Molecular, origin [3]float64) (dip [3]*mat.SymDense, second [6]*mat.SymDense) {
	r := oneBody(mb, opMultipole, nil, origin)
	return r.dip, r.sec
}

const (
	opOverlap = 1 << iota
	opKinetic
	opNuclear
	opMultipole
)

type oneResult struct {
	s, t, v *mat.SymDense
	dip     [3]*mat.SymDense
	sec     [6]*mat.SymDense
}

// secondPairs are the (i, j) directions of the second moments in output order.
var secondPairs = [6][2]int{{0, 0}, {1, 1}, {2, 2}, {0, 1}, {0, 2}, {1, 2}}

func oneBody(mb *basis.Molecular, ops int, charges []PointCharge, origin [3]float64) *oneResult {
	n := mb.NBasis
	res := &oneResult{}
	var mats []*mat.SymDense
	newMat := func() *mat.SymDense {
		m := mat.NewSymDense(n, nil)
		mats = append(mats, m)
		return m
	}
	if ops&opOverlap != 0 {
		res.s = newMat()
	}
	if ops&opKinetic != 0 {
		res.t = newMat()
	}
	if ops&opNuclear != 0 {
		res.v = newMat()
	}
	if ops&opMultipole != 0 {
		for i := range res.dip {
			res.dip[i] = newMat()
		}
		for i := range res.sec {
			res.sec[i] = newMat()
		}
	}
	trans := make([][]float64, len(mb.Shells))
	for i := range mb.Shells {
		trans[i] = shellTransform(&mb.Shells[i])
	}
	boysOnce.Do(initBoys)
	for i := range mb.Shells {
		for j := 0; j <= i; j++ {
			blocks := onePairCart(&mb.Shells[i], &mb.Shells[j], ops, charges, origin)
			A, B := &mb.Shells[i], &mb.Shells[j]
			nca, ncb := basis.NCart(A.L), basis.NCart(B.L)
			nfa, nfb := A.NFunc(), B.NFunc()
			for k, blk := range blocks {
				f := transformPair(trans[i], nfa, nca, trans[j], nfb, ncb, blk)
				m := mats[k]
				for a := 0; a < nfa; a++ {
					for b := 0; b < nfb; b++ {
						mu, nu := mb.Offsets[i]+a, mb.Offsets[j]+b
						if i == j && nu > mu {
							continue
						}
						m.SetSym(mu, nu, f[a*nfb+b])
					}
				}
			}
		}
	}
	return res
}

// onePairCart returns the raw Cartesian blocks (nca×ncb) of the requested
// operators in the order overlap, kinetic, nuclear, dipole x,y,z, second
// moments.
func onePairCart(A, B *basis.Shell, ops int, charges []PointCharge, origin [3]float64) [][]float64 {
	la, lb := A.L, B.L
	ca, cb := basis.CartComponents(la), basis.CartComponents(lb)
	nca, ncb := len(ca), len(cb)
	nops := 0
	for _, o := range []int{opOverlap, opKinetic, opNuclear} {
		if ops&o != 0 {
			nops++
		}
	}
	if ops&opMultipole != 0 {
		nops += 9
	}
	blocks := make([][]float64, nops)
	for k := range blocks {
		blocks[k] = make([]float64, nca*ncb)
	}
	lb2 := lb + 2
	nt := la + lb2 + 1
	ex := make([][]float64, 3)
	for d := range ex {
		ex[d] = make([]float64, (la+1)*(lb2+1)*nt)
	}
	// 1D overlaps S_d[i][j], i ≤ la, j ≤ lb+2
	s1 := make([][]float64, 3)
	for d := range s1 {
		s1[d] = make([]float64, (la+1)*(lb2+1))
	}
	L := la + lb
	nh := nHerm(L)
	r := make([]float64, nh)
	tmp := make([]float64, nh)
	fb := make([]float64, L+1)
	ab2 := dist2(A.Centre, B.Centre)
	for pa, a := range A.Exponents {
		for pb, b := range B.Exponents {
			p := a + b
			mu := a * b / p
			K := math.Exp(-mu*ab2) * A.Coefs[pa] * B.Coefs[pb]
			var P [3]float64
			for d := 0; d < 3; d++ {
				P[d] = (a*A.Centre[d] + b*B.Centre[d]) / p
				eCoef1D(la, lb2, p, P[d]-A.Centre[d], P[d]-B.Centre[d], ex[d])
				sq := math.Sqrt(math.Pi / p)
				for i := 0; i <= la; i++ {
					for j := 0; j <= lb2; j++ {
						s1[d][i*(lb2+1)+j] = ex[d][(i*(lb2+1)+j)*nt] * sq
					}
				}
			}
			S := func(d, i, j int) float64 {
				if j < 0 {
					return 0
				}
				return s1[d][i*(lb2+1)+j]
			}
			kin := func(d, i, j int) float64 {
				return -2*b*b*S(d, i, j+2) + b*float64(2*j+1)*S(d, i, j) - 0.5*float64(j*(j-1))*S(d, i, j-2)
			}
			m1 := func(d, i, j int) float64 {
				return S(d, i, j+1) + (B.Centre[d]-origin[d])*S(d, i, j)
			}
			m2 := func(d, i, j int) float64 {
				bo := B.Centre[d] - origin[d]
				return S(d, i, j+2) + 2*bo*S(d, i, j+1) + bo*bo*S(d, i, j)
			}
			for ia, x := range ca {
				for ib, y := range cb {
					k := ia*ncb + ib
					sx, sy, sz := S(0, x[0], y[0]), S(1, x[1], y[1]), S(2, x[2], y[2])
					o := 0
					if ops&opOverlap != 0 {
						blocks[o][k] += K * sx * sy * sz
						o++
					}
					if ops&opKinetic != 0 {
						blocks[o][k] += K * (kin(0, x[0], y[0])*sy*sz + sx*kin(1, x[1], y[1])*sz + sx*sy*kin(2, x[2], y[2]))
						o++
					}
					if ops&opNuclear != 0 {
						o++ // filled below
					}
					if ops&opMultipole != 0 {
						s := [3]float64{sx, sy, sz}
						var d1, d2 [3]float64
						for d := 0; d < 3; d++ {
							d1[d] = m1(d, x[d], y[d])
							d2[d] = m2(d, x[d], y[d])
						}
						for d := 0; d < 3; d++ {
							v := K
							for e := 0; e < 3; e++ {
								if e == d {
									v *= d1[e]
								} else {
									v *= s[e]
								}
							}
							blocks[o+d][k] += v
						}
						for q, pr := range secondPairs {
							v := K
							for e := 0; e < 3; e++ {
								switch {
								case pr[0] == pr[1] && e == pr[0]:
									v *= d2[e]
								case e == pr[0] || e == pr[1]:
									v *= d1[e]
								default:
									v *= s[e]
								}
							}
							blocks[o+3+q][k] += v
						}
					}
				}
			}
			if ops&opNuclear != 0 {
				o := 0
				if ops&opOverlap != 0 {
					o++
				}
				if ops&opKinetic != 0 {
					o++
				}
				blk := blocks[o]
				for _, c := range charges {
					pc := [3]float64{P[0] - c.Pos[0], P[1] - c.Pos[1], P[2] - c.Pos[2]}
					boys(L, p*(pc[0]*pc[0]+pc[1]*pc[1]+pc[2]*pc[2]), fb)
					hermiteR(L, p, pc, fb, -c.Charge*2*math.Pi/p*K, r, tmp)
					for ia, x := range ca {
						for ib, y := range cb {
							ebx := ex[0][(x[0]*(lb2+1)+y[0])*nt:]
							eby := ex[1][(x[1]*(lb2+1)+y[1])*nt:]
							ebz := ex[2][(x[2]*(lb2+1)+y[2])*nt:]
							v := 0.0
							for t := 0; t <= x[0]+y[0]; t++ {
								for u := 0; u <= x[1]+y[1]; u++ {
									eu := ebx[t] * eby[u]
									for w := 0; w <= x[2]+y[2]; w++ {
										v += eu * ebz[w] * r[herm.idx[t][u][w]]
									}
								}
							}
							blk[ia*ncb+ib] += v
						}
					}
				}
			}
		}
	}
	return blocks
}
