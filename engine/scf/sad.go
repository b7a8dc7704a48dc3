package scf

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/basis"
	"moltrail/engine/molecule"
)

// Settings of the atomic SCF behind the SAD guess: a guess needs only a
// loosely converged density.
const (
	sadMaxIter      = 60
	sadEnergyTol    = 1e-8
	sadGradientTol  = 1e-5
	sadDegeneracyEh = 1e-5 // orbital energies closer than this form one shell
)

// sadDensity returns the block-diagonal superposition of neutral,
// spherically averaged atomic densities in the basis mb (trace of D S equal
// to the molecule's nuclear charge).
func sadDensity(m *molecule.Molecule, mb *basis.Molecular, threads int, schwarz float64) (*mat.SymDense, error) {
	n := mb.NBasis
	d := mat.NewSymDense(n, nil)
	cache := map[string]*mat.SymDense{}
	start := 0
	for ia, a := range m.Atoms {
		cnt := 0
		for start+cnt < n && mb.FuncAtom[start+cnt] == ia {
			cnt++
		}
		if cnt == 0 {
			continue
		}
		da, ok := cache[a.Symbol]
		if !ok {
			var err error
			da, err = atomDensity(a, mb, threads, schwarz)
			if err != nil {
				return nil, err
			}
			cache[a.Symbol] = da
		}
		if da.SymmetricDim() != cnt {
			return nil, fmt.Errorf("scf: atomic guess for %s (atom %d) has %d functions, the molecule's basis %d on that atom", a.Symbol, ia+1, da.SymmetricDim(), cnt)
		}
		for i := 0; i < cnt; i++ {
			for j := i; j < cnt; j++ {
				d.SetSym(start+i, start+j, da.At(i, j))
			}
		}
		start += cnt
	}
	if start != n {
		return nil, fmt.Errorf("scf: basis functions are not grouped atom by atom; the atomic guess cannot be placed (use the core guess)")
	}
	return d, nil
}

// atomDensity runs the fractional-occupation, spin-restricted SCF of the
// neutral atom of a's element in the functions the basis puts on it.
func atomDensity(a molecule.Atom, mb *basis.Molecular, threads int, schwarz float64) (*mat.SymDense, error) {
	at, err := molecule.NewAtom(a.Symbol, 0, 0, 0)
	if err != nil {
		return nil, err
	}
	am := &molecule.Molecule{Name: a.Symbol, Atoms: []molecule.Atom{at}}
	ab, err := basis.Build(mb.Set, am, mb.Angular)
	if err != nil {
		return nil, fmt.Errorf("scf: atomic guess for %s: %v", a.Symbol, err)
	}
	sys, err := newSystem(am, ab, threads, schwarz, 0, nil, nil)
	if err != nil {
		return nil, fmt.Errorf("scf: atomic guess for %s: %v", a.Symbol, err)
	}
	return atomicSCF(sys, at.Z)
}

