package opt

import (
	"math"
	"strings"
	"testing"

	"moltrail/engine/molecule"
)

// A model surface: Morse stretches between listed pairs and harmonic
// cos-angle bends; its minimum is known by construction.
type model struct {
	bonds  [][2]int
	r0     float64
	bends  [][3]int
	theta0 float64
}

func (md model) energy(x []float64) (float64, error) {
	e := 0.0
	for _, b := range md.bonds {
		r := dist(x, b[0], b[1])
		q := 1 - math.Exp(-1.2*(r-md.r0))
		e += 0.2 * q * q
	}
	for _, b := range md.bends {
		th := bendAngle(x, b[0], b[1], b[2])
		d := math.Cos(th) - math.Cos(md.theta0)
		e += 0.1 * d * d
	}
	return e, nil
}

func TestMinimizeModelWater(t *testing.T) {
	md := model{bonds: [][2]int{{0, 1}, {0, 2}}, r0: 1.81, bends: [][3]int{{1, 0, 2}}, theta0: 104.5 * math.Pi / 180}
	m := &molecule.Molecule{Atoms: []molecule.Atom{
		molecule.MustAtom("O", 0, 0, 0.1), molecule.MustAtom("H", 0, 1.6, -1.0), molecule.MustAtom("H", 0.1, -1.5, -0.9)}}
	eg := FiniteDifferenceGradient(md.energy, 1e-4, 2)
	res, err := Minimize(m, eg, Settings{MaxForce: 1e-6, RMSForce: 1e-6, MaxStep: 1e-5, EnergyChange: 1e-12, MaxSteps: 100})
	if err != nil {
		t.Fatal(err)
	}
	if !res.Converged {
		t.Fatalf("not converged: %s after %d steps", res.Reason, len(res.Steps))
	}
	f := WithCoordinates(m, res.Final)
	if d := math.Abs(f.Distance(0, 1) - 1.81); d > 1e-5 {
		t.Errorf("r(OH) off by %g bohr", d)
	}
	if d := math.Abs(f.AngleDegrees(1, 0, 2) - 104.5); d > 1e-3 {
		t.Errorf("angle off by %g°", d)
	}
	t.Logf("converged in %d steps", len(res.Steps))
}

func TestMinimizeLinear(t *testing.T) {
	// CO2-like: two stretches, the bend's minimum at 180° (cos θ0 = −1).
	md := model{bonds: [][2]int{{0, 1}, {0, 2}}, r0: 2.2, bends: [][3]int{{1, 0, 2}}, theta0: math.Pi}
	m := &molecule.Molecule{Atoms: []molecule.Atom{
		molecule.MustAtom("C", 0, 0, 0), molecule.MustAtom("O", 0, 0, 2.0), molecule.MustAtom("O", 0, 0.0, -2.5)}}
	res, err := Minimize(m, FiniteDifferenceGradient(md.energy, 1e-4, 2), Settings{MaxForce: 1e-6, RMSForce: 1e-6, MaxStep: 1e-5, EnergyChange: 1e-12, MaxSteps: 100})
	if err != nil || !res.Converged {
		t.Fatalf("linear: %v %+v", err, res.Reason)
	}
	f := WithCoordinates(m, res.Final)
	if math.Abs(f.Distance(0, 1)-2.2) > 1e-5 || math.Abs(f.Distance(0, 2)-2.2) > 1e-5 {
		t.Errorf("bonds %v %v", f.Distance(0, 1), f.Distance(0, 2))
	}
}

func TestNotConverged(t *testing.T) {
	md := model{bonds: [][2]int{{0, 1}}, r0: 1.4}
	m := &molecule.Molecule{Atoms: []molecule.Atom{molecule.MustAtom("H", 0, 0, 0), molecule.MustAtom("H", 0, 0, 2.5)}}
	res, err := Minimize(m, FiniteDifferenceGradient(md.energy, 1e-4, 1), Settings{MaxForce: 1e-9, RMSForce: 1e-9, MaxStep: 1e-9, EnergyChange: 1e-14, MaxSteps: 1})
	if err != nil {
		t.Fatal(err)
	}
	if res.Converged || len(res.Steps) != 2 {
		t.Errorf("converged=%v steps=%d", res.Converged, len(res.Steps))
	}
}

func TestFiniteDifferenceGradient(t *testing.T) {
	f := func(x []float64) (float64, error) { return math.Sin(x[0]) * x[1] * x[1], nil }
	e, g, err := FiniteDifferenceGradient(f, 1e-4, 3)([]float64{0.3, 2})
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(e-math.Sin(0.3)*4) > 1e-15 || math.Abs(g[0]-math.Cos(0.3)*4) > 1e-7 || math.Abs(g[1]-math.Sin(0.3)*4) > 1e-7 {
		t.Errorf("e %v g %v", e, g)
	}
}

func TestInternalFiniteDifferenceGradient(t *testing.T) {
	md := model{bonds: [][2]int{{0, 1}, {0, 2}}, r0: 1.81, bends: [][3]int{{1, 0, 2}}, theta0: 104.5 * math.Pi / 180}
	x := []float64{0, 0, 0.1, 0, 1.6, -1.0, 0.1, -1.5, -0.9}
	_, full, _ := FiniteDifferenceGradient(md.energy, 1e-4, 2)(x)
	_, in, err := InternalFiniteDifferenceGradient(md.energy, 1e-4, 2, nil)(x)
	if err != nil {
		t.Fatal(err)
	}
	for i := range full {
		if math.Abs(full[i]-in[i]) > 1e-8 {
			t.Errorf("component %d: full %g internal %g", i, full[i], in[i])
		}
	}
	if n := len(internalDirections(x)); n != 3 {
		t.Errorf("bent triatomic has %d internal directions, want 3", n)
	}
	if n := len(internalDirections([]float64{0, 0, 0, 0, 0, 2})); n != 1 {
		t.Errorf("diatomic has %d internal directions, want 1", n)
	}
}

// A step that overshoots into a steep wall raises the energy: it is
// rejected, the optimisation goes back, learns the curvature and converges.
func TestRejectedStep(t *testing.T) {
	stiff := func(x []float64) (float64, error) {
		r := dist(x, 0, 1)
		return 10 * (r - 1.4) * (r - 1.4), nil
	}
	m := &molecule.Molecule{Atoms: []molecule.Atom{molecule.MustAtom("H", 0, 0, 0), molecule.MustAtom("H", 0, 0, 1.5)}}
	var log strings.Builder
	res, err := Minimize(m, FiniteDifferenceGradient(stiff, 1e-5, 1), Settings{MaxForce: 1e-6, RMSForce: 1e-6, MaxStep: 1e-5, EnergyChange: 1e-12, MaxSteps: 30, Progress: &log})
	if err != nil || !res.Converged {
		t.Fatalf("%v %+v", err, res)
	}
	if !res.Steps[1].Rejected || res.Steps[1].Energy <= res.Steps[0].Energy {
		t.Errorf("first step: rejected %v, energy %g after %g", res.Steps[1].Rejected, res.Steps[1].Energy, res.Steps[0].Energy)
	}
	if last := res.Steps[len(res.Steps)-1]; last.Rejected {
		t.Error("the trajectory ends on a rejected step")
	}
	if r := WithCoordinates(m, res.Final).Distance(0, 1); math.Abs(r-1.4) > 1e-6 {
		t.Errorf("r = %g", r)
	}
	if !strings.Contains(log.String(), "rejected: the energy rose by") || !strings.Contains(log.String(), "accepted") || !strings.Contains(log.String(), "start") {
		t.Errorf("log does not mark the steps:\n%s", log.String())
	}
}
