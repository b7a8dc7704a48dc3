package opt

import (
	"fmt"
	"io"
	"sync"

	"gonum.org/v1/gonum/mat"
)

// FiniteDifferenceGradient returns an EnergyGradient that differentiates
// energy by central differences with step h (bohr) along every Cartesian
// coordinate: 6N energies per gradient, run on `workers` goroutines. The
// truncation error is O(h²) (about 1e-7 hartree/bohr for h = 1e-3 bohr on
// typical surfaces).
func FiniteDifferenceGradient(energy func(x []float64) (float64, error), h float64, workers int) EnergyGradient {
	return directional(energy, h, workers, nil, func(x []float64) [][]float64 {
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
// diatomic instead of twelve. progress (nil: none) receives a line per
// finished energy.
func InternalFiniteDifferenceGradient(energy func(x []float64) (float64, error), h float64, workers int, progress io.Writer) EnergyGradient {
	return directional(energy, h, workers, progress, internalDirections)
}

// directional differentiates energy along orthonormal directions: the
// gradient is Σ_k (dE/dq_k) d_k, with central differences of step h, the
// displaced energies computed on `workers` goroutines.
func directional(energy func(x []float64) (float64, error), h float64, workers int, progress io.Writer, directions func([]float64) [][]float64) EnergyGradient {
	return func(x []float64) (float64, []float64, error) {
		dirs := directions(x)
		m := len(dirs)
		vals := make([]float64, 2*m+1)
		err := Parallel(2*m+1, workers, progress, "  gradient: energy", func(t int) error {
			y := append([]float64(nil), x...)
			if t < 2*m {
				s := h
				if t%2 == 1 {
					s = -h
				}
				for i := range y {
					y[i] += s * dirs[t/2][i]
				}
			}
			var err error
			vals[t], err = energy(y)
			return err
		})
		if err != nil {
			return 0, nil, err
		}
		g := make([]float64, len(x))
		for k := 0; k < m; k++ {
			d := (vals[2*k] - vals[2*k+1]) / (2 * h)
			for i := range g {
				g[i] += d * dirs[k][i]
			}
		}
		return vals[2*m], g, nil
	}
}

// Parallel runs f(0) … f(n−1) on `workers` goroutines (at least one) and
// returns the error of the lowest-numbered failure, naming it as the
// displaced calculation t+1 of n. Each result must be written by f to its
// own slot, so the outcome never depends on the worker count. progress
// (nil: none) receives "<label> k of n done" as each finishes.
func Parallel(n, workers int, progress io.Writer, label string, f func(t int) error) error {
	if workers < 1 {
		workers = 1
	}
	errs := make([]error, n)
	tasks := make(chan int)
	var mu sync.Mutex
	done := 0
	var wg sync.WaitGroup
	for w := 0; w < workers; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for t := range tasks {
				errs[t] = f(t)
				mu.Lock()
				done++
				if progress != nil {
					fmt.Fprintf(progress, "%s %d of %d done\n", label, done, n)
				}
				mu.Unlock()
			}
		}()
	}
	for t := 0; t < n; t++ {
		tasks <- t
	}
	close(tasks)
	wg.Wait()
	for t, err := range errs {
		if err != nil {
			return fmt.Errorf("displaced calculation %d of %d: %w", t+1, n, err)
		}
	}
	return nil
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
