package dft

import (
	"fmt"
	"math"
	"sort"
	"sync"

	"moltrail/engine/molecule"
)

// GridSpec is the full specification of a molecular integration grid. It
// mirrors the engine's job field for field.
type GridSpec struct {
	Level string
	// RadialScheme: "treutler-m4" or "becke".
	RadialScheme string
	// RadialPoints per atom (before any element scaling: none is applied).
	RadialPoints int
	// AngularOrder is the degree of spherical harmonics integrated exactly
	// by the angular rule (product Gauss–Legendre × trapezoid), odd.
	AngularOrder int
	// Partition: "becke-size-adjusted".
	Partition string
	// Pruning: "none", "zones" (lower angular order close to nuclei) or
	// "zones-outer" (also lower far from them).
	Pruning string
	// DensityCut: grid points whose total density is below this are skipped.
	DensityCut float64
	// BasisCut: a shell is left out of a batch of points where a bound on
	// all its functions and gradients is below this.
	BasisCut float64
}

// weightFloor: points whose quadrature weight (after partitioning) is
// below this are dropped when the grid is built.
const weightFloor = 1e-15

// maxBatch is the largest number of points in one spatial batch.
const maxBatch = 128

// Grid is a molecular integration grid with its points sorted into
// spatially compact batches.
type Grid struct {
	Spec       GridSpec
	X, Y, Z, W []float64
	batches    []batch
	// Atom[p] is the atom whose radial grid point p belongs to; pos, aij
	// and invR are the atom positions and Becke partition parameters
	// (for the derivatives of the weights).
	Atom      []int
	pos       [][3]float64
	aij, invR []float64
}

type batch struct {
	start, end int
	centre     [3]float64
	radius     float64
}

// NPoints is the number of grid points.
func (g *Grid) NPoints() int { return len(g.W) }

// NBatches is the number of spatial batches.
func (g *Grid) NBatches() int { return len(g.batches) }

// Check validates a grid specification.
func (s GridSpec) Check() error {
	switch s.RadialScheme {
	case "treutler-m4", "becke":
	default:
		return fmt.Errorf("grid %q: radial scheme %q is not known (treutler-m4, becke)", s.Level, s.RadialScheme)
	}
	if s.RadialPoints < 5 || s.RadialPoints > 2000 {
		return fmt.Errorf("grid %q: radial points %d outside 5–2000", s.Level, s.RadialPoints)
	}
	if s.AngularOrder < 3 || s.AngularOrder > 301 || s.AngularOrder%2 == 0 {
		return fmt.Errorf("grid %q: angular order %d must be odd, 3–301", s.Level, s.AngularOrder)
	}
	if s.Partition != "becke-size-adjusted" {
		return fmt.Errorf("grid %q: partition %q is not known (becke-size-adjusted)", s.Level, s.Partition)
	}
	switch s.Pruning {
	case "none", "zones", "zones-outer":
	default:
		return fmt.Errorf("grid %q: pruning %q is not known (none, zones, zones-outer)", s.Level, s.Pruning)
	}
	if !(s.DensityCut >= 0 && s.DensityCut < 1e-6) {
		return fmt.Errorf("grid %q: density cutoff %g outside [0, 1e-6)", s.Level, s.DensityCut)
	}
	if !(s.BasisCut >= 0 && s.BasisCut < 1e-4) {
		return fmt.Errorf("grid %q: basis cutoff %g outside [0, 1e-4)", s.Level, s.BasisCut)
	}
	return nil
}

// prunedOrder is the angular order used at radius r (bohr) of an atom of
// Bragg–Slater radius R under the "zones" pruning: degree ≈ L/3 inside
// R/4, ≈ 2L/3 inside R/2, L beyond (each at least 7 and odd).
func prunedOrder(L int, r, R float64) int {
	odd := func(k int) int {
		if k < 7 {
			k = 7
		}
		if k%2 == 0 {
			k++
		}
		if k > L {
			k = L
		}
		return k
	}
	switch {
	case r < 0.25*R:
		return odd(L / 3)
	case r < 0.5*R:
		return odd(2 * L / 3)
	}
	return L
}

