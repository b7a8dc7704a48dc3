// Package opt optimises molecular geometries: a quasi-Newton minimiser in
// Cartesian coordinates with rational-function (RFO) steps, a trust radius,
// BFGS Hessian updates started from the Lindh model Hessian, and removal of
// overall translation and rotation (so linear molecules need no special
// case). It knows nothing of how energies and gradients are made: callers
// pass an EnergyGradient function. FiniteDifferenceGradient builds one from
// energies alone, with central differences run in parallel.
package opt

import (
	"errors"
	"fmt"
	"io"
	"math"

	"gonum.org/v1/gonum/mat"

	"moltrail/engine/molecule"
)

// EnergyGradient returns the energy (hartree) and its gradient
// (hartree/bohr, 3N, atom-major) at Cartesian coordinates x (bohr, 3N).
type EnergyGradient func(x []float64) (energy float64, grad []float64, err error)

// Settings are the convergence criteria and step control. An optimisation
// has converged when the largest and RMS force (projected free of overall
// translation and rotation), the largest Cartesian step component and the
// energy change all fall below their limits.
type Settings struct {
	MaxForce, RMSForce float64 // hartree/bohr
	MaxStep            float64 // bohr
	EnergyChange       float64 // hartree
	MaxSteps           int
	TrustRadius        float64 // bohr, initial; adapted between 0.01 and 0.5
	Progress           io.Writer
	ProgressLabel      string
	MinTrust, MaxTrust float64 // bohr (0 = 0.001 and 0.5)
	ForceOnlyFraction  float64 // converged also when max force < this × MaxForce (0 = 0.01)
	// RejectAbove: a step raising the energy by more than this (hartree) is
	// rejected (0 = max(10 EnergyChange, 1e-9)).
	RejectAbove float64
	// Symmetrize, when set, is applied to every gradient and step (the
	// projection onto the geometry's point group, engine/symmetry), so a
	// symmetric start geometry stays symmetric.
	Symmetrize func(v []float64) []float64
}

// Step is one point of the trajectory: a geometry the optimisation
// reached, or, Rejected, one it tried and went back from.
type Step struct {
	Energy, MaxForce, RMSForce, MaxStep float64
	X                                   []float64
	Rejected                            bool
}

// Result of an optimisation. When Converged is false the trajectory is
// still complete; Final is the last geometry accepted.
type Result struct {
	Converged bool
	Steps     []Step
	Final     []float64
	Energy    float64
	Gradient  []float64
	Reason    string
}

// Coordinates flattens a molecule's positions (bohr).
func Coordinates(m *molecule.Molecule) []float64 {
	x := make([]float64, 3*len(m.Atoms))
	for i, a := range m.Atoms {
		copy(x[3*i:], a.PosBohr[:])
	}
	return x
}

// WithCoordinates returns a copy of m at positions x (bohr).
func WithCoordinates(m *molecule.Molecule, x []float64) *molecule.Molecule {
	c := m.Clone()
	for i := range c.Atoms {
		copy(c.Atoms[i].PosBohr[:], x[3*i:3*i+3])
	}
	return c
}