// atomicSCF iterates F = H + J[D] − ½K[D] for the spin-summed density D of
// nelec electrons with shell-averaged fractional occupation, and returns D.
// A density that has not fully converged after sadMaxIter iterations is
// still a usable guess and is returned as it is.
func atomicSCF(sys *system, nelec int) (*mat.SymDense, error) {
	orth, err := newOrthogonaliser(sys.s, LinearDependenceTol)
	if err != nil {
		return nil, err
	}
	if 2*orth.nmo() < nelec {
		return nil, fmt.Errorf("scf: atomic guess: %d electrons do not fit in %d orbitals", nelec, orth.nmo())
	}
	build := func(f *mat.SymDense) (*mat.SymDense, error) {
		orb, err := newOrbitals(orth, f, 0)
		if err != nil {
			return nil, err
		}
		occ := configOccupations(orb.eps, nelec)
		if occ == nil {
			occ = shellOccupations(orb.eps, float64(nelec))
		}
		return densityFrom(orb.ao, occ), nil
	}
	d, err := build(orth.toOrth(sys.h))
	if err != nil {
		return nil, err
	}
	n := sys.h.SymmetricDim()
	dd := newDIIS(DefaultDIISSize)
	prevE := 0.0
	for it := 1; it <= sadMaxIter; it++ {
		j, k := sys.jk([]*mat.SymDense{d}, true)
		f := mat.NewSymDense(n, nil)
		f.AddSym(sys.h, j[0])
		addScaled(f, -0.5, k[0])
		e := dotSym(d, sys.h) + 0.5*dotSym(d, j[0]) - 0.25*dotSym(d, k[0])
		if math.IsNaN(e) {
			return nil, fmt.Errorf("scf: atomic guess: non-finite energy")
		}
		g := commutatorError(orth, f, d, sys.s)
		if it > 1 && math.Abs(e-prevE) < sadEnergyTol && maxAbs(g) < sadGradientTol {
			break
		}
		prevE = e
		dd.push([]*mat.SymDense{orth.toOrth(f)}, []*mat.Dense{g})
		if d, err = build(dd.extrapolate()[0]); err != nil {
			return nil, err
		}
	}
	return d, nil
}

// configOccupations occupies the orbitals of a spherical atom by the
// ground-state configuration of the neutral atom with nelec electrons: the
// orbitals come in degenerate sets of 2l+1, which identifies l; for each l
// the sets are filled in order of energy with that l's electron count, the
// last set sharing the remainder equally. It returns nil when the orbitals
// do not show that pattern or the basis lacks orbitals of some l, and the
// caller then fills by energy alone.
func configOccupations(eps []float64, nelec int) []float64 {
	need := electronsPerL(nelec)
	occ := make([]float64, len(eps))
	for i := 0; i < len(eps); {
		j := i + 1
		for j < len(eps) && eps[j]-eps[i] < sadDegeneracyEh {
			j++
		}
		g := j - i
		if g%2 == 0 || g > 9 {
			return nil
		}
		l := (g - 1) / 2
		if left := need[l]; left > 0 {
			w := math.Min(2, left/float64(g))
			for k := i; k < j; k++ {
				occ[k] = w
			}
			need[l] -= w * float64(g)
		}
		i = j
	}
	for _, left := range need {
		if left > 1e-12 {
			return nil
		}
	}
	return occ
}

// electronsPerL counts the electrons of each angular momentum (s, p, d, f,
// g) in the ground-state configuration of the neutral atom with z
// electrons: Madelung (n+l, n) order, with the 3d⁵4s¹ and 3d¹⁰4s¹
// exceptions of Cr and Cu.
func electronsPerL(z int) [5]float64 {
	var n [5]float64
	switch z {
	case 24: // [Ar] 3d5 4s1
		return [5]float64{7, 12, 5}
	case 29: // [Ar] 3d10 4s1
		return [5]float64{7, 12, 10}
	}
	left := z
	for sum := 1; left > 0; sum++ {
		for l := (sum - 1) / 2; l >= 0 && left > 0; l-- {
			if sum-l <= l || l > 4 { // principal quantum number n = sum − l must exceed l
				continue
			}
			k := min(left, 2*(2*l+1))
			n[l] += float64(k)
			left -= k
		}
	}
	return n
}

// shellOccupations fills orbitals (energies ascending) with nelec electrons,
// at most two per orbital, a set of degenerate orbitals sharing what is
// left equally.
func shellOccupations(eps []float64, nelec float64) []float64 {
	occ := make([]float64, len(eps))
	left := nelec
	for i := 0; i < len(eps) && left > 1e-12; {
		j := i + 1
		for j < len(eps) && eps[j]-eps[i] < sadDegeneracyEh {
			j++
		}
		g := float64(j - i)
		w := math.Min(2, left/g)
		for k := i; k < j; k++ {
			occ[k] = w
		}
		left -= w * g
		i = j
	}
	return occ
}
