package scf

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// spinKind is how a reference treats the two spins.
type spinKind int

const (
	restricted   spinKind = iota // rhf, rks: one set of orbitals, Da = Db
	unrestricted                 // uhf, uks: separate alpha and beta orbitals
	openShell                    // rohf: one set of orbitals, Da ≠ Db
)

func kindOf(ref string) spinKind {
	switch ref {
	case "uhf", "uks":
		return unrestricted
	case "rohf":
		return openShell
	}
	return restricted
}

// energies are the parts of one SCF energy.
type energies struct{ one, two, xc float64 }

// fock builds the spin Fock matrices and the energy parts for the
// densities da, db (restricted: da is used for both spins).
func (sys *system) fock(da, db *mat.SymDense, kind spinKind, xc XC) (fa, fb *mat.SymDense, en energies, err error) {
	a := 1.0
	if xc != nil {
		a = xc.ExactExchange()
	}
	wantK := a != 0
	n := sys.h.SymmetricDim()
	if kind == restricted {
		j, k := sys.jk([]*mat.SymDense{da}, wantK)
		jt := mat.NewSymDense(n, nil)
		jt.ScaleSym(2, j[0])
		fa = mat.NewSymDense(n, nil)
		fa.AddSym(sys.h, jt)
		en.one = 2 * dotSym(da, sys.h)
		en.two = dotSym(da, jt)
		if wantK {
			addScaled(fa, -a, k[0])
			en.two -= a * dotSym(da, k[0])
		}
		if xc != nil {
			exc, va, _, err := xc.Compute(da, da)
			if err != nil {
				return nil, nil, en, fmt.Errorf("scf: exchange–correlation: %v", err)
			}
			fa.AddSym(fa, va)
			en.xc = exc
		}
		return fa, fa, en, nil
	}
	j, k := sys.jk([]*mat.SymDense{da, db}, wantK)
	jt := mat.NewSymDense(n, nil)
	jt.AddSym(j[0], j[1])
	dt := mat.NewSymDense(n, nil)
	dt.AddSym(da, db)
	fa = mat.NewSymDense(n, nil)
	fa.AddSym(sys.h, jt)
	fb = mat.NewSymDense(n, nil)
	fb.AddSym(sys.h, jt)
	en.one = dotSym(dt, sys.h)
	en.two = 0.5 * dotSym(dt, jt)
	if wantK {
		addScaled(fa, -a, k[0])
		addScaled(fb, -a, k[1])
		en.two -= 0.5 * a * (dotSym(da, k[0]) + dotSym(db, k[1]))
	}
	if xc != nil {
		exc, va, vb, err := xc.Compute(da, db)
		if err != nil {
			return nil, nil, en, fmt.Errorf("scf: exchange–correlation: %v", err)
		}
		fa.AddSym(fa, va)
		fb.AddSym(fb, vb)
		en.xc = exc
	}
	return fa, fb, en, nil
}

// orbitals are one spin's orbitals in the orthogonal basis and in the AO basis.
type orbitals struct {
	eps    []float64
	orth   *mat.Dense // m × m, columns in the orthogonal basis
	ao     *mat.Dense // n × m
	nOccup int
}

func newOrbitals(o *orthogonaliser, f *mat.SymDense, nocc int) (*orbitals, error) {
	eps, c, err := diagonalise(f)
	if err != nil {
		return nil, err
	}
	var ao mat.Dense
	ao.Mul(o.x, c)
	return &orbitals{eps: eps, orth: c, ao: &ao, nOccup: nocc}, nil
}

// density is the AO density of the lowest nocc orbitals.
func (orb *orbitals) density(nocc int) *mat.SymDense {
	_, m := orb.ao.Dims()
	occ := make([]float64, m)
	for i := 0; i < nocc; i++ {
		occ[i] = 1
	}
	return densityFrom(orb.ao, occ)
}

// mixed returns a copy with the HOMO (orbital nocc−1) and LUMO rotated into
// each other by theta radians; unchanged when either does not exist.
func (orb *orbitals) mixed(nocc int, theta float64) *orbitals {
	_, m := orb.orth.Dims()
	if nocc < 1 || nocc >= m {
		return orb
	}
	out := &orbitals{eps: orb.eps, nOccup: orb.nOccup}
	out.orth = mat.DenseCopyOf(orb.orth)
	out.ao = mat.DenseCopyOf(orb.ao)
	c, s := math.Cos(theta), math.Sin(theta)
	for _, x := range []*mat.Dense{out.orth, out.ao} {
		r, _ := x.Dims()
		for i := 0; i < r; i++ {
			h, l := x.At(i, nocc-1), x.At(i, nocc)
			x.Set(i, nocc-1, c*h+s*l)
			x.Set(i, nocc, -s*h+c*l)
		}
	}
	return out
}

func occupations(m, nocc int) []float64 {
	occ := make([]float64, m)
	for i := 0; i < nocc; i++ {
		occ[i] = 1
	}
	return occ
}

