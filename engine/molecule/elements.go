package molecule

import (
	"fmt"
	"strings"
)

// Element describes one chemical element of the supported range H–Kr.
type Element struct {
	Symbol string
	Z      int
	// MassDalton is the mass of the most abundant isotope in unified atomic
	// mass units (AME2016 atomic masses, as tabulated by NIST; values from memory).
	MassDalton float64
	// CoreOrbitals is the number of doubly occupied chemical-core orbitals
	// (frozen in frozen-core correlated calculations): the preceding noble-gas shell,
	// with the 3d shell of Ga–Kr counted as core.
	CoreOrbitals int
}

var elements = []Element{
	{"H", 1, 1.00782503223, 0},
	{"He", 2, 4.00260325413, 0},
	{"Li", 3, 7.0160034366, 1},
	{"Be", 4, 9.012183065, 1},
	{"B", 5, 11.00930536, 1},
	{"C", 6, 12.0, 1},
	{"N", 7, 14.00307400443, 1},
	{"O", 8, 15.99491461957, 1},
	{"F", 9, 18.99840316273, 1},
	{"Ne", 10, 19.9924401762, 1},
	{"Na", 11, 22.989769282, 5},
	{"Mg", 12, 23.985041697, 5},
	{"Al", 13, 26.98153853, 5},
	{"Si", 14, 27.97692653465, 5},
	{"P", 15, 30.97376199842, 5},
	{"S", 16, 31.9720711744, 5},
	{"Cl", 17, 34.968852682, 5},
	{"Ar", 18, 39.9623831237, 5},
	{"K", 19, 38.9637064864, 9},
	{"Ca", 20, 39.962590863, 9},
	{"Sc", 21, 44.95590828, 9},
	{"Ti", 22, 47.94794198, 9},
	{"V", 23, 50.94395704, 9},
	{"Cr", 24, 51.94050623, 9},
	{"Mn", 25, 54.93804391, 9},
	{"Fe", 26, 55.93493633, 9},
	{"Co", 27, 58.93319429, 9},
	{"Ni", 28, 57.93534241, 9},
	{"Cu", 29, 62.92959772, 9},
	{"Zn", 30, 63.92914201, 9},
	{"Ga", 31, 68.9255735, 14},
	{"Ge", 32, 73.921177761, 14},
	{"As", 33, 74.92159457, 14},
	{"Se", 34, 79.9165218, 14},
	{"Br", 35, 78.9183376, 14},
	{"Kr", 36, 83.9114977282, 14},
}

var bySymbol = func() map[string]*Element {
	m := make(map[string]*Element, len(elements))
	for i := range elements {
		m[strings.ToLower(elements[i].Symbol)] = &elements[i]
	}
	return m
}()

// Lookup returns the element with the given symbol (case-insensitive).
func Lookup(symbol string) (Element, error) {
	e, ok := bySymbol[strings.ToLower(symbol)]
	if !ok {
		return Element{}, fmt.Errorf("unknown element symbol %q (moltrail supports H to Kr)", symbol)
	}
	return *e, nil
}

// ByZ returns the element with atomic number z.
func ByZ(z int) (Element, error) {
	if z < 1 || z > len(elements) {
		return Element{}, fmt.Errorf("atomic number %d is outside the supported range 1–%d", z, len(elements))
	}
	return elements[z-1], nil
}
