package cc

import (
	"fmt"
	"io"
	"math"
	"runtime"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/mat"

	"moltrail/engine/internal/gemm"
)

// Defaults of Options.
const (
	DefaultEnergyTolHartree = 1e-10
	DefaultAmplitudeTol     = 1e-8
	DefaultMaxIter          = 100
	DefaultDIISSize         = 8
)

// Options control a coupled-cluster calculation.
type Options struct {
	// Converged when |ΔE| between iterations is below EnergyTolHartree and
	// the root-mean-square change of the amplitudes (t1 and t2 together)
	// is below AmplitudeTol.
	EnergyTolHartree float64
	AmplitudeTol     float64
	MaxIter          int
	// DIISSize is the number of amplitude vectors kept for DIIS
	// extrapolation (0 = none).
	DIISSize int
	// Triples adds the perturbative (T) correction (only when CCSD converged).
	Triples bool
	// Threads (0 = all cores) changes speed, never numbers.
	Threads int
	// Progress receives one line per iteration (nil = silent).
	Progress io.Writer
}

// Iteration is one line of the CCSD history.
type Iteration struct {
	Iter         int
	Energy       float64 // correlation energy after the step
	DeltaE       float64
	AmplitudeRMS float64 // RMS change of the amplitudes in the step
	DIISVectors  int
}

// Result is the outcome of a CCSD or CCSD(T) calculation.
type Result struct {
	Converged bool
	// Occupied and Virtual are the active orbital counts.
	Occupied, Virtual int
	// MP2CorrelationHartree is the energy of the first-order amplitudes.
	MP2CorrelationHartree  float64
	CCSDCorrelationHartree float64
	// TriplesHartree is the (T) correction (0 unless Options.Triples and converged).
	TriplesHartree float64
	// T1Diagnostic is ‖t1‖/√(2·o) in spin orbitals, i.e. √(Σ t_ia²/o) here.
	T1Diagnostic float64
	// LargestT2 is the largest |t_ij^ab|.
	LargestT2  float64
	Iterations []Iteration
}

// Run solves the closed-shell CCSD equations for the active orbitals of
// src (the first nocc occupied, the rest virtual) with canonical orbital
// energies eps (length o + v), and adds (T) when asked. A calculation that
// ran out of iterations returns Converged false and a nil error.
func Run(src Source, eps []float64, nocc int, opt Options) (*Result, error) {
	n := src.NumOrbitals()
	if len(eps) != n {
		return nil, fmt.Errorf("cc: %d orbital energies for %d active orbitals", len(eps), n)
	}
	if nocc <= 0 || nocc >= n {
		return nil, fmt.Errorf("cc: %d active occupied orbitals of %d leave no correlation problem", nocc, n)
	}
	if opt.EnergyTolHartree <= 0 {
		opt.EnergyTolHartree = DefaultEnergyTolHartree
	}
	if opt.AmplitudeTol <= 0 {
		opt.AmplitudeTol = DefaultAmplitudeTol
	}
	if opt.MaxIter <= 0 {
		opt.MaxIter = DefaultMaxIter
	}
	if opt.Threads <= 0 {
		opt.Threads = runtime.NumCPU()
	}
	p := newProblem(src, eps, nocc, opt.Threads)
	res := &Result{Occupied: p.o, Virtual: p.v}
	t1, t2 := p.initial()
	eOld := p.energy(t1, t2)
	res.MP2CorrelationHartree = eOld
	var d *diis
	if opt.DIISSize > 0 {
		d = newDIIS(opt.DIISSize)
	}
	for it := 1; it <= opt.MaxIter; it++ {
		n1, n2 := p.update(t1, t2)
		var ss float64
		for i := range n1 {
			x := n1[i] - t1[i]
			ss += x * x
		}
		for i := range n2 {
			x := n2[i] - t2[i]
			ss += x * x
		}
		rms := math.Sqrt(ss / float64(len(n1)+len(n2)))
		nv := 0
		if d != nil {
			n1, n2, nv = d.step(t1, t2, n1, n2)
		}
		t1, t2 = n1, n2
		e := p.energy(t1, t2)
		res.Iterations = append(res.Iterations, Iteration{Iter: it, Energy: e, DeltaE: e - eOld, AmplitudeRMS: rms, DIISVectors: nv})
		if opt.Progress != nil {
			fmt.Fprintf(opt.Progress, "iter %3d  E(corr) %.12f  ΔE %+.2e  amplitude RMS %.2e  DIIS %d\n", it, e, e-eOld, rms, nv)
		}
		done := math.Abs(e-eOld) < opt.EnergyTolHartree && rms < opt.AmplitudeTol
		eOld = e
		if done {
			res.Converged = true
			break
		}
	}
	res.CCSDCorrelationHartree = eOld
	var s1 float64
	for _, x := range t1 {
		s1 += x * x
	}
	res.T1Diagnostic = math.Sqrt(s1 / float64(p.o))
	for _, x := range t2 {
		res.LargestT2 = math.Max(res.LargestT2, math.Abs(x))
	}
	if res.Converged && opt.Triples {
		res.TriplesHartree = p.triples(t1, t2)
	}
	return res, nil
}