// Minimize runs the optimisation from m's geometry.
//
// Each step is a rational-function step within the trust radius. A step
// that raises the energy by more than RejectAbove (once the trust radius
// can still shrink) is rejected: the optimisation goes back to the point
// before it, keeps what the rejected gradient says about the curvature (the
// BFGS update), quarters the trust radius and tries again. Accepted and
// rejected steps are both kept in Result.Steps (Step.Rejected) and marked
// in the progress lines; each counts towards MaxSteps.
func Minimize(m *molecule.Molecule, eg EnergyGradient, s Settings) (*Result, error) {
	if s.MaxSteps < 1 {
		return nil, errors.New("optimisation needs max_steps ≥ 1")
	}
	if !(s.MaxForce > 0 && s.RMSForce > 0 && s.MaxStep > 0 && s.EnergyChange > 0) {
		return nil, errors.New("optimisation convergence criteria must all be positive")
	}
	minT, maxT := s.MinTrust, s.MaxTrust
	if minT <= 0 {
		minT = 1e-3
	}
	if maxT <= 0 {
		maxT = 0.5
	}
	trust := s.TrustRadius
	if trust <= 0 {
		trust = 0.3
	}
	fo := s.ForceOnlyFraction
	if fo <= 0 {
		fo = 0.01
	}
	rejectAbove := s.RejectAbove
	if rejectAbove <= 0 {
		rejectAbove = math.Max(10*s.EnergyChange, 1e-9)
	}
	sym := s.Symmetrize
	if sym == nil {
		sym = func(v []float64) []float64 { return v }
	}
	x := Coordinates(m)
	H := ModelHessian(m)
	res := &Result{}
	e, g, err := eg(x)
	if err != nil {
		return nil, err
	}
	g = sym(g)
	logStep := func(it int, st Step, what string) {
		if s.Progress != nil {
			fmt.Fprintf(s.Progress, "%sopt step %3d  E = %.10f Eh  max|F| = %.2e  rms|F| = %.2e  step = %.2e bohr  trust = %.3f  %s\n",
				s.ProgressLabel, it, st.Energy, st.MaxForce, st.RMSForce, st.MaxStep, trust, what)
		}
	}
	P := projector(x)
	gp := matVec(P, g)
	start := Step{Energy: e, MaxForce: maxAbs(gp), RMSForce: rms(gp), X: append([]float64(nil), x...)}
	res.Steps = append(res.Steps, start)
	logStep(0, start, "start")
	rejectedInARow := 0
	for n := 1; ; n++ {
		if n > s.MaxSteps {
			res.Reason = fmt.Sprintf("not converged within %d steps", s.MaxSteps)
			break
		}
		step, pred := rfoStep(P, H, gp, trust)
		step = sym(step)
		xn := add(x, step)
		en, gn, err := eg(xn)
		if err != nil {
			return nil, fmt.Errorf("optimisation step %d: %w", n, err)
		}
		gn = sym(gn)
		Pn := projector(xn)
		gpn := matVec(Pn, gn)
		dE := en - e
		st := Step{Energy: en, MaxForce: maxAbs(gpn), RMSForce: rms(gpn), MaxStep: maxAbs(step), X: append([]float64(nil), xn...)}
		// The curvature seen along the step is true whether or not the step is kept.
		bfgs(H, step, sub(gn, g))
		if dE > rejectAbove && trust > minT && rejectedInARow < maxRejections {
			st.Rejected = true
			res.Steps = append(res.Steps, st)
			trust = math.Max(minT, math.Min(trust, math.Sqrt(dotv(step, step)))/4)
			logStep(n, st, fmt.Sprintf("rejected: the energy rose by %.1e Eh; back to the previous point", dE))
			rejectedInARow++
			continue
		}
		rejectedInARow = 0
		// Trust-radius control from the ratio of actual to predicted change.
		if pred < 0 {
			ratio := dE / pred
			switch {
			case ratio > 0.75 && st.MaxStep > 0.8*trust:
				trust = math.Min(2*trust, maxT)
			case ratio < 0.25:
				trust = math.Max(trust/4, minT)
			}
		}
		x, e, g, P, gp = xn, en, gn, Pn, gpn
		res.Steps = append(res.Steps, st)
		logStep(n, st, "accepted")
		conv := st.MaxForce < s.MaxForce && st.RMSForce < s.RMSForce && st.MaxStep < s.MaxStep && math.Abs(dE) < s.EnergyChange
		if conv || st.MaxForce < fo*s.MaxForce {
			res.Converged = true
			res.Reason = "all criteria met"
			if !conv {
				res.Reason = "forces far below the limit"
			}
			break
		}
	}
	res.Final = x
	res.Energy = e
	res.Gradient = g
	return res, nil
}

// maxRejections bounds the rejected steps in a row before a step is taken
// whatever its energy (the energy may be too noisy to go down further).
const maxRejections = 5

// projector returns P = I − Σ t tᵀ over an orthonormal basis of the
// translations and rotations of the geometry x.
func projector(x []float64) *mat.Dense {
	n := len(x)
	P := mat.NewDense(n, n, nil)
	for i := 0; i < n; i++ {
		P.Set(i, i, 1)
	}
	for _, b := range RigidBasis(x, nil) {
		for i := 0; i < n; i++ {
			for j := 0; j < n; j++ {
				P.Set(i, j, P.At(i, j)-b[i]*b[j])
			}
		}
	}
	return P
}

// RigidBasis returns an orthonormal basis of the overall translations and
// rotations of the geometry x (bohr, 3N): six vectors, five for a linear
// molecule, three for an atom. With weights (one per atom) each atom's
// components are multiplied by its weight — with √mass, the rigid motions in
// mass-weighted coordinates. The span does not depend on the centre the
// rotations are taken about, since the translations are in it.
func RigidBasis(x []float64, weights []float64) [][]float64 {
	n := len(x)
	na := n / 3
	w := func(a int) float64 {
		if weights == nil {
			return 1
		}
		return weights[a]
	}
	var vecs [][]float64
	for k := 0; k < 3; k++ {
		v := make([]float64, n)
		for a := 0; a < na; a++ {
			v[3*a+k] = w(a)
		}
		vecs = append(vecs, v)
	}
	var c [3]float64
	for a := 0; a < na; a++ {
		for k := 0; k < 3; k++ {
			c[k] += x[3*a+k] / float64(na)
		}
	}
	for k := 0; k < 3; k++ {
		v := make([]float64, n)
		for a := 0; a < na; a++ {
			r := [3]float64{x[3*a] - c[0], x[3*a+1] - c[1], x[3*a+2] - c[2]}
			// rotation about axis k: e_k × r
			switch k {
			case 0:
				v[3*a+1], v[3*a+2] = -r[2]*w(a), r[1]*w(a)
			case 1:
				v[3*a], v[3*a+2] = r[2]*w(a), -r[0]*w(a)
			case 2:
				v[3*a], v[3*a+1] = -r[1]*w(a), r[0]*w(a)
			}
		}
		vecs = append(vecs, v)
	}
	// Gram–Schmidt (twice, for orthogonality to rounding), dropping
	// dependent vectors (linear molecules, atoms).
	var basis [][]float64
	for _, v := range vecs {
		scale := math.Sqrt(dotv(v, v))
		for pass := 0; pass < 2; pass++ {
			for _, b := range basis {
				d := dotv(v, b)
				for i := range v {
					v[i] -= d * b[i]
				}
			}
		}
		nv := math.Sqrt(dotv(v, v))
		if nv > 1e-6*math.Max(scale, 1) {
			for i := range v {
				v[i] /= nv
			}
			basis = append(basis, v)
		}
	}
	return basis
}

