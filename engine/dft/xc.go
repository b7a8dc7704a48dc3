package dft

import (
	"fmt"
	"math"
	"runtime"
	"sync"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/basis"
	"moltrail/engine/molecule"
)

// XC integrates a functional over a molecular grid: the exchange–
// correlation energy and its Fock-matrix contribution for given densities.
type XC struct {
	fn      *Functional
	grid    *Grid
	shells  []gridShell
	aexps   atomExps
	nbf     int
	threads int
	// per batch: significant shells and their functions
	blist  [][]int
	bfuncs [][]int
	lmax   int
	nchunk int
	// cache[b] holds batch b's basis values between calls when the batch
	// fits the cache budget (phi == nil: recomputed each time)
	cache []batchCache

	electrons float64
}

// basisCacheBytes is the memory that basis values (and gradients) kept
// on the grid between Compute calls may take; batches beyond it are
// evaluated afresh each call. Which batches are kept depends only on the
// problem, and cached values are the same bits as recomputed ones.
var basisCacheBytes = 1 << 30

type batchCache struct {
	batchValues
	filled bool
}

// NewXC prepares the XC integration of a functional (see NewFunctional for
// the definitions accepted) for a basis on a molecule. threads < 1 means
// all cores; the results do not depend on it.
func NewXC(mol *molecule.Molecule, mb *basis.Molecular, functionalDef string, spec GridSpec, threads int) (*XC, error) {
	fn, err := NewFunctional(functionalDef)
	if err != nil {
		return nil, err
	}
	if threads < 1 {
		threads = runtime.NumCPU()
	}
	g, err := NewGrid(mol, spec, threads)
	if err != nil {
		return nil, err
	}
	x := &XC{fn: fn, grid: g, nbf: mb.NBasis, threads: threads}
	for _, sh := range mb.Shells {
		if sh.L > 7 {
			return nil, fmt.Errorf("dft: basis %q: shell of angular momentum %d is beyond the grid code's l ≤ 7", mb.Set.Name, sh.L)
		}
		x.lmax = max(x.lmax, sh.L)
	}
	x.shells, x.aexps = prepareShells(mb, spec.BasisCut)
	x.blist = make([][]int, len(g.batches))
	x.bfuncs = make([][]int, len(g.batches))
	for b, bt := range g.batches {
		for si, s := range x.shells {
			d := math.Sqrt(sq3(bt.centre, s.centre))
			if d-bt.radius <= s.extent {
				x.blist[b] = append(x.blist[b], si)
				for k := 0; k < s.nfunc; k++ {
					x.bfuncs[b] = append(x.bfuncs[b], s.offset+k)
				}
			}
		}
	}
	x.cache = make([]batchCache, len(g.batches))
	arrays := 2 // Φ and its transpose
	if fn.gga {
		arrays = 5
	}
	used := 0
	for b := range g.batches {
		_, ld, _, npad := x.batchDims(b)
		size := 8 * arrays * ld * npad
		if used+size > basisCacheBytes {
			break
		}
		used += size
		c := &x.cache[b]
		c.phi = make([]float64, 0) // slot reserved; allocated on first use
	}
	// a fixed number of chunks (from the problem size only, never from the
	// thread count), each with its own accumulators, summed in order
	const budget = 256 << 20
	per := 2 * 8 * mb.NBasis * mb.NBasis
	x.nchunk = min(16, len(g.batches), max(1, budget/max(per, 1)))
	if x.nchunk < 1 {
		x.nchunk = 1
	}
	return x, nil
}

func sq3(a, b [3]float64) float64 {
	dx, dy, dz := a[0]-b[0], a[1]-b[1], a[2]-b[2]
	return dx*dx + dy*dy + dz*dz
}

// Grid is the integration grid.
func (x *XC) Grid() *Grid { return x.grid }

// Functional returns the functional being integrated.
func (x *XC) Functional() *Functional { return x.fn }

// Definition is the stored functional definition string.
func (x *XC) Definition() string { return x.fn.def }