// prunedOrderOuter is the angular order under the "zones-outer" pruning:
// as "zones" within R/2 of the nucleus, L out to 6R, and ≈ 2L/3 beyond 6R,
// where the density is small and slowly varying (each at least 7 and odd).
// (At 4R, the boundary falls inside benzene for hydrogen, whose R is
// small, and its integrated electron count error grew threefold.)
func prunedOrderOuter(L int, r, R float64) int {
	if r >= 6*R {
		return prunedOrder(L, 0.25*R, R) // the ≈ 2L/3 of the R/4–R/2 zone
	}
	return prunedOrder(L, r, R)
}

// NewGrid builds the molecular grid of a molecule.
func NewGrid(mol *molecule.Molecule, spec GridSpec, threads int) (*Grid, error) {
	if err := spec.Check(); err != nil {
		return nil, err
	}
	nat := len(mol.Atoms)
	if nat == 0 {
		return nil, fmt.Errorf("grid: molecule %q has no atoms", mol.Name)
	}
	radius := make([]float64, nat)
	for i, a := range mol.Atoms {
		if a.Z < 1 || a.Z >= len(braggRadiusAngstrom) {
			return nil, fmt.Errorf("grid: element %s (Z=%d) has no radial parameters (H–Kr only)", a.Symbol, a.Z)
		}
		radius[i] = braggRadiusAngstrom[a.Z] * molecule.AngstromBohr
	}
	// angular rules by order, built once
	rules := map[int]angularRule{}
	rule := func(L int) angularRule {
		r, ok := rules[L]
		if !ok {
			r, _ = productSphere(L)
			rules[L] = r
		}
		return r
	}
	// atom-centred points (before partitioning)
	type shell struct {
		atom int
		r, w float64
		ang  angularRule
	}
	var shells []shell
	for i, a := range mol.Atoms {
		var rad radialRule
		switch spec.RadialScheme {
		case "treutler-m4":
			rad = treutlerM4(spec.RadialPoints, treutlerXi[a.Z])
		case "becke":
			rm := 0.5 * radius[i]
			if a.Z == 1 {
				rm = radius[i]
			}
			rad = beckeRadial(spec.RadialPoints, rm)
		}
		for k := range rad.r {
			L := spec.AngularOrder
			switch spec.Pruning {
			case "zones":
				L = prunedOrder(L, rad.r[k], radius[i])
			case "zones-outer":
				L = prunedOrderOuter(L, rad.r[k], radius[i])
			}
			shells = append(shells, shell{i, rad.r[k], rad.w[k], rule(L)})
		}
	}
	// Becke weights per shell, in parallel; each shell writes its own slots.
	offs := make([]int, len(shells)+1)
	for i, s := range shells {
		offs[i+1] = offs[i] + len(s.ang.w)
	}
	np := offs[len(shells)]
	X, Y, Z, W := make([]float64, np), make([]float64, np), make([]float64, np), make([]float64, np)
	parent := make([]int, np)
	// size-adjustment parameters a_ij (Becke 1988, appendix)
	aij := make([]float64, nat*nat)
	for i := 0; i < nat; i++ {
		for j := 0; j < nat; j++ {
			chi := radius[i] / radius[j]
			u := (chi - 1) / (chi + 1)
			a := 0.0
			if u != 0 {
				a = u / (u*u - 1)
			}
			a = math.Max(-0.5, math.Min(0.5, a))
			aij[i*nat+j] = a
		}
	}
	invR := make([]float64, nat*nat)
	for i := 0; i < nat; i++ {
		for j := 0; j < nat; j++ {
			if i != j {
				d := mol.Distance(i, j)
				if !(d > 1e-6) {
					return nil, fmt.Errorf("grid: atoms %d (%s) and %d (%s) of %q coincide", i+1, mol.Atoms[i].Symbol, j+1, mol.Atoms[j].Symbol, mol.Name)
				}
				invR[i*nat+j] = 1 / d
			}
		}
	}
	if threads < 1 {
		threads = 1
	}
	var wg sync.WaitGroup
	next := make(chan int, len(shells))
	for i := range shells {
		next <- i
	}
	close(next)
	for t := 0; t < threads; t++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			dist := make([]float64, nat)
			P := make([]float64, nat)
			for si := range next {
				s := shells[si]
				c := mol.Atoms[s.atom].PosBohr
				for k := range s.ang.w {
					p := offs[si] + k
					x := c[0] + s.r*s.ang.x[k]
					y := c[1] + s.r*s.ang.y[k]
					z := c[2] + s.r*s.ang.z[k]
					X[p], Y[p], Z[p] = x, y, z
					parent[p] = s.atom
					w := s.w * s.ang.w[k]
					if nat > 1 {
						w *= beckeWeight(mol, s.atom, x, y, z, aij, invR, dist, P)
					}
					W[p] = w
				}
			}
		}()
	}
	wg.Wait()
	// drop negligible points
	g := &Grid{Spec: spec, aij: aij, invR: invR}
	for _, a := range mol.Atoms {
		g.pos = append(g.pos, a.PosBohr)
	}
	idx := make([]int, 0, np)
	for p := 0; p < np; p++ {
		if W[p] >= weightFloor {
			idx = append(idx, p)
		}
	}
	// spatial batches by recursive bisection along the longest extent
	var split func(ix []int)
	split = func(ix []int) {
		lo := [3]float64{math.Inf(1), math.Inf(1), math.Inf(1)}
		hi := [3]float64{math.Inf(-1), math.Inf(-1), math.Inf(-1)}
		for _, p := range ix {
			q := [3]float64{X[p], Y[p], Z[p]}
			for d := 0; d < 3; d++ {
				lo[d] = math.Min(lo[d], q[d])
				hi[d] = math.Max(hi[d], q[d])
			}
		}
		if len(ix) <= maxBatch {
			b := batch{start: len(g.W), end: len(g.W) + len(ix)}
			for d := 0; d < 3; d++ {
				b.centre[d] = 0.5 * (lo[d] + hi[d])
			}
			for _, p := range ix {
				g.X = append(g.X, X[p])
				g.Y = append(g.Y, Y[p])
				g.Z = append(g.Z, Z[p])
				g.W = append(g.W, W[p])
				g.Atom = append(g.Atom, parent[p])
				dx, dy, dz := X[p]-b.centre[0], Y[p]-b.centre[1], Z[p]-b.centre[2]
				b.radius = math.Max(b.radius, math.Sqrt(dx*dx+dy*dy+dz*dz))
			}
			g.batches = append(g.batches, b)
			return
		}
		d := 0
		for k := 1; k < 3; k++ {
			if hi[k]-lo[k] > hi[d]-lo[d] {
				d = k
			}
		}
		coord := [3][]float64{X, Y, Z}[d]
		// total order (coordinate, then index): the same result from any sort
		sort.Slice(ix, func(a, b int) bool {
			ca, cb := coord[ix[a]], coord[ix[b]]
			if ca != cb {
				return ca < cb
			}
			return ix[a] < ix[b]
		})
		h := len(ix) / 2
		split(ix[:h])
		split(ix[h:])
	}
	if len(idx) > 0 {
		split(idx)
	}
	return g, nil
}

