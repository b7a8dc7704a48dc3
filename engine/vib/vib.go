// Package vib computes harmonic vibrational frequencies: the Cartesian
// Hessian by finite differences (of analytic gradients, or of energies when
// a method has no analytic gradient), its mass-weighted form with overall
// translation and rotation projected out, the harmonic wavenumbers
// (imaginary ones given as negative numbers), the normal modes, reduced
// masses and the zero-point energy, and the kind of stationary point.
//
// Displacements are taken along the 3N−6 (3N−5 for a linear molecule)
// Cartesian directions orthogonal to overall translation and rotation
// (engine/opt.InternalDirections), so a water Hessian takes 6 gradients
// rather than 18. The Hessian built from them is exactly free of rigid
// motion; mass weighting keeps it so, and the vibrational problem is solved
// in the orthogonal complement of the mass-weighted rigid motions, which
// gives exactly 3N−6 (3N−5) frequencies with no near-zero rigid-body values
// to sort out.
//
// At a geometry that is not stationary the projection of rotations is not
// exact (the gradient couples to them) and harmonic frequencies have no
// clear meaning: Analysis.Character says so.
//
// The package knows nothing of how energies and gradients are made: callers
// pass functions, as for engine/opt.
package vib

import (
	"errors"
	"fmt"
	"io"
	"math"
	"sort"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/molecule"
	"moltrail/engine/opt"
)

// Gradient returns the energy (hartree) and gradient (hartree/bohr, 3N) at
// Cartesian coordinates x (bohr, 3N).
type Gradient func(x []float64) (float64, []float64, error)

// Energy returns the energy (hartree) at x (bohr, 3N).
type Energy func(x []float64) (float64, error)

// Options control the finite differences.
type Options struct {
	// StepBohr is the displacement along each direction (bohr).
	StepBohr float64
	// Workers is the number of displaced calculations run at once (≥ 1).
	Workers int
	// Progress receives one line per finished displaced calculation.
	Progress io.Writer
}

// Hessian is a Cartesian Hessian made by finite differences.
type Hessian struct {
	// H is 3N×3N (hartree/bohr²), symmetric, free of rigid motion.
	H *mat.SymDense
	// Energy and Gradient at the reference geometry (the gradient of the
	// energy route is the central-difference one, along internal directions).
	Energy   float64
	Gradient []float64
	// Calculations is the number of energies or gradients computed.
	Calculations int
}

// work runs n displaced calculations on o.Workers goroutines, reporting each.
func work(n int, o Options, what string, f func(t int) error) error {
	return opt.Parallel(n, o.Workers, o.Progress, "  hessian: "+what, f)
}

func displaced(x, d []float64, s float64) []float64 {
	y := append([]float64(nil), x...)
	for i := range y {
		y[i] += s * d[i]
	}
	return y
}

// FromGradients builds the Hessian at x from central differences of
// gradients: for each internal direction d_k, (g(x+h d_k) − g(x−h d_k))/2h
// is H d_k to O(h²). The internal block Dᵀ H D is symmetrised and returned
// as D (DᵀHD) Dᵀ. 2(3N−6) + 1 gradients.
func FromGradients(x []float64, grad Gradient, o Options) (*Hessian, error) {
	if !(o.StepBohr > 0) {
		return nil, errors.New("the finite-difference step must be positive")
	}
	D := opt.InternalDirections(x)
	m := len(D)
	gs := make([][]float64, 2*m+1)
	var e0 float64
	err := work(2*m+1, o, "gradient", func(t int) error {
		var y []float64
		switch {
		case t == 2*m:
			y = x
		case t%2 == 0:
			y = displaced(x, D[t/2], o.StepBohr)
		default:
			y = displaced(x, D[t/2], -o.StepBohr)
		}
		e, g, err := grad(y)
		if err != nil {
			return err
		}
		if len(g) != len(x) {
			return fmt.Errorf("gradient has %d components, want %d", len(g), len(x))
		}
		gs[t] = g
		if t == 2*m {
			e0 = e
		}
		return nil
	})
	if err != nil {
		return nil, err
	}
	A := mat.NewDense(m, m, nil)
	for k := 0; k < m; k++ {
		for l := 0; l < m; l++ {
			c := 0.0
			for i := range x {
				c += D[l][i] * (gs[2*k][i] - gs[2*k+1][i])
			}
			A.Set(l, k, c/(2*o.StepBohr))
		}
	}
	return &Hessian{H: expand(D, A, len(x)), Energy: e0, Gradient: gs[2*m], Calculations: 2*m + 1}, nil
}

