package opt

import (
	"fmt"
	"sync"

	"gonum.org/v1/gonum/mat"
)

// FiniteDifferenceGradient returns an EnergyGradient that differentiates
// energy by central differences with step h (bohr) along every Cartesian
// coordinate: 6N energies per gradient, run on `workers` goroutines. The
// truncation error is O(h²) (about 1e-7 hartree/bohr for h = 1e-3 bohr on
// typical surfaces).
func FiniteDifferenceGradient(energy func(x []float64) (float64, error), h float64, workers int) EnergyGradient {
	return directional(energy, h, workers, func(x []float64) [][]float64 {
		dirs := make([][]float64, len(x))
		for i := range dirs {
			dirs[i] = make([]float64, len(x))
			dirs[i][i] = 1
		}
		return dirs
	})
}

// InternalFiniteDifferenceGradient is FiniteDifferenceGradient taken only
// along the 3N−6 (3N−5 for linear) directions free of overall translation
// and rotation: the energy does not change along the other six, so the
// gradient is the same but needs 2(3N−6) energies instead of 6N — two for a
// diatomic instead of twelve.
func InternalFiniteDifferenceGradient(energy func(x []float64) (float64, error), h float64, workers int) EnergyGradient {
	return directional(energy, h, workers, internalDirections)
}

// directional differentiates energy along orthonormal directions: the
// gradient is Σ_k (dE/dq_k) d_k, with central differences of step h, the
// displaced energies computed on `workers` goroutines.
func directional(energy func(x []float64) (float64, error), h float64, workers int, directions func([]float64) [][]float64) EnergyGradient {
	if workers < 1 {
		workers = 1
	}
	return func(x []float64) (float64, []float64, error) {
		dirs := directions(x)
		m := len(dirs)
		vals := make([]float64, 2*m)
		errs := make([]error, 2*m)
		tasks := make(chan int)
		var wg sync.WaitGroup
		for w := 0; w < workers; w++ {
			wg.Add(1)
			go func() {
				defer wg.Done()
				for t := range tasks {
					s := h
					if t%2 == 1 {
						s = -h
					}
					y := append([]float64(nil), x...)
					for i := range y {
						y[i] += s * dirs[t/2][i]
					}
					vals[t], errs[t] = energy(y)
				}
			}()
		}
		var e0 float64
		var err0 error
		wg.Add(1)
		go func() { defer wg.Done(); e0, err0 = energy(x) }()
		for t := 0; t < 2*m; t++ {
			tasks <- t
		}
		close(tasks)
		wg.Wait()
		if err0 != nil {
			return 0, nil, err0
		}
		g := make([]float64, len(x))
		for k := 0; k < m; k++ {
			for s := 0; s < 2; s++ {
				if errs[2*k+s] != nil {
					return 0, nil, fmt.Errorf("displaced energy along direction %d: %w", k, errs[2*k+s])
				}
			}
			d := (vals[2*k] - vals[2*k+1]) / (2 * h)
			for i := range g {
				g[i] += d * dirs[k][i]
			}
		}
		return e0, g, nil
	}
}

// internalDirections is an orthonormal basis of the Cartesian directions
// orthogonal to overall translation and rotation at x, in a fixed order.
func internalDirections(x []float64) [][]float64 {
	return Complement(RigidBasis(x, nil), len(x))
}

// InternalDirections is the orthonormal basis of the 3N−6 (3N−5 for a
// linear molecule) Cartesian directions orthogonal to overall translation
// and rotation at x, in a fixed order.
func InternalDirections(x []float64) [][]float64 { return internalDirections(x) }

// Complement returns an orthonormal basis of the n-dimensional space
// orthogonal to the orthonormal vectors basis, in a fixed order.
func Complement(basis [][]float64, n int) [][]float64 {
	sym := mat.NewSymDense(n, nil)
	for i := 0; i < n; i++ {
		sym.SetSym(i, i, 1)
	}
	for _, b := range basis {
		for i := 0; i < n; i++ {
			for j := i; j < n; j++ {
				sym.SetSym(i, j, sym.At(i, j)-b[i]*b[j])
			}
		}
	}
	var eig mat.EigenSym
	eig.Factorize(sym, true)
	vals := eig.Values(nil)
	var V mat.Dense
	eig.VectorsTo(&V)
	var dirs [][]float64
	for k := 0; k < n; k++ {
		if vals[k] > 0.5 {
			dirs = append(dirs, mat.Col(nil, k, &V))
		}
	}
	return dirs
}
