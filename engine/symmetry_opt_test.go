package engine

import (
	"math"
	"strings"
	"testing"

	"moltrail/engine/molecule"
)

// asymmetry measures how far a formaldehyde geometry (C, O, H, H) is from
// C2v: the difference of the two C–H bonds and of the two O–C–H angles
// (as lengths), and the out-of-plane distance of H4 from the C, O, H3 plane.
func asymmetry(g []GeomAtom) float64 {
	p := func(i int) [3]float64 { return g[i].XYZ }
	d := func(a, b [3]float64) float64 { return molecule.Dist(a, b) }
	m := &molecule.Molecule{}
	for _, a := range g {
		m.Atoms = append(m.Atoms, molecule.MustAtom(a.Symbol, a.XYZ[0], a.XYZ[1], a.XYZ[2]))
	}
	bond := math.Abs(d(p(0), p(2)) - d(p(0), p(3)))
	ang := math.Abs(m.AngleDegrees(1, 0, 2)-m.AngleDegrees(1, 0, 3)) * math.Pi / 180 * d(p(0), p(2))
	u := [3]float64{p(1)[0] - p(0)[0], p(1)[1] - p(0)[1], p(1)[2] - p(0)[2]}
	v := [3]float64{p(2)[0] - p(0)[0], p(2)[1] - p(0)[1], p(2)[2] - p(0)[2]}
	n := [3]float64{u[1]*v[2] - u[2]*v[1], u[2]*v[0] - u[0]*v[2], u[0]*v[1] - u[1]*v[0]}
	nn := math.Sqrt(n[0]*n[0] + n[1]*n[1] + n[2]*n[2])
	w := [3]float64{p(3)[0] - p(0)[0], p(3)[1] - p(0)[1], p(3)[2] - p(0)[2]}
	plane := math.Abs(n[0]*w[0]+n[1]*w[1]+n[2]*w[2]) / nn
	return math.Max(bond, math.Max(ang, plane))
}

// A formaldehyde start geometry 1e-4 Å off C2v (and off planarity) ends
// exactly C2v and planar when the optimisation keeps its point group (the
// default), and keeps an asymmetry of the order of the start's when it
// does not.
func TestOptimisationKeepsSymmetry(t *testing.T) {
	m, err := molecule.ParseXYZ(strings.NewReader("4\nformaldehyde\nC 0.00005 0 0\nO 0 0.0001 1.205\nH 0 0.943 -0.5871\nH 0.0001 -0.9431 -0.587\n"), "f.xyz")
	if err != nil {
		t.Fatal(err)
	}
	run := func(tol float64) *Result {
		o := DefaultOpt
		o.SymmetryTolAngstrom = tol
		j, err := NewJob(Request{Molecule: m, Method: "hf", Basis: "sto-3g", Task: "optimize", Opt: &o})
		if err != nil {
			t.Fatal(err)
		}
		r, err := Run(j, RunOptions{Threads: 1})
		if err != nil || r.Status != StatusConverged {
			t.Fatalf("%v %s %s", err, r.Status, r.Error)
		}
		return r
	}
	kept := run(DefaultOpt.SymmetryTolAngstrom)
	if kept.PointGroup != "C2v" {
		t.Errorf("point group %q", kept.PointGroup)
	}
	if a := asymmetry(kept.GeometryAngstrom); a > 1e-10 {
		t.Errorf("kept C2v: final asymmetry %.1e Å", a)
	}
	for i, st := range kept.Trajectory {
		if a := asymmetry(st.GeometryAngstrom); a > 1e-10 {
			t.Errorf("step %d asymmetric by %.1e Å", i, a)
		}
	}
	free := run(0)
	if free.PointGroup != "" {
		t.Errorf("point group %q without symmetry", free.PointGroup)
	}
	if a := asymmetry(free.GeometryAngstrom); a < 1e-6 {
		t.Errorf("without symmetry the start's asymmetry vanished (%.1e Å): the test shows nothing", a)
	}
	if d := math.Abs(kept.EnergyHartree - free.EnergyHartree); d > 1e-7 {
		t.Errorf("energies differ by %.1e hartree", d)
	}
	t.Logf("asymmetry kept %.1e Å, free %.1e Å; %d and %d steps", asymmetry(kept.GeometryAngstrom), asymmetry(free.GeometryAngstrom), len(kept.Trajectory), len(free.Trajectory))
}
