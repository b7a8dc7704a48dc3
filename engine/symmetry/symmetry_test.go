package symmetry

import (
	"math"
	"math/rand"
	"strconv"
	"strings"
	"testing"

	"moltrail/engine/molecule"
)

// mol builds a molecule from "Sym x y z" lines in ångström.
func mol(t *testing.T, lines ...string) *molecule.Molecule {
	t.Helper()
	text := strings.Join(lines, "\n")
	m, err := molecule.ParseXYZ(strings.NewReader(strings.Join([]string{strconv.Itoa(len(lines)), "t", text}, "\n")+"\n"), "t.xyz")
	if err != nil {
		t.Fatal(err)
	}
	return m
}

func ring(sym string, n int, r, z, phase float64) []string {
	var out []string
	for k := 0; k < n; k++ {
		a := 2*math.Pi*float64(k)/float64(n) + phase
		out = append(out, sym+" "+f(r*math.Cos(a))+" "+f(r*math.Sin(a))+" "+f(z))
	}
	return out
}

func f(v float64) string { return strconv.FormatFloat(v, 'f', 10, 64) }

// Point groups of textbook molecules (Schoenflies symbols: common
// knowledge, no source needed).
func TestDetect(t *testing.T) {
	benzene := append(ring("C", 6, 1.39, 0, 0), ring("H", 6, 2.48, 0, 0)...)
	d := 1.09 / math.Sqrt(3)
	cases := []struct {
		name  string
		lines []string
		want  string
		order int
	}{
		{"water", []string{"O 0 0 0.1173", "H 0 0.7572 -0.4692", "H 0 -0.7572 -0.4692"}, "C2v", 4},
		{"formaldehyde", []string{"C 0 0 0", "O 0 0 1.205", "H 0 0.943 -0.587", "H 0 -0.943 -0.587"}, "C2v", 4},
		{"ammonia", append([]string{"N 0 0 0.38"}, ring("H", 3, 0.94, 0, 0.3)...), "C3v", 6},
		{"planar ammonia", append([]string{"N 0 0 0"}, ring("H", 3, 1.0, 0, 0.1)...), "D3h", 12},
		{"methane", []string{"C 0 0 0", "H " + f(d) + " " + f(d) + " " + f(d), "H " + f(-d) + " " + f(-d) + " " + f(d), "H " + f(-d) + " " + f(d) + " " + f(-d), "H " + f(d) + " " + f(-d) + " " + f(-d)}, "Td", 24},
		{"benzene", benzene, "D6h", 24},
		{"ethylene", []string{"C 0 0 0.667", "C 0 0 -0.667", "H 0 0.923 1.238", "H 0 -0.923 1.238", "H 0 0.923 -1.238", "H 0 -0.923 -1.238"}, "D2h", 8},
		{"hydrogen peroxide", []string{"O 0 0.7 0", "O 0 -0.7 0", "H 0.9 0.9 0.3", "H -0.9 -0.9 0.3"}, "C2", 2},
		{"HOCl", []string{"O 0 0 0", "H 0.96 0 0", "Cl -0.4 1.6 0"}, "Cs", 2},
		{"HCN", []string{"H 0 0 -1.065", "C 0 0 0", "N 0 0 1.153"}, "C∞v", 2},
		{"CO2", []string{"C 0.1 0.2 0.3", "O 0.1 0.2 1.46", "O 0.1 0.2 -0.86"}, "D∞h", 4},
		{"no symmetry", []string{"C 0 0 0", "H 1.1 0.1 0", "F -0.3 1.3 0.2", "Cl -0.5 -0.9 1.4", "Br 0.4 -0.6 -1.7"}, "C1", 1},
	}
	for _, c := range cases {
		m := mol(t, c.lines...)
		g := Detect(m, DefaultToleranceAngstrom)
		if g.Name != c.want || g.Order() != c.order {
			t.Errorf("%s: %s with %d operations, want %s with %d", c.name, g.Name, g.Order(), c.want, c.order)
		}
	}
}

func coords(m *molecule.Molecule) []float64 {
	var x []float64
	for _, a := range m.Atoms {
		x = append(x, a.PosBohr[:]...)
	}
	return x
}

// A geometry off its symmetry by up to 2e-4 Å is found C2v at the 0.01 Å
// tolerance (and C1 at 1e-5 Å); symmetrised, it is exactly symmetric: every
// operation maps it onto itself to rounding, and symmetrised vectors are
// invariant, so steps built from them keep the symmetry.
func TestSymmetrizeExact(t *testing.T) {
	m := mol(t, "C 0.00002 0 0", "O 0 0.0001 1.205", "H 0 0.943 -0.5872", "H 0.0002 -0.9431 -0.587")
	if g := Detect(m, 1e-5); g.Name != "C1" {
		t.Errorf("tight tolerance: %s", g.Name)
	}
	g := Detect(m, DefaultToleranceAngstrom)
	if g.Name != "C2v" {
		t.Fatalf("detected %s", g.Name)
	}
	x := coords(m)
	y := g.Symmetrize(x)
	if g.MaxShiftBohr <= 0 || g.MaxShiftBohr > 3e-4*molecule.AngstromBohr {
		t.Errorf("max shift %g bohr", g.MaxShiftBohr)
	}
	for k, o := range g.Ops {
		for a, b := range o.Perm {
			p := apply(o.R, sub(vec{y[3*a], y[3*a+1], y[3*a+2]}, vec(g.Centre)))
			q := sub(vec{y[3*b], y[3*b+1], y[3*b+2]}, vec(g.Centre))
			if d := norm(sub(p, q)); d > 1e-13 {
				t.Errorf("operation %d moves atom %d off atom %d by %g bohr", k, a, b, d)
			}
		}
	}
	rng := rand.New(rand.NewSource(1))
	v := make([]float64, len(x))
	for i := range v {
		v[i] = rng.NormFloat64()
	}
	s := g.Vector(v)
	s2 := g.Vector(s)
	for i := range s {
		if math.Abs(s[i]-s2[i]) > 1e-14 {
			t.Errorf("symmetrising is not a projection: component %d %g → %g", i, s[i], s2[i])
		}
	}
	// The symmetric vector is carried onto itself by every operation.
	for k, o := range g.Ops {
		for a, b := range o.Perm {
			p := apply(o.R, vec{s[3*a], s[3*a+1], s[3*a+2]})
			if d := norm(sub(p, vec{s[3*b], s[3*b+1], s[3*b+2]})); d > 1e-14 {
				t.Errorf("operation %d: symmetrised vector at atom %d is not the image of atom %d's (%g)", k, b, a, d)
			}
		}
	}
}

// A linear molecule's vectors lose every component across the axis.
func TestLinearVector(t *testing.T) {
	m := mol(t, "H 0 0 -1.065", "C 0 0 0", "N 0 0 1.153")
	g := Detect(m, DefaultToleranceAngstrom)
	g.Symmetrize(coords(m))
	s := g.Vector([]float64{1, 2, 3, 4, 5, 6, 7, 8, 9})
	for a := 0; a < 3; a++ {
		if math.Abs(s[3*a]) > 1e-15 || math.Abs(s[3*a+1]) > 1e-15 || s[3*a+2] != float64(3*a+3) {
			t.Errorf("atom %d: %v", a, s[3*a:3*a+3])
		}
	}
}