// problem holds the integral classes of one calculation.
type problem struct {
	o, v    int
	eo, ev  []float64
	threads int
	ovov    []float64 // (ia|jb) [i][a][j][b]
	oovv    []float64 // (ij|ab) [i][j][a][b]
	ovoo    []float64 // (ia|jk) [i][a][j][k]
	oooo    []float64 // (ij|kl) [i][j][k][l]
	ovvv    []float64 // (ia|bc) [i][a][b][c]
	vvvv    []float64 // (ac|bd) as [a][b][c][d]
	// derived, constant
	lovovKLCD []float64 // 2(kc|ld) − (kd|lc) as [k][l][c][d]
	lovovCKLD []float64 // the same as [c][k][l][d]
	lovov     []float64 // the same as [k][c][l][d]
	ovovKLCD  []float64 // (kc|ld) as [k][l][c][d]
	ovovKAIC  []float64 // (kc|ia) as [k][a][i][c], also (lc|kd) as [l][d][k][c]
	ovvvKACD  []float64 // (kd|ac) as [k][a][c][d]
	ovvvCIAB  []float64 // (ia|cb) as [c][i][a][b]
	ovvvF     []float64 // (ia|bf) as [i][f][(a,b)], (a,b) padded to vvPad (for (T))
	vvPad     int
	q         []float64 // 2(kd|ac) − (kc|ad) as [k][c][d][a]
	r         []float64 // 2(lc|ki) − (kc|li) as [i][k][l][c]
}

func newProblem(src Source, eps []float64, nocc, threads int) *problem {
	n := src.NumOrbitals()
	o, v := nocc, n-nocc
	p := &problem{o: o, v: v, eo: eps[:o], ev: eps[o:], threads: threads}
	O, V := Range{0, o}, Range{o, n}
	get := func(a, b, c, d Range) []float64 {
		out := make([]float64, a.Len()*b.Len()*c.Len()*d.Len())
		src.Block([4]Range{a, b, c, d}, out)
		return out
	}
	p.ovov = get(O, V, O, V)
	p.oovv = get(O, O, V, V)
	p.ovoo = get(O, V, O, O)
	p.oooo = get(O, O, O, O)
	p.ovvv = get(O, V, V, V)
	acbd := get(V, V, V, V)
	p.vvvv = perm4(nil, acbd, [4]int{v, v, v, v}, [4]int{0, 2, 1, 3})
	acbd = nil
	ovovD := [4]int{o, v, o, v}
	p.lovov = make([]float64, len(p.ovov))
	for k := 0; k < o; k++ {
		for c := 0; c < v; c++ {
			for l := 0; l < o; l++ {
				for d := 0; d < v; d++ {
					p.lovov[((k*v+c)*o+l)*v+d] = 2*p.ovov[((k*v+c)*o+l)*v+d] - p.ovov[((k*v+d)*o+l)*v+c]
				}
			}
		}
	}
	p.lovovKLCD = perm4(nil, p.lovov, ovovD, [4]int{0, 2, 1, 3})
	p.lovovCKLD = perm4(nil, p.lovov, ovovD, [4]int{1, 0, 2, 3})
	p.ovovKLCD = perm4(nil, p.ovov, ovovD, [4]int{0, 2, 1, 3})
	p.ovovKAIC = perm4(nil, p.ovov, ovovD, [4]int{0, 3, 2, 1})
	ovvvD := [4]int{o, v, v, v}
	p.ovvvKACD = perm4(nil, p.ovvv, ovvvD, [4]int{0, 2, 3, 1})
	p.ovvvCIAB = perm4(nil, p.ovvv, ovvvD, [4]int{2, 0, 1, 3})
	p.vvPad = gemm.RoundUp(v*v, gemm.Rows)
	p.ovvvF = make([]float64, o*v*p.vvPad)
	for i := 0; i < o; i++ {
		for ab := 0; ab < v*v; ab++ {
			src := p.ovvv[(i*v*v+ab)*v:]
			for f := 0; f < v; f++ {
				p.ovvvF[(i*v+f)*p.vvPad+ab] = src[f]
			}
		}
	}
	p.q = perm4(nil, p.ovvv, ovvvD, [4]int{0, 3, 1, 2})
	for i := range p.q {
		p.q[i] *= 2
	}
	addPerm4(p.q, -1, p.ovvv, ovvvD, [4]int{0, 1, 3, 2})
	ovooD := [4]int{o, v, o, o}
	p.r = perm4(nil, p.ovoo, ovooD, [4]int{3, 2, 0, 1})
	for i := range p.r {
		p.r[i] *= 2
	}
	addPerm4(p.r, -1, p.ovoo, ovooD, [4]int{3, 0, 2, 1})
	return p
}