// rfoStep returns the rational-function step in the space free of
// translation and rotation, scaled to the trust radius, and the predicted
// energy change gᵀs + ½ sᵀHs.
func rfoStep(P, H *mat.Dense, g []float64, trust float64) ([]float64, float64) {
	n := len(g)
	var Hp mat.Dense
	Hp.Mul(P, H)
	Hp.Mul(&Hp, P)
	sym := mat.NewSymDense(n, nil)
	for i := 0; i < n; i++ {
		for j := i; j < n; j++ {
			sym.SetSym(i, j, 0.5*(Hp.At(i, j)+Hp.At(j, i)))
		}
	}
	var eig mat.EigenSym
	eig.Factorize(sym, true)
	vals := eig.Values(nil)
	var V mat.Dense
	eig.VectorsTo(&V)
	// Keep modes that lie in the internal space.
	var lam, gi []float64
	var cols []int
	for k := 0; k < n; k++ {
		v := mat.Col(nil, k, &V)
		pv := matVec(P, v)
		if dotv(pv, pv) < 0.5 {
			continue
		}
		lam = append(lam, vals[k])
		gi = append(gi, dotv(v, g))
		cols = append(cols, k)
	}
	m := len(lam)
	// Augmented Hessian [[diag(λ), g], [gᵀ, 0]]: lowest eigenvalue ν.
	aug := mat.NewSymDense(m+1, nil)
	for i := 0; i < m; i++ {
		aug.SetSym(i, i, lam[i])
		aug.SetSym(i, m, gi[i])
	}
	var ae mat.EigenSym
	ae.Factorize(aug, false)
	nu := ae.Values(nil)[0]
	if nu > 0 {
		nu = 0
	}
	stepOf := func(shift float64) []float64 {
		s := make([]float64, n)
		for q := 0; q < m; q++ {
			den := lam[q] - shift
			if math.Abs(den) < 1e-8 {
				den = math.Copysign(1e-8, den)
			}
			c := -gi[q] / den
			for i := 0; i < n; i++ {
				s[i] += c * V.At(i, cols[q])
			}
		}
		return s
	}
	s := stepOf(nu)
	if l := math.Sqrt(dotv(s, s)); l > trust {
		for i := range s {
			s[i] *= trust / l
		}
	}
	var Hs mat.VecDense
	Hs.MulVec(sym, mat.NewVecDense(n, append([]float64(nil), s...)))
	pred := dotv(g, s) + 0.5*dotv(s, Hs.RawVector().Data)
	return s, pred
}

// bfgs updates H in place with step dx and gradient change dg, skipping
// updates that would destroy positive curvature.
func bfgs(H *mat.Dense, dx, dg []float64) {
	n := len(dx)
	sy := dotv(dx, dg)
	if sy < 1e-12*math.Sqrt(dotv(dx, dx)*dotv(dg, dg)) || sy <= 0 {
		return
	}
	Hs := make([]float64, n)
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			Hs[i] += H.At(i, j) * dx[j]
		}
	}
	sHs := dotv(dx, Hs)
	if sHs <= 0 {
		return
	}
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			H.Set(i, j, H.At(i, j)+dg[i]*dg[j]/sy-Hs[i]*Hs[j]/sHs)
		}
	}
}

func matVec(A *mat.Dense, v []float64) []float64 {
	r, _ := A.Dims()
	out := make([]float64, r)
	for i := 0; i < r; i++ {
		out[i] = dotv(A.RawRowView(i), v)
	}
	return out
}

func dotv(a, b []float64) float64 {
	s := 0.0
	for i := range a {
		s += a[i] * b[i]
	}
	return s
}
func add(a, b []float64) []float64 {
	o := make([]float64, len(a))
	for i := range a {
		o[i] = a[i] + b[i]
	}
	return o
}
func sub(a, b []float64) []float64 {
	o := make([]float64, len(a))
	for i := range a {
		o[i] = a[i] - b[i]
	}
	return o
}
func maxAbs(a []float64) float64 {
	m := 0.0
	for _, v := range a {
		m = math.Max(m, math.Abs(v))
	}
	return m
}
func rms(a []float64) float64 {
	if len(a) == 0 {
		return 0
	}
	return math.Sqrt(dotv(a, a) / float64(len(a)))
}
