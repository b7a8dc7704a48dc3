package dft

import (
	"fmt"
	"sort"
	"strings"
)

type (
	g2 = [2]float64 // ∂/∂(ρ, σ)
	g5 = [5]float64 // ∂/∂(ρα, ρβ, σαα, σαβ, σββ)
)

// component is one published exchange or correlation functional (its
// kernel: evalComponent).
type component struct {
	name string
	gga  bool
}

var components = map[string]component{
	"slater":  {"slater", false},
	"vwn5":    {"vwn5", false},
	"vwn-rpa": {"vwn-rpa", false},
	"b88":     {"b88", true},
	"lyp":     {"lyp", true},
	"pbe-x":   {"pbe-x", true},
	"pbe-c":   {"pbe-c", true},
}

type term struct {
	weight float64
	c      component
}

// Functional is a weighted sum of exchange and correlation components plus
// a fraction of exact (Hartree–Fock) exchange.
type Functional struct {
	def   string
	terms []term
	hf    float64
	gga   bool
}

// hybrids are the named mixtures.
//
//   - b3lyp(vwn-rpa): A. D. Becke, J. Chem. Phys. 98, 5648 (1993) with LYP
//     for the gradient correlation as in P. J. Stephens, F. J. Devlin,
//     C. F. Chabalowski, M. J. Frisch, J. Phys. Chem. 98, 11623 (1994), and
//     VWN-RPA as the local correlation (libxc's HYB_GGA_XC_B3LYP):
//     0.08 Slater + 0.72 B88 + 0.20 HF exchange; 0.19 VWN-RPA + 0.81 LYP.
//   - b3lyp5(vwn5): the same with VWN5 local correlation.
//   - pbe0: C. Adamo, V. Barone, J. Chem. Phys. 110, 6158 (1999); M.
//     Ernzerhof, G. E. Scuseria, J. Chem. Phys. 110, 5029 (1999):
//     0.75 PBE + 0.25 HF exchange, PBE correlation.
var hybrids = map[string]func() ([]term, float64){
	"b3lyp(vwn-rpa)": func() ([]term, float64) {
		return []term{{0.08, components["slater"]}, {0.72, components["b88"]}, {0.19, components["vwn-rpa"]}, {0.81, components["lyp"]}}, 0.20
	},
	"b3lyp5(vwn5)": func() ([]term, float64) {
		return []term{{0.08, components["slater"]}, {0.72, components["b88"]}, {0.19, components["vwn5"]}, {0.81, components["lyp"]}}, 0.20
	},
	"pbe0": func() ([]term, float64) {
		return []term{{0.75, components["pbe-x"]}, {1, components["pbe-c"]}}, 0.25
	},
}

// NewFunctional parses a functional definition: one of the named hybrids
// ("b3lyp(vwn-rpa)", "b3lyp5(vwn5)", "pbe0") or components joined by "+"
// ("slater+vwn5", "b88+lyp", "pbe-x+pbe-c"), each with unit weight.
func NewFunctional(def string) (*Functional, error) {
	key := strings.ToLower(strings.TrimSpace(def))
	f := &Functional{def: key}
	if h, ok := hybrids[key]; ok {
		f.terms, f.hf = h()
	} else {
		if key == "" {
			return nil, fmt.Errorf("functional definition is empty")
		}
		for _, name := range strings.Split(key, "+") {
			c, ok := components[strings.TrimSpace(name)]
			if !ok {
				return nil, fmt.Errorf("functional %q: component %q is not known (known: %s; hybrids: %s)", def, name, strings.Join(keys(components), ", "), strings.Join(keys(hybrids), ", "))
			}
			f.terms = append(f.terms, term{1, c})
		}
	}
	for _, t := range f.terms {
		f.gga = f.gga || t.c.gga
	}
	return f, nil
}

func keys[V any](m map[string]V) []string {
	var out []string
	for k := range m {
		out = append(out, k)
	}
	sort.Strings(out)
	return out
}

// Definition is the normalised definition string the functional was made from.
func (f *Functional) Definition() string { return f.def }

// ExactExchange is the fraction of Hartree–Fock exchange.
func (f *Functional) ExactExchange() float64 { return f.hf }

