package basis

import (
	"fmt"
	"math"

	"moltrail/engine/molecule"
)

// Shell is one contracted shell placed on an atom.
//
// Coefs are the contraction coefficients multiplied by the normalisation
// of each primitive x^l·exp(−α r²) and rescaled so that the contracted
// function x^l·Σ c_k exp(−α_k r²) has unit norm. The further factor that
// normalises the other Cartesian components (lx, ly, lz), and the
// Cartesian→spherical transformation, are applied by CartNorm and
// CartToSpherical.
type Shell struct {
	L         int
	Exponents []float64
	Coefs     []float64
	Centre    [3]float64 // bohr
	Atom      int        // index into the molecule's atoms
	Pure      bool       // spherical (true) or Cartesian functions
}

// NCart is the number of Cartesian components of angular momentum l.
func NCart(l int) int { return (l + 1) * (l + 2) / 2 }

// NFunc is the number of functions of the shell (2l+1 spherical, NCart Cartesian).
func (s *Shell) NFunc() int {
	if s.Pure {
		return 2*s.L + 1
	}
	return NCart(s.L)
}

// Molecular is a basis placed on a molecule.
type Molecular struct {
	Set     *Set
	Angular Angular
	Shells  []Shell
	// Offsets[i] is the index of shell i's first function.
	Offsets []int
	NBasis  int
	// FuncAtom[μ] is the atom carrying function μ.
	FuncAtom []int
}

// Build places the set on the molecule. angular overrides the set's default
// when not empty.
func Build(s *Set, m *molecule.Molecule, angular Angular) (*Molecular, error) {
	if angular == "" {
		angular = s.Angular
	}
	if angular != Spherical && angular != Cartesian {
		return nil, fmt.Errorf("angular type %q is not spherical or cartesian", angular)
	}
	if el := s.Covers(m); el != "" {
		return nil, fmt.Errorf("basis %q has no functions for element %s", s.Name, el)
	}
	mb := &Molecular{Set: s, Angular: angular}
	for ia, a := range m.Atoms {
		for _, sd := range s.Elements[a.Symbol] {
			if sd.L > MaxL {
				return nil, fmt.Errorf("basis %q: element %s has l=%d functions, beyond the engine's limit of g (l=%d)", s.Name, a.Symbol, sd.L, MaxL)
			}
			// s and p functions are the same in both representations and keep
			// the Cartesian order (x, y, z); only l ≥ 2 shells become spherical.
			sh := Shell{L: sd.L, Exponents: append([]float64(nil), sd.Exponents...), Centre: a.PosBohr, Atom: ia, Pure: angular == Spherical && sd.L >= 2}
			sh.Coefs = normalise(sd.L, sd.Exponents, sd.Coefficients)
			mb.Offsets = append(mb.Offsets, mb.NBasis)
			mb.Shells = append(mb.Shells, sh)
			for k := 0; k < sh.NFunc(); k++ {
				mb.FuncAtom = append(mb.FuncAtom, ia)
			}
			mb.NBasis += sh.NFunc()
		}
	}
	return mb, nil
}

// doubleFactorial returns n!! with (−1)!! = 1.
func doubleFactorial(n int) float64 {
	r := 1.0
	for k := n; k > 1; k -= 2 {
		r *= float64(k)
	}
	return r
}

// normalise returns coefficients that include primitive normalisation for
// x^l and make the contracted x^l function unit-normalised.
func normalise(l int, exps, coefs []float64) []float64 {
	out := make([]float64, len(exps))
	for k, a := range exps {
		out[k] = coefs[k] * math.Pow(2*a/math.Pi, 0.75) * math.Pow(4*a, float64(l)/2) / math.Sqrt(doubleFactorial(2*l-1))
	}
	// ⟨x^l e^{-a r²}|x^l e^{-b r²}⟩ = (2l−1)!! π^{3/2} / (2^l (a+b)^{l+3/2})
	sum := 0.0
	for i, a := range exps {
		for j, b := range exps {
			sum += out[i] * out[j] * doubleFactorial(2*l-1) * math.Pow(math.Pi, 1.5) / (math.Pow(2, float64(l)) * math.Pow(a+b, float64(l)+1.5))
		}
	}
	f := 1 / math.Sqrt(sum)
	for k := range out {
		out[k] *= f
	}
	return out
}

// CartComponents lists (lx, ly, lz) of angular momentum l in moltrail's
// Cartesian order: lx descending, then ly descending (xx, xy, xz, yy, yz, zz).
func CartComponents(l int) [][3]int {
	var out [][3]int
	for lx := l; lx >= 0; lx-- {
		for ly := l - lx; ly >= 0; ly-- {
			out = append(out, [3]int{lx, ly, l - lx - ly})
		}
	}
	return out
}

// CartNorm is the factor that turns the x^l-normalised radial contraction
// into a normalised (lx, ly, lz) component:
// sqrt((2l−1)!! / ((2lx−1)!!(2ly−1)!!(2lz−1)!!)).
func CartNorm(lx, ly, lz int) float64 {
	l := lx + ly + lz
	return math.Sqrt(doubleFactorial(2*l-1) / (doubleFactorial(2*lx-1) * doubleFactorial(2*ly-1) * doubleFactorial(2*lz-1)))
}