// FromEnergies builds the Hessian at x from energies alone: along internal
// directions d_k, d_l with step h,
//
//	H_kk = (E(+k) − 2E₀ + E(−k)) / h²
//	H_kl = (E(+k+l) + E(−k−l) − E(+k) − E(−k) − E(+l) − E(−l) + 2E₀) / 2h²
//
// both to O(h²); 1 + m + m² energies for m internal directions (13 for
// water). The gradient is the central difference (E(+k) − E(−k))/2h.
func FromEnergies(x []float64, energy Energy, o Options) (*Hessian, error) {
	if !(o.StepBohr > 0) {
		return nil, errors.New("the finite-difference step must be positive")
	}
	D := opt.InternalDirections(x)
	m := len(D)
	h := o.StepBohr
	type point struct {
		k, l int
		s    float64 // sign of the step (the pair shares it)
	}
	pts := []point{{-1, -1, 0}}
	for k := 0; k < m; k++ {
		pts = append(pts, point{k, -1, 1}, point{k, -1, -1})
	}
	for k := 0; k < m; k++ {
		for l := k + 1; l < m; l++ {
			pts = append(pts, point{k, l, 1}, point{k, l, -1})
		}
	}
	es := make([]float64, len(pts))
	err := work(len(pts), o, "energy", func(t int) error {
		p := pts[t]
		y := x
		if p.k >= 0 {
			y = displaced(y, D[p.k], p.s*h)
		}
		if p.l >= 0 {
			y = displaced(y, D[p.l], p.s*h)
		}
		e, err := energy(y)
		es[t] = e
		return err
	})
	if err != nil {
		return nil, err
	}
	e0 := es[0]
	plus := func(k int) float64 { return es[1+2*k] }
	minus := func(k int) float64 { return es[2+2*k] }
	A := mat.NewDense(m, m, nil)
	g := make([]float64, len(x))
	t := 1 + 2*m
	for k := 0; k < m; k++ {
		A.Set(k, k, (plus(k)-2*e0+minus(k))/(h*h))
		gk := (plus(k) - minus(k)) / (2 * h)
		for i := range g {
			g[i] += gk * D[k][i]
		}
	}
	for k := 0; k < m; k++ {
		for l := k + 1; l < m; l++ {
			v := (es[t] + es[t+1] - plus(k) - minus(k) - plus(l) - minus(l) + 2*e0) / (2 * h * h)
			A.Set(k, l, v)
			A.Set(l, k, v)
			t += 2
		}
	}
	return &Hessian{H: expand(D, A, len(x)), Energy: e0, Gradient: g, Calculations: len(pts)}, nil
}

// expand returns D sym(A) Dᵀ as an n×n symmetric matrix (D: the m
// directions as rows), in O(n m² + n² m).
func expand(D [][]float64, A *mat.Dense, n int) *mat.SymDense {
	m := len(D)
	Dm := mat.NewDense(m, n, nil)
	for k := range D {
		Dm.SetRow(k, D[k])
	}
	S := mat.NewDense(m, m, nil)
	for k := 0; k < m; k++ {
		for l := 0; l < m; l++ {
			S.Set(k, l, 0.5*(A.At(k, l)+A.At(l, k)))
		}
	}
	var SD, H mat.Dense
	SD.Mul(S, Dm)
	H.Mul(Dm.T(), &SD)
	out := mat.NewSymDense(n, nil)
	for i := 0; i < n; i++ {
		for j := i; j < n; j++ {
			out.SetSym(i, j, 0.5*(H.At(i, j)+H.At(j, i)))
		}
	}
	return out
}

// Thresholds of the stationary-point classification (common practice, no
// source): a geometry is stationary when its largest force component,
// free of rigid motion, is below StationaryMaxForce; an imaginary
// wavenumber counts when its magnitude is above ImaginaryToleranceCm
// (smaller ones are finite-difference and grid noise on near-free motions).
const (
	StationaryMaxForce   = 4.5e-4 // hartree/bohr
	ImaginaryToleranceCm = 20.0   // cm⁻¹
)

// Character of a geometry.
const (
	Minimum       = "minimum"
	SaddlePoint   = "saddle-point"
	NotStationary = "not-stationary"
)

// Analysis is the harmonic analysis of a Hessian.
type Analysis struct {
	// WavenumbersPerCm ascending; an imaginary wavenumber iν is given as −ν.
	WavenumbersPerCm []float64
	// Modes are the Cartesian displacements of the normal modes (3N each,
	// unit length), in the order of WavenumbersPerCm.
	Modes [][]float64
	// ReducedMassesDalton of the modes (unit-length Cartesian displacement).
	ReducedMassesDalton []float64
	// ZeroPointHartree is ½ Σ ħω over the real modes.
	ZeroPointHartree float64
	// Imaginary counts the imaginary wavenumbers beyond ImaginaryToleranceCm;
	// SmallImaginary those within it.
	Imaginary, SmallImaginary int
	// MaxForce is the largest component of the gradient free of rigid motion.
	MaxForce float64
	// Character is Minimum, SaddlePoint or NotStationary.
	Character string
	Linear    bool
}

// HartreePerCm is the hartree in wavenumbers, E_h/(h c), from CODATA 2018
// constants (≈ 219474.63 cm⁻¹).
var HartreePerCm = molecule.HartreeJoule / (molecule.PlanckJouleSecond * molecule.SpeedOfLightMPerS * 100)