// ExactExchange is the fraction of Hartree–Fock exchange the SCF must add.
func (x *XC) ExactExchange() float64 { return x.fn.hf }

// IntegratedElectrons is ∫ρ over the grid from the last Compute.
func (x *XC) IntegratedElectrons() float64 { return x.electrons }

type accum struct {
	va, vb []float64 // nbf × nbf, only the upper triangle is meaningful
	exc, n float64
}

// Compute returns the XC energy and potential matrices for the α and β
// density matrices. When Da and Db are the same matrix the density is
// treated as restricted (each the half of the total) and Va == Vb.
func (x *XC) Compute(Da, Db *mat.SymDense) (float64, *mat.SymDense, *mat.SymDense, error) {
	if Da == nil || Db == nil {
		return 0, nil, nil, fmt.Errorf("dft: density matrix missing")
	}
	n := x.nbf
	if Da.SymmetricDim() != n || Db.SymmetricDim() != n {
		return 0, nil, nil, fmt.Errorf("dft: density matrices are %d×%d and %d×%d, the basis has %d functions", Da.SymmetricDim(), Da.SymmetricDim(), Db.SymmetricDim(), Db.SymmetricDim(), n)
	}
	restricted := Da == Db
	full := func(d *mat.SymDense, f float64) []float64 {
		out := make([]float64, n*n)
		for i := 0; i < n; i++ {
			for j := i; j < n; j++ {
				v := f * d.At(i, j)
				out[i*n+j], out[j*n+i] = v, v
			}
		}
		return out
	}
	var da, db []float64
	if restricted {
		da = full(Da, 2) // total density
	} else {
		da, db = full(Da, 1), full(Db, 1)
	}
	acc := make([]accum, x.nchunk)
	nb := len(x.grid.batches)
	jobs := make(chan int, x.nchunk)
	for c := 0; c < x.nchunk; c++ {
		jobs <- c
	}
	close(jobs)
	var wg sync.WaitGroup
	var firstErr error
	var mu sync.Mutex
	for t := 0; t < min(x.threads, x.nchunk); t++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			w := x.newWork()
			for c := range jobs {
				a := &acc[c]
				a.va = make([]float64, n*n)
				if !restricted {
					a.vb = make([]float64, n*n)
				}
				for b := c * nb / x.nchunk; b < (c+1)*nb/x.nchunk; b++ {
					if err := x.batch(b, da, db, a, w); err != nil {
						mu.Lock()
						if firstErr == nil {
							firstErr = err
						}
						mu.Unlock()
						return
					}
				}
			}
		}()
	}
	wg.Wait()
	if firstErr != nil {
		return 0, nil, nil, firstErr
	}
	va := make([]float64, n*n)
	var vb []float64
	if !restricted {
		vb = make([]float64, n*n)
	}
	exc, ne := 0.0, 0.0
	for c := range acc {
		exc += acc[c].exc
		ne += acc[c].n
		for i := 0; i < n; i++ {
			for j := i; j < n; j++ {
				va[i*n+j] += acc[c].va[i*n+j]
				if vb != nil {
					vb[i*n+j] += acc[c].vb[i*n+j]
				}
			}
		}
	}
	x.electrons = ne
	if math.IsNaN(exc) || math.IsInf(exc, 0) {
		return 0, nil, nil, fmt.Errorf("dft: %s: the exchange–correlation energy is not finite", x.fn.def)
	}
	Va := mat.NewSymDense(n, va)
	if restricted {
		return exc, Va, Va, nil
	}
	return exc, Va, mat.NewSymDense(n, vb), nil
}