// initial returns t1 = 0 and the first-order t2 = (ia|jb)/D.
func (p *problem) initial() ([]float64, []float64) {
	o, v := p.o, p.v
	t1 := make([]float64, o*v)
	t2 := make([]float64, o*o*v*v)
	for i := 0; i < o; i++ {
		for j := 0; j < o; j++ {
			for a := 0; a < v; a++ {
				for b := 0; b < v; b++ {
					t2[((i*o+j)*v+a)*v+b] = p.ovov[((i*v+a)*o+j)*v+b] / (p.eo[i] + p.eo[j] - p.ev[a] - p.ev[b])
				}
			}
		}
	}
	return t1, t2
}

// energy is Σ [2(ia|jb) − (ib|ja)] (t_ij^ab + t_i^a t_j^b).
func (p *problem) energy(t1, t2 []float64) float64 {
	o, v := p.o, p.v
	var e float64
	for i := 0; i < o; i++ {
		for j := 0; j < o; j++ {
			for a := 0; a < v; a++ {
				for b := 0; b < v; b++ {
					t := t2[((i*o+j)*v+a)*v+b] + t1[i*v+a]*t1[j*v+b]
					e += p.lovov[((i*v+a)*o+j)*v+b] * t
				}
			}
		}
	}
	return e
}