// Analyse does the harmonic analysis of H for molecule m (most abundant
// isotopes), with gradient g at m's geometry (nil: taken as stationary).
func Analyse(m *molecule.Molecule, H *mat.SymDense, g []float64) (*Analysis, error) {
	n := 3 * len(m.Atoms)
	if r, _ := H.Dims(); r != n {
		return nil, fmt.Errorf("Hessian is %d×%d for %d atoms", r, r, len(m.Atoms))
	}
	x := opt.Coordinates(m)
	sq := make([]float64, len(m.Atoms)) // √(mass in electron masses)
	for a, at := range m.Atoms {
		el, err := molecule.ByZ(at.Z)
		if err != nil {
			return nil, err
		}
		sq[a] = math.Sqrt(el.MassDalton * molecule.DaltonElectronMass)
	}
	rigid := opt.RigidBasis(x, sq)
	Q := opt.Complement(rigid, n)
	nv := len(Q)
	a := &Analysis{Linear: len(rigid) == 5}
	// F = M^-½ H M^-½ in the vibrational space: QᵀFQ.
	FQ := make([][]float64, nv)
	for p := 0; p < nv; p++ {
		v := make([]float64, n)
		for i := 0; i < n; i++ {
			s := 0.0
			for j := 0; j < n; j++ {
				s += H.At(i, j) * Q[p][j] / sq[j/3]
			}
			v[i] = s / sq[i/3]
		}
		FQ[p] = v
	}
	F := mat.NewSymDense(nv, nil)
	for p := 0; p < nv; p++ {
		for q := p; q < nv; q++ {
			s := 0.0
			for i := 0; i < n; i++ {
				s += 0.5 * (Q[p][i]*FQ[q][i] + Q[q][i]*FQ[p][i])
			}
			F.SetSym(p, q, s)
		}
	}
	var eig mat.EigenSym
	if nv > 0 && !eig.Factorize(F, true) {
		return nil, errors.New("the mass-weighted Hessian could not be diagonalised")
	}
	var vals []float64
	var V mat.Dense
	if nv > 0 {
		vals = eig.Values(nil)
		eig.VectorsTo(&V)
	}
	type mode struct {
		nu   float64
		c    []float64
		mred float64
	}
	modes := make([]mode, nv)
	for k := 0; k < nv; k++ {
		w := math.Sqrt(math.Abs(vals[k])) * HartreePerCm
		if vals[k] < 0 {
			w = -w
		}
		c := make([]float64, n)
		for p := 0; p < nv; p++ {
			y := V.At(p, k)
			for i := 0; i < n; i++ {
				c[i] += y * Q[p][i]
			}
		}
		norm := 0.0
		for i := range c {
			c[i] /= sq[i/3]
			norm += c[i] * c[i]
		}
		norm = math.Sqrt(norm)
		for i := range c {
			c[i] /= norm
		}
		orientMode(c)
		modes[k] = mode{nu: w, c: c, mred: 1 / (norm * norm) / molecule.DaltonElectronMass}
	}
	sort.SliceStable(modes, func(i, j int) bool { return modes[i].nu < modes[j].nu })
	for _, md := range modes {
		a.WavenumbersPerCm = append(a.WavenumbersPerCm, md.nu)
		a.Modes = append(a.Modes, md.c)
		a.ReducedMassesDalton = append(a.ReducedMassesDalton, md.mred)
		switch {
		case md.nu < -ImaginaryToleranceCm:
			a.Imaginary++
		case md.nu < 0:
			a.SmallImaginary++
		default:
			a.ZeroPointHartree += 0.5 * md.nu / HartreePerCm
		}
	}
	if g != nil {
		a.MaxForce = freeMaxAbs(g, opt.RigidBasis(x, nil))
	}
	switch {
	case a.MaxForce >= StationaryMaxForce:
		a.Character = NotStationary
	case a.Imaginary > 0:
		a.Character = SaddlePoint
	default:
		a.Character = Minimum
	}
	return a, nil
}

// freeMaxAbs is the largest component of g after removing its components
// along the orthonormal vectors rigid.
func freeMaxAbs(g []float64, rigid [][]float64) float64 {
	v := append([]float64(nil), g...)
	for _, b := range rigid {
		d := 0.0
		for i := range v {
			d += v[i] * b[i]
		}
		for i := range v {
			v[i] -= d * b[i]
		}
	}
	m := 0.0
	for _, c := range v {
		m = math.Max(m, math.Abs(c))
	}
	return m
}

// orientMode fixes the sign of a mode: its largest component is positive
// (the first of equal ones), so the same Hessian always gives the same modes.
func orientMode(c []float64) {
	big := 0
	for i := range c {
		if math.Abs(c[i]) > math.Abs(c[big])+1e-12 {
			big = i
		}
	}
	if c[big] < 0 {
		for i := range c {
			c[i] = -c[i]
		}
	}
}