// solve iterates to self-consistency from the guess densities (nil: core guess).
func solve(sys *system, opt Options, guess [2]*mat.SymDense) (*Result, error) {
	kind := kindOf(opt.Reference)
	var xc XC
	if opt.Reference == "rks" || opt.Reference == "uks" {
		xc = opt.XC
	}
	orth, err := newOrthogonaliser(sys.s, LinearDependenceTol)
	if err != nil {
		return nil, err
	}
	nmo := orth.nmo()
	na, nb := sys.nalpha, sys.nbeta
	if na > nmo {
		return nil, fmt.Errorf("scf: %d alpha electrons need %d orbitals but the basis gives only %d (after removing %d near-linear dependences)", na, na, nmo, orth.dropped)
	}
	res := &Result{
		NuclearRepulsion: sys.enuc, NAlpha: na, NBeta: nb, S: sys.s, H: sys.h,
		Reference: opt.Reference, Guess: opt.Guess, DroppedFunctions: orth.dropped, NMO: nmo,
	}

	// Current densities and (when known) the orbitals that made them.
	var da, db *mat.SymDense
	var orbA, orbB *orbitals
	mixPending := kind == unrestricted && opt.GuessMixing != 0
	if guess[0] != nil {
		da, db = guess[0], guess[1]
	} else {
		h := orth.toOrth(sys.h)
		if orbA, err = newOrbitals(orth, h, na); err != nil {
			return nil, err
		}
		orbB = orbA
		db = orbA.density(nb)
		if kind == unrestricted && opt.GuessMixing != 0 {
			orbA = orbA.mixed(na, opt.GuessMixing)
			mixPending = false
		}
		da = orbA.density(na)
		if na == nb && orbA == orbB {
			db = da
		}
	}
	if kind == restricted {
		db = da
	}

	dd := newDIIS(opt.DIISSize)
	var prevE float64
	var prevA, prevB *mat.SymDense
	var fa, fb *mat.SymDense
	var final []*mat.SymDense // orthogonal-basis operators to diagonalise at the end
	for it := 1; it <= opt.MaxIter; it++ {
		var en energies
		fa, fb, en, err = sys.fock(da, db, kind, xc)
		if err != nil {
			return nil, err
		}
		e := en.one + en.two + en.xc + sys.enuc
		res.OneElectron, res.TwoElectron, res.XC, res.Energy = en.one, en.two, en.xc, e
		if math.IsNaN(e) || math.IsInf(e, 0) {
			return nil, fmt.Errorf("scf: iteration %d gave a non-finite energy", it)
		}

		var fs []*mat.SymDense
		var es []*mat.Dense
		var grad float64
		skipDIIS := false
		switch kind {
		case restricted:
			ea := commutatorError(orth, fa, da, sys.s)
			fs, es, grad = []*mat.SymDense{orth.toOrth(fa)}, []*mat.Dense{ea}, maxAbs(ea)
		case unrestricted:
			ea := commutatorError(orth, fa, da, sys.s)
			eb := commutatorError(orth, fb, db, sys.s)
			fs = []*mat.SymDense{orth.toOrth(fa), orth.toOrth(fb)}
			es = []*mat.Dense{ea, eb}
			grad = math.Max(maxAbs(ea), maxAbs(eb))
		case openShell:
			foa, fob := orth.toOrth(fa), orth.toOrth(fb)
			skipDIIS = orbA == nil
			if orbA == nil {
				// A guess density without orbitals: start from the
				// eigenvectors of the spin-averaged operator.
				fc := mat.NewSymDense(nmo, nil)
				fc.AddSym(foa, fob)
				fc.ScaleSym(0.5, fc)
				if orbA, err = newOrbitals(orth, fc, na); err != nil {
					return nil, err
				}
			}
			feff, g := rohfEffective(foa, fob, orbA.orth, nb, na)
			fs, es, grad = []*mat.SymDense{feff}, []*mat.Dense{g}, maxAbs(g)
		}

		// The density change is measured in the orthonormal basis, where it
		// stays well conditioned when the AO basis is nearly dependent.
		var rms float64
		var nextA, nextB *mat.SymDense
		if kind == restricted {
			oa := orth.density(sys.s, da)
			rms = rmsDiff([]*mat.SymDense{oa}, []*mat.SymDense{prevA})
			nextA, nextB = oa, oa
		} else {
			oa, ob := orth.density(sys.s, da), orth.density(sys.s, db)
			rms = rmsDiff([]*mat.SymDense{oa, ob}, []*mat.SymDense{prevA, prevB})
			nextA, nextB = oa, ob
		}
		dE := e - prevE
		done := it > 1 && math.Abs(dE) < opt.EnergyTolHartree && rms < opt.DensityTol && grad < opt.GradientTol
		var fx []*mat.SymDense
		nd := 0
		switch {
		case done || it == opt.MaxIter:
		case skipDIIS:
			// The gradient of a density without its own orbitals says
			// little; keep it out of the subspace.
			fx = fs
		default:
			dd.push(fs, es)
			fx = dd.extrapolate()
			nd = dd.len()
		}
		res.Iterations = append(res.Iterations, Iteration{Iter: it, Energy: e, DeltaE: dE, DensityRMS: rms, OrbitalGradient: grad, DIISVectors: nd})
		if opt.Progress != nil {
			fmt.Fprintf(opt.Progress, "%s cycle %3d   energy %19.12f hartree   change %+10.3e   density rms %9.3e   gradient %9.3e   diis %d\n",
				opt.Reference, it, e, dE, rms, grad, nd)
		}
		if fx == nil {
			res.Converged = done
			final = fs
			break
		}
		if opt.LevelShiftHartree > 0 {
			fx = levelShift(fx, orth, sys.s, da, db, kind, opt.LevelShiftHartree)
		}
		prevE, prevA, prevB = e, nextA, nextB
		switch kind {
		case restricted:
			if orbA, err = newOrbitals(orth, fx[0], na); err != nil {
				return nil, err
			}
			orbB = orbA
			da = orbA.density(na)
			db = da
		case unrestricted:
			if orbA, err = newOrbitals(orth, fx[0], na); err != nil {
				return nil, err
			}
			if orbB, err = newOrbitals(orth, fx[1], nb); err != nil {
				return nil, err
			}
			if mixPending {
				// The history so far is spin-symmetric; keeping it would
				// pull DIIS back to the restricted solution.
				orbA = orbA.mixed(na, opt.GuessMixing)
				mixPending = false
				dd = newDIIS(opt.DIISSize)
			}
			da, db = orbA.density(na), orbB.density(nb)
		case openShell:
			// The effective operator is expressed in the orthogonal basis;
			// its eigenvectors are the new orbitals.
			if orbA, err = newOrbitals(orth, fx[0], na); err != nil {
				return nil, err
			}
			orbB = orbA
			da, db = orbA.density(na), orbA.density(nb)
		}
	}

	// Final orbitals: eigenvectors of the last unextrapolated operator.
	fA, err := newOrbitals(orth, final[0], na)
	if err != nil {
		return nil, err
	}
	fB := fA
	if kind == unrestricted {
		if fB, err = newOrbitals(orth, final[1], nb); err != nil {
			return nil, err
		}
	}
	res.Ca, res.Cb = fA.ao, fB.ao
	res.Ea, res.Eb = fA.eps, fB.eps
	res.OccA = occupations(nmo, na)
	res.OccB = res.OccA
	if na != nb {
		res.OccB = occupations(nmo, nb)
	}
	res.Da = fA.density(na)
	res.Db = res.Da
	if kind != restricted {
		res.Db = fB.density(nb)
	}
	res.Fa, res.Fb = fa, fb
	sz := 0.5 * float64(na-nb)
	switch kind {
	case restricted, openShell:
		res.S2 = sz * (sz + 1)
	case unrestricted:
		res.S2 = spinSquared(res.Da, res.Db, sys.s, na, nb)
	}
	return res, nil
}