// update returns the Jacobi-updated amplitudes of the closed-shell CCSD
// equations (doc.go) at t1, t2.
func (p *problem) update(t1, t2 []float64) ([]float64, []float64) {
	o, v := p.o, p.v
	ov, vv, oo := o*v, v*v, o*o
	nT := [4]int{o, o, v, v}
	tau := append([]float64(nil), t2...)
	for i := 0; i < o; i++ {
		for j := 0; j < o; j++ {
			for a := 0; a < v; a++ {
				row := tau[((i*o+j)*v+a)*v:]
				ta := t1[i*v+a]
				for b := 0; b < v; b++ {
					row[b] += ta * t1[j*v+b]
				}
			}
		}
	}
	// One-body intermediates (the Fock matrix is diagonal: its diagonal
	// is moved to the denominators, so F and L below hold corrections only).
	foo := make([]float64, oo) // [k][i]
	p.mm(blas.NoTrans, blas.Trans, o, o, o*vv, 1, p.lovovKLCD, o*vv, tau, o*vv, 0, foo, o)
	fvv := make([]float64, vv) // [a][c]
	tauAKLD := perm4(nil, tau, nT, [4]int{2, 0, 1, 3})
	p.mm(blas.NoTrans, blas.Trans, v, v, oo*v, -1, tauAKLD, oo*v, p.lovovCKLD, oo*v, 0, fvv, v)
	fov := make([]float64, ov) // [k][c]
	p.mm(blas.NoTrans, blas.NoTrans, ov, 1, ov, 1, p.lovov, ov, t1, 1, 0, fov, 1)
	loo := append([]float64(nil), foo...)
	{
		y := make([]float64, oo) // [i][k]
		p.mm(blas.NoTrans, blas.NoTrans, oo, 1, ov, 1, p.r, ov, t1, 1, 0, y, 1)
		for i := 0; i < o; i++ {
			for k := 0; k < o; k++ {
				loo[k*o+i] += y[i*o+k]
			}
		}
	}
	lvv := append([]float64(nil), fvv...)
	for k := 0; k < o; k++ {
		for c := 0; c < v; c++ {
			for d := 0; d < v; d++ {
				tkd := t1[k*v+d]
				if tkd == 0 {
					continue
				}
				q := p.q[((k*v+c)*v+d)*v:]
				for a := 0; a < v; a++ {
					lvv[a*v+c] += q[a] * tkd
				}
			}
		}
	}

	// T1.
	n1 := make([]float64, ov)
	p.mm(blas.NoTrans, blas.Trans, o, v, v, 1, t1, v, lvv, v, 0, n1, v)
	p.mm(blas.Trans, blas.NoTrans, o, v, o, -1, loo, o, t1, v, 1, n1, v)
	for i := 0; i < o; i++ {
		for a := 0; a < v; a++ {
			var s float64
			for k := 0; k < o; k++ {
				for c := 0; c < v; c++ {
					f := fov[k*v+c]
					s += f * (2*t2[((k*o+i)*v+c)*v+a] - t2[((i*o+k)*v+c)*v+a] + t1[i*v+c]*t1[k*v+a])
					s += (2*p.ovov[((k*v+c)*o+i)*v+a] - p.oovv[((k*o+i)*v+a)*v+c]) * t1[k*v+c]
				}
			}
			n1[i*v+a] += s
		}
	}
	p.mm(blas.NoTrans, blas.NoTrans, o, v, ov*v, 1, t2, ov*v, p.q, v, 1, n1, v)
	t2KLCA := perm4(nil, t2, nT, [4]int{0, 1, 3, 2})
	p.mm(blas.NoTrans, blas.NoTrans, o, v, oo*v, -1, p.r, oo*v, t2KLCA, v, 1, n1, v)

	// T2.
	n2 := perm4(nil, p.ovov, [4]int{o, v, o, v}, [4]int{0, 2, 1, 3})
	var x []float64
	// P[Σ_c (ia|cb) t_j^c]
	s1 := make([]float64, o*ov*v) // [j][i][a][b]
	p.mm(blas.NoTrans, blas.NoTrans, o, ov*v, v, 1, t1, v, p.ovvvCIAB, ov*v, 0, s1, ov*v)
	x = perm4(x, s1, nT, [4]int{1, 0, 2, 3})
	addSym(n2, 1, x, o, v)
	// −P[Σ_kc (ki|bc) t_k^a t_j^c]
	z1 := make([]float64, oo*v*o) // [k][i][b][j]
	p.mm(blas.NoTrans, blas.Trans, oo*v, o, v, 1, p.oovv, v, t1, v, 0, z1, o)
	y1 := make([]float64, v*o*v*o) // [a][i][b][j]
	p.mm(blas.Trans, blas.NoTrans, v, o*v*o, o, 1, t1, v, z1, o*v*o, 0, y1, o*v*o)
	x = perm4(x, y1, [4]int{v, o, v, o}, [4]int{1, 3, 0, 2})
	addSym(n2, -1, x, o, v)
	// −P[Σ_k (ia|jk) t_k^b]
	s2 := make([]float64, ov*o*v) // [i][a][j][b]
	p.mm(blas.NoTrans, blas.NoTrans, ov*o, v, o, 1, p.ovoo, o, t1, v, 0, s2, v)
	x = perm4(x, s2, [4]int{o, v, o, v}, [4]int{0, 2, 1, 3})
	addSym(n2, -1, x, o, v)
	// −P[Σ_kc (kc|ai) t_j^c t_k^b]
	z2 := make([]float64, ov*o*o) // [k][a][i][j]
	p.mm(blas.NoTrans, blas.Trans, ov*o, o, v, 1, p.ovovKAIC, v, t1, v, 0, z2, o)
	y2 := make([]float64, v*oo*v) // [a][i][j][b]
	p.mm(blas.Trans, blas.NoTrans, v*oo, v, o, 1, z2, v*oo, t1, v, 0, y2, v)
	x = perm4(x, y2, [4]int{v, o, o, v}, [4]int{1, 2, 0, 3})
	addSym(n2, -1, x, o, v)

	// Woooo: W[k][l][i][j]
	w4 := make([]float64, oo*oo)
	p.mm(blas.NoTrans, blas.Trans, oo, oo, vv, 1, p.ovovKLCD, vv, tau, vv, 0, w4, oo)
	for k := 0; k < o; k++ {
		for l := 0; l < o; l++ {
			for i := 0; i < o; i++ {
				for j := 0; j < o; j++ {
					s := p.oooo[((k*o+i)*o+l)*o+j]
					for c := 0; c < v; c++ {
						s += p.ovoo[((l*v+c)*o+k)*o+i]*t1[j*v+c] + p.ovoo[((k*v+c)*o+l)*o+j]*t1[i*v+c]
					}
					w4[(k*o+l)*oo+i*o+j] += s
				}
			}
		}
	}
	p.mm(blas.Trans, blas.NoTrans, oo, vv, oo, 1, w4, oo, tau, vv, 1, n2, vv)

	// Wvvvv: the ladder Σ_cd (ac|bd) τ_ij^cd and its t1 parts through
	// Y[ij][ka] = Σ_cd (kd|ac) τ_ij^cd.
	p.mm(blas.NoTrans, blas.Trans, oo, vv, vv, 1, tau, vv, p.vvvv, vv, 1, n2, vv)
	yv := make([]float64, oo*ov)
	p.mm(blas.NoTrans, blas.Trans, oo, ov, vv, 1, tau, vv, p.ovvvKACD, vv, 0, yv, ov)
	zv := make([]float64, oo*vv)
	for ij := 0; ij < oo; ij++ {
		p.mm(blas.Trans, blas.NoTrans, v, v, o, 1, yv[ij*ov:], v, t1, v, 0, zv[ij*vv:], v)
	}
	addSym(n2, -1, zv, o, v)

	// Lvv and Loo.
	tmp := make([]float64, oo*vv)
	for ij := 0; ij < oo; ij++ {
		p.mm(blas.NoTrans, blas.NoTrans, v, v, v, 1, lvv, v, t2[ij*vv:], v, 0, tmp[ij*vv:], v)
	}
	addSym(n2, 1, tmp, o, v)
	p.mm(blas.Trans, blas.NoTrans, o, ov*v, o, 1, loo, o, t2, ov*v, 0, tmp, ov*v)
	addSym(n2, -1, tmp, o, v)

	// Wvoov (wa) and Wvovo (wb), both [(i,a)][(k,c)].
	t2ia := perm4(nil, t2, nT, [4]int{0, 2, 1, 3})   // t_il^ad as [i][a][l][d]
	t2iaSw := perm4(nil, t2, nT, [4]int{0, 3, 1, 2}) // t_il^da as [i][a][l][d]
	wa := make([]float64, ov*ov)
	wb := make([]float64, ov*ov)
	{
		xa := make([]float64, o*ov*v) // [i][k][c][a]
		p.mm(blas.NoTrans, blas.Trans, o, ov*v, v, 1, t1, v, p.ovvv, v, 0, xa, ov*v)
		addPerm4(wa, 1, xa, [4]int{o, o, v, v}, [4]int{0, 3, 1, 2})
		p.mm(blas.NoTrans, blas.Trans, o, ov*v, v, 1, t1, v, p.ovvvKACD, v, 0, xa, ov*v) // [i][k][a][c]
		addPerm4(wb, 1, xa, [4]int{o, o, v, v}, [4]int{0, 2, 1, 3})
	}
	for i := 0; i < o; i++ {
		for a := 0; a < v; a++ {
			ra := wa[(i*v+a)*ov:]
			rb := wb[(i*v+a)*ov:]
			for k := 0; k < o; k++ {
				for c := 0; c < v; c++ {
					sa := p.ovov[((k*v+c)*o+i)*v+a]
					sb := p.oovv[((k*o+i)*v+a)*v+c]
					for l := 0; l < o; l++ {
						tla := t1[l*v+a]
						sa -= p.ovoo[((k*v+c)*o+l)*o+i] * tla
						sb -= p.ovoo[((l*v+c)*o+k)*o+i] * tla
					}
					ra[k*v+c] += sa
					rb[k*v+c] += sb
				}
			}
		}
	}
	u := make([]float64, ov*ov)
	u2 := make([]float64, ov*ov)
	for i := 0; i < o; i++ {
		for a := 0; a < v; a++ {
			for l := 0; l < o; l++ {
				tla := t1[l*v+a]
				for d := 0; d < v; d++ {
					k := ((i*v+a)*o+l)*v + d
					tt := t1[i*v+d] * tla
					u[k] = t2ia[k] - 0.5*t2iaSw[k] - tt
					u2[k] = 0.5*t2iaSw[k] + tt
				}
			}
		}
	}
	p.mm(blas.NoTrans, blas.NoTrans, ov, ov, ov, 1, u, ov, p.ovov, ov, 1, wa, ov)
	p.mm(blas.NoTrans, blas.NoTrans, ov, ov, ov, -0.5, t2ia, ov, p.ovovKAIC, ov, 1, wa, ov)
	p.mm(blas.NoTrans, blas.NoTrans, ov, ov, ov, -1, u2, ov, p.ovovKAIC, ov, 1, wb, ov)
	// P[(2 Wvoov − Wvovo)·t − Wvoov·t'] − P[Wvovo·t'']
	for i := range u {
		u[i] = 2*wa[i] - wb[i]
	}
	r := make([]float64, ov*ov) // [i][a][j][b]
	p.mm(blas.NoTrans, blas.NoTrans, ov, ov, ov, 1, u, ov, t2ia, ov, 0, r, ov)
	p.mm(blas.NoTrans, blas.NoTrans, ov, ov, ov, -1, wa, ov, t2iaSw, ov, 1, r, ov)
	x = perm4(x, r, [4]int{o, v, o, v}, [4]int{0, 2, 1, 3})
	addSym(n2, 1, x, o, v)
	p.mm(blas.NoTrans, blas.NoTrans, ov, ov, ov, 1, wb, ov, t2iaSw, ov, 0, r, ov) // [i][b][j][a]
	x = perm4(x, r, [4]int{o, v, o, v}, [4]int{0, 2, 3, 1})
	addSym(n2, -1, x, o, v)

	// Denominators.
	for i := 0; i < o; i++ {
		for a := 0; a < v; a++ {
			n1[i*v+a] /= p.eo[i] - p.ev[a]
		}
	}
	for i := 0; i < o; i++ {
		for j := 0; j < o; j++ {
			eij := p.eo[i] + p.eo[j]
			for a := 0; a < v; a++ {
				row := n2[((i*o+j)*v+a)*v:]
				for b := 0; b < v; b++ {
					row[b] /= eij - p.ev[a] - p.ev[b]
				}
			}
		}
	}
	return n1, n2
}