// work is one worker's scratch space. Per-batch arrays of basis values
// are row-major with ld = nl rounded up to 8 columns and the rows rounded
// up to 4, the padding zero, as the block products want them.
type work struct {
	phi        []float64 // npad × ld
	grad       [3][]float64
	phiT       []float64 // nl × npad: Φ column-major
	x          []float64 // npad × ld: Φ·D
	z          []float64 // npad × ld: weighted potential rows
	dloc       []float64 // nl × ld
	vloc       []float64 // nl4 × ld
	rho, sigma []float64
	e, vrho    []float64
	vsigma     []float64
	gra, grb   [3][]float64 // density gradients per point
	ew         *evalWork
}

// batchDims are a batch's array sizes: nl functions padded to ld columns,
// np points padded to npad rows.
func (x *XC) batchDims(b int) (nl, ld, np, npad int) {
	bt := x.grid.batches[b]
	nl = len(x.bfuncs[b])
	np = bt.end - bt.start
	return nl, roundUp(nl, blockCols), np, roundUp(np, blockRows)
}

func (x *XC) newWork() *work {
	m := roundUp(maxBatch, blockRows)
	nf := 0
	for _, f := range x.bfuncs {
		nf = max(nf, len(f))
	}
	ld := roundUp(nf, blockCols)
	w := &work{
		phi: make([]float64, m*ld), phiT: make([]float64, nf*m), x: make([]float64, m*ld), z: make([]float64, m*ld),
		dloc: make([]float64, nf*ld), vloc: make([]float64, ld*ld),
		rho: make([]float64, 2*m), sigma: make([]float64, 3*m),
		e: make([]float64, m), vrho: make([]float64, 2*m), vsigma: make([]float64, 3*m),
		ew: newEvalWork(x.lmax, m, x.aexps.maxDistinct()),
	}
	if x.fn.gga {
		for d := 0; d < 3; d++ {
			w.grad[d] = make([]float64, m*ld)
			w.gra[d] = make([]float64, m)
			w.grb[d] = make([]float64, m)
		}
	}
	return w
}

// batchValues are a batch's basis values in the padded layout: Φ and ∇Φ
// row-major (npad × ld), and Φ column-major (nl × npad) for the density
// product.
type batchValues struct {
	phi, phiT []float64
	grad      [3][]float64
}

// basisValues returns the batch's basis values: from the cache when the
// batch has a slot there (filled on first use), computed into the worker's
// arrays otherwise.
func (x *XC) basisValues(b int, w *work) batchValues {
	nl, ld, _, npad := x.batchDims(b)
	c := &x.cache[b]
	if c.phi != nil && c.filled {
		return c.batchValues
	}
	var v batchValues
	if c.phi != nil {
		v.phi, v.phiT = make([]float64, npad*ld), make([]float64, nl*npad)
		if x.fn.gga {
			for d := 0; d < 3; d++ {
				v.grad[d] = make([]float64, npad*ld)
			}
		}
	} else {
		v.phi, v.phiT = w.phi[:npad*ld], w.phiT[:nl*npad]
		if x.fn.gga {
			for d := 0; d < 3; d++ {
				v.grad[d] = w.grad[d][:npad*ld]
			}
		}
	}
	x.evalBatch(b, v, w)
	if c.phi != nil {
		c.batchValues, c.filled = v, true
	}
	return v
}

// evalBatch evaluates the batch's functions into padded arrays.
func (x *XC) evalBatch(b int, v batchValues, w *work) {
	bt := x.grid.batches[b]
	nl, ld, np, npad := x.batchDims(b)
	phi, grad := v.phi, v.grad
	evalShells(x.shells, x.aexps, x.blist[b], x.grid.X[bt.start:bt.end], x.grid.Y[bt.start:bt.end], x.grid.Z[bt.start:bt.end], ld, phi, grad, w.ew)
	clearPad := func(a []float64) {
		if a == nil {
			return
		}
		for p := 0; p < np; p++ {
			row := a[p*ld : (p+1)*ld]
			for k := nl; k < ld; k++ {
				row[k] = 0
			}
		}
		for k := np * ld; k < npad*ld; k++ {
			a[k] = 0
		}
	}
	clearPad(phi)
	for d := 0; d < 3; d++ {
		clearPad(grad[d])
	}
	pt := v.phiT[:nl*npad]
	for p := 0; p < npad; p++ {
		row := phi[p*ld : p*ld+nl]
		for k, f := range row {
			pt[k*npad+p] = f
		}
	}
}