// beckeWeight is the fuzzy-cell weight of atom a at point (x, y, z):
// A. D. Becke, J. Chem. Phys. 88, 2547 (1988), eqs. 11–13 (cell function
// of three iterations of p(μ) = 3μ/2 − μ³/2) with the atomic size
// adjustment of the appendix, eqs. A2–A6.
func beckeWeight(mol *molecule.Molecule, a int, x, y, z float64, aij, invR, dist, P []float64) float64 {
	nat := len(mol.Atoms)
	for i, at := range mol.Atoms {
		dx, dy, dz := x-at.PosBohr[0], y-at.PosBohr[1], z-at.PosBohr[2]
		dist[i] = math.Sqrt(dx*dx + dy*dy + dz*dz)
		P[i] = 1
	}
	for i := 0; i < nat; i++ {
		for j := 0; j < i; j++ {
			mu := (dist[i] - dist[j]) * invR[i*nat+j]
			nu := mu + aij[i*nat+j]*(1-mu*mu)
			f := nu
			for k := 0; k < 3; k++ {
				f = 1.5*f - 0.5*f*f*f
			}
			s := 0.5 * (1 - f)
			// s(ν_ji) = 1 − s(ν_ij) since a_ji = −a_ij and μ_ji = −μ_ij
			P[i] *= s
			P[j] *= 1 - s
		}
	}
	sum := 0.0
	for i := 0; i < nat; i++ {
		sum += P[i]
	}
	if sum == 0 {
		return 0
	}
	return P[a] / sum
}