// mm is a matrix product on the problem's threads.
func (p *problem) mm(tA, tB blas.Transpose, m, n, k int, alpha float64, a []float64, lda int, b []float64, ldb int, beta float64, c []float64, ldc int) {
	mmT(p.threads, tA, tB, m, n, k, alpha, a, lda, b, ldb, beta, c, ldc)
}

// addSym adds α (X + Xᵀ) to n2, where Xᵀ[i][j][a][b] = X[j][i][b][a].
func addSym(n2 []float64, alpha float64, x []float64, o, v int) {
	for i := 0; i < o; i++ {
		for j := 0; j < o; j++ {
			for a := 0; a < v; a++ {
				row := n2[((i*o+j)*v+a)*v:]
				xr := x[((i*o+j)*v+a)*v:]
				for b := 0; b < v; b++ {
					row[b] += alpha * (xr[b] + x[((j*o+i)*v+b)*v+a])
				}
			}
		}
	}
}

// diis extrapolates amplitudes (Pulay's direct inversion in the iterative
// subspace, with the step t_new − t as the error vector).
type diis struct {
	size       int
	vecs, errs [][]float64
}

func newDIIS(size int) *diis { return &diis{size: size} }

func (d *diis) step(t1, t2, n1, n2 []float64) ([]float64, []float64, int) {
	vec := append(append([]float64(nil), n1...), n2...)
	e := make([]float64, len(vec))
	for i := range n1 {
		e[i] = n1[i] - t1[i]
	}
	for i := range n2 {
		e[len(n1)+i] = n2[i] - t2[i]
	}
	d.vecs = append(d.vecs, vec)
	d.errs = append(d.errs, e)
	if len(d.vecs) > d.size {
		d.vecs, d.errs = d.vecs[1:], d.errs[1:]
	}
	m := len(d.vecs)
	if m < 2 {
		return n1, n2, m
	}
	b := mat.NewDense(m+1, m+1, nil)
	rhs := mat.NewVecDense(m+1, nil)
	for i := 0; i < m; i++ {
		for j := 0; j <= i; j++ {
			var s float64
			for k, x := range d.errs[i] {
				s += x * d.errs[j][k]
			}
			b.Set(i, j, s)
			b.Set(j, i, s)
		}
		b.Set(i, m, -1)
		b.Set(m, i, -1)
	}
	rhs.SetVec(m, -1)
	var c mat.VecDense
	if err := c.SolveVec(b, rhs); err != nil {
		// a singular subspace: restart it from the newest vector
		d.vecs, d.errs = d.vecs[m-1:], d.errs[m-1:]
		return n1, n2, 1
	}
	out := make([]float64, len(vec))
	for i := 0; i < m; i++ {
		ci := c.AtVec(i)
		for k, x := range d.vecs[i] {
			out[k] += ci * x
		}
	}
	return out[:len(n1)], out[len(n1):], m
}