// density computes X = Φ·D_loc and ρ_p = Σ X∘Φ, ∇ρ_p = 2 Σ X∘∇Φ.
func (x *XC) density(b int, d []float64, bv batchValues, w *work, rho []float64, rstride int, grho [3][]float64) {
	phi, grad := bv.phi, bv.grad
	n := x.nbf
	funcs := x.bfuncs[b]
	nl, ld, np, npad := x.batchDims(b)
	dl := w.dloc[:nl*ld]
	for i, fi := range funcs {
		row := dl[i*ld : (i+1)*ld]
		src := d[fi*n : (fi+1)*n]
		for j, fj := range funcs {
			row[j] = src[fj]
		}
		for j := nl; j < ld; j++ {
			row[j] = 0
		}
	}
	X := w.x[:npad*ld]
	gemmCM(npad, ld, nl, bv.phiT, npad, dl, ld, X, ld, false)
	for p := 0; p < np; p++ {
		row := X[p*ld : p*ld+nl]
		ph := phi[p*ld : p*ld+nl]
		ph = ph[:len(row)]
		s := 0.0
		for k, v := range row {
			s += v * ph[k]
		}
		rho[p*rstride] = s
		if grho[0] != nil {
			gx := grad[0][p*ld : p*ld+nl]
			gy := grad[1][p*ld : p*ld+nl]
			gz := grad[2][p*ld : p*ld+nl]
			gx, gy, gz = gx[:len(row)], gy[:len(row)], gz[:len(row)]
			var tx, ty, tz float64
			for k, v := range row {
				tx += v * gx[k]
				ty += v * gy[k]
				tz += v * gz[k]
			}
			grho[0][p], grho[1][p], grho[2][p] = 2*tx, 2*ty, 2*tz
		}
	}
}

// potential forms Z_pk = w_p (½ vρ_p φ_pk + G_p·∇φ_pk) and adds
// Φᵀ Z + Zᵀ Φ to the upper triangle of v.
func (x *XC) potential(b int, bv batchValues, wts, vr []float64, vrStride int, G [3][]float64, w *work, v []float64) {
	funcs := x.bfuncs[b]
	nl, ld, np, _ := x.batchDims(b)
	phi, grad := bv.phi, bv.grad
	Z := w.z[:np*ld]
	for p := 0; p < np; p++ {
		a := 0.5 * wts[p] * vr[p*vrStride]
		z := Z[p*ld : (p+1)*ld]
		ph := phi[p*ld : (p+1)*ld]
		ph = ph[:len(z)]
		if G[0] == nil {
			for k := range z {
				z[k] = a * ph[k]
			}
			continue
		}
		gx, gy, gz := wts[p]*G[0][p], wts[p]*G[1][p], wts[p]*G[2][p]
		px := grad[0][p*ld : (p+1)*ld]
		py := grad[1][p*ld : (p+1)*ld]
		pz := grad[2][p*ld : (p+1)*ld]
		px, py, pz = px[:len(z)], py[:len(z)], pz[:len(z)]
		for k := range z {
			z[k] = a*ph[k] + gx*px[k] + gy*py[k] + gz*pz[k]
		}
	}
	// W = Φᵀ Z (Φ is its own column-major transpose); symmetric for LDA,
	// where only the blocks on and above the diagonal are needed.
	m := roundUp(nl, blockRows)
	W := w.vloc[:m*ld]
	lda := G[0] == nil
	gemmCM(m, ld, np, phi, ld, Z, ld, W, ld, lda)
	n := x.nbf
	for i, fi := range funcs {
		vrow := v[fi*n : (fi+1)*n]
		wrow := W[i*ld : (i+1)*ld]
		for j := i; j < nl; j++ {
			fj := funcs[j]
			var s float64
			if lda {
				s = 2 * wrow[j]
			} else {
				s = wrow[j] + W[j*ld+i]
			}
			// funcs increase, so fi ≤ fj: the upper triangle
			vrow[fj] += s
		}
	}
}