// spinSquared is ⟨S²⟩ of a single determinant:
// Sz(Sz+1) + Nβ − tr(Dα S Dβ S).
func spinSquared(da, db, s *mat.SymDense, na, nb int) float64 {
	var as, bs, p mat.Dense
	as.Mul(da, s)
	bs.Mul(db, s)
	p.Mul(&as, &bs)
	tr := 0.0
	n, _ := p.Dims()
	for i := 0; i < n; i++ {
		tr += p.At(i, i)
	}
	sz := 0.5 * float64(na-nb)
	return sz*(sz+1) + float64(nb) - tr
}

// levelShift adds shift·(1 − Pσ) to each spin's operator in the orthogonal
// basis, Pσ = X†S Dσ S X the occupied projector (ROHF: shift on the
// virtual orbitals and half of it on the open shell).
func levelShift(fx []*mat.SymDense, o *orthogonaliser, s, da, db *mat.SymDense, kind spinKind, shift float64) []*mat.SymDense {
	proj := func(d *mat.SymDense) *mat.SymDense {
		var t, u mat.Dense
		t.Mul(s, d)
		u.Mul(&t, s)
		return o.toOrth(symmetrise(&u))
	}
	m := o.nmo()
	out := make([]*mat.SymDense, len(fx))
	for k, f := range fx {
		g := mat.NewSymDense(m, nil)
		g.CopySym(f)
		switch {
		case kind == openShell:
			addScaled(g, -0.5*shift, proj(da))
			addScaled(g, -0.5*shift, proj(db))
		case k == 0:
			addScaled(g, -shift, proj(da))
		default:
			addScaled(g, -shift, proj(db))
		}
		for i := 0; i < m; i++ {
			g.SetSym(i, i, g.At(i, i)+shift)
		}
		out[k] = g
	}
	return out
}