// IsGGA reports whether the functional depends on density gradients.
func (f *Functional) IsGGA() bool { return f.gga }

func (f *Functional) eval2(v *spinVars[g2]) dual[g2] {
	e := konst[g2](0)
	for _, t := range f.terms {
		e = add(e, scale(t.weight, evalComponent(t.c.name, v)))
	}
	return e
}

func (f *Functional) eval5(v *spinVars[g5]) dual[g5] {
	e := konst[g5](0)
	for _, t := range f.terms {
		e = add(e, scale(t.weight, evalComponent(t.c.name, v)))
	}
	return e
}

// evalComponent calls the kernels statically (a call through a function
// value would move the point's variables to the heap).
func evalComponent[G grad](name string, v *spinVars[G]) dual[G] {
	switch name {
	case "slater":
		return slaterX(v)
	case "vwn5":
		return vwn5C(v)
	case "vwn-rpa":
		return vwnRPAC(v)
	case "b88":
		return b88X(v)
	case "lyp":
		return lypC(v)
	case "pbe-x":
		return pbeX(v)
	case "pbe-c":
		return pbeC(v)
	}
	panic("dft: component " + name + " has no kernel") // unreachable: names come from the components table
}

// EvalUnpolarized evaluates the functional at n points of a spin-unpolarised
// density: rho[i] = ρ, sigma[i] = |∇ρ|² (ignored for LDA; may be nil then).
// It writes the energy density per volume e[i] (libxc's zk is e/ρ) and the
// derivatives vrho[i] = ∂e/∂ρ, vsigma[i] = ∂e/∂σ (vsigma may be nil for LDA).
// Points with ρ ≤ 1e-20 give zeros.
func (f *Functional) EvalUnpolarized(rho, sigma, e, vrho, vsigma []float64) {
	for i, r := range rho {
		var s float64
		if f.gga {
			s = sigma[i]
		}
		if !(r > rhoFloor) {
			e[i], vrho[i] = 0, 0
			if f.gga {
				vsigma[i] = 0
			}
			continue
		}
		half := dual[g2]{v: r / 2}
		half.d[0] = 0.5
		q := dual[g2]{v: s / 4}
		q.d[1] = 0.25
		v := spinVars[g2]{ra: half, rb: half, saa: q, sab: q, sbb: q}
		out := f.eval2(&v)
		e[i], vrho[i] = out.v, out.d[0]
		if f.gga {
			vsigma[i] = out.d[1]
		}
	}
}

// EvalPolarized evaluates the functional at n points of a spin-polarised
// density in libxc's layout: rho[2i:2i+2] = (ρα, ρβ), sigma[3i:3i+3] =
// (σαα, σαβ, σββ). It writes e[i] (energy per volume), vrho[2i:2i+2] and
// vsigma[3i:3i+3] (sigma and vsigma may be nil for LDA).
func (f *Functional) EvalPolarized(rho, sigma, e, vrho, vsigma []float64) {
	for i := range e {
		ra, rb := rho[2*i], rho[2*i+1]
		if ra < 0 {
			ra = 0
		}
		if rb < 0 {
			rb = 0
		}
		if !(ra+rb > rhoFloor) {
			e[i], vrho[2*i], vrho[2*i+1] = 0, 0, 0
			if f.gga {
				vsigma[3*i], vsigma[3*i+1], vsigma[3*i+2] = 0, 0, 0
			}
			continue
		}
		var v spinVars[g5]
		v.ra = dual[g5]{v: ra}
		v.ra.d[0] = 1
		v.rb = dual[g5]{v: rb}
		v.rb.d[1] = 1
		if f.gga {
			v.saa = dual[g5]{v: sigma[3*i]}
			v.saa.d[2] = 1
			v.sab = dual[g5]{v: sigma[3*i+1]}
			v.sab.d[3] = 1
			v.sbb = dual[g5]{v: sigma[3*i+2]}
			v.sbb.d[4] = 1
		}
		out := f.eval5(&v)
		e[i], vrho[2*i], vrho[2*i+1] = out.v, out.d[0], out.d[1]
		if f.gga {
			vsigma[3*i], vsigma[3*i+1], vsigma[3*i+2] = out.d[2], out.d[3], out.d[4]
		}
	}
}