func (x *XC) batch(b int, da, db []float64, acc *accum, w *work) error {
	bt := x.grid.batches[b]
	if len(x.bfuncs[b]) == 0 {
		return nil
	}
	np := bt.end - bt.start
	W := x.grid.W[bt.start:bt.end]
	gga := x.fn.gga
	bv := x.basisValues(b, w)
	cut := x.grid.Spec.DensityCut
	if db == nil {
		x.density(b, da, bv, w, w.rho, 1, w.gra)
		for p := 0; p < np; p++ {
			acc.n += W[p] * w.rho[p]
			if gga {
				w.sigma[p] = w.gra[0][p]*w.gra[0][p] + w.gra[1][p]*w.gra[1][p] + w.gra[2][p]*w.gra[2][p]
			}
			if !(w.rho[p] > cut) {
				w.rho[p] = 0 // screened: the kernel returns zeros
			}
		}
		x.fn.EvalUnpolarized(w.rho[:np], w.sigma[:np], w.e[:np], w.vrho[:np], w.vsigma[:np])
		for p := 0; p < np; p++ {
			acc.exc += W[p] * w.e[p]
		}
		var G [3][]float64
		if gga {
			// G = 2 vσ ∇ρ, kept in place of ∇ρ
			for p := 0; p < np; p++ {
				f := 2 * w.vsigma[p]
				w.gra[0][p] *= f
				w.gra[1][p] *= f
				w.gra[2][p] *= f
			}
			G = w.gra
		}
		x.potential(b, bv, W, w.vrho, 1, G, w, acc.va)
		return nil
	}
	x.density(b, da, bv, w, w.rho, 2, w.gra)
	x.density(b, db, bv, w, w.rho[1:], 2, w.grb)
	for p := 0; p < np; p++ {
		acc.n += W[p] * (w.rho[2*p] + w.rho[2*p+1])
		if gga {
			a, bb := w.gra, w.grb
			w.sigma[3*p] = a[0][p]*a[0][p] + a[1][p]*a[1][p] + a[2][p]*a[2][p]
			w.sigma[3*p+1] = a[0][p]*bb[0][p] + a[1][p]*bb[1][p] + a[2][p]*bb[2][p]
			w.sigma[3*p+2] = bb[0][p]*bb[0][p] + bb[1][p]*bb[1][p] + bb[2][p]*bb[2][p]
		}
		if !(w.rho[2*p]+w.rho[2*p+1] > cut) {
			w.rho[2*p], w.rho[2*p+1] = 0, 0
		}
	}
	x.fn.EvalPolarized(w.rho[:2*np], w.sigma[:3*np], w.e[:np], w.vrho[:2*np], w.vsigma[:3*np])
	for p := 0; p < np; p++ {
		acc.exc += W[p] * w.e[p]
	}
	var Ga, Gb [3][]float64
	if gga {
		// Gα = 2 vσαα ∇ρα + vσαβ ∇ρβ, Gβ = 2 vσββ ∇ρβ + vσαβ ∇ρα
		for p := 0; p < np; p++ {
			saa, sab, sbb := w.vsigma[3*p], w.vsigma[3*p+1], w.vsigma[3*p+2]
			for d := 0; d < 3; d++ {
				ga, gb := w.gra[d][p], w.grb[d][p]
				w.gra[d][p] = 2*saa*ga + sab*gb
				w.grb[d][p] = 2*sbb*gb + sab*ga
			}
		}
		Ga, Gb = w.gra, w.grb
	}
	x.potential(b, bv, W, w.vrho, 2, Ga, w, acc.va)
	x.potential(b, bv, W, w.vrho[1:], 2, Gb, w, acc.vb)
	return nil
}
