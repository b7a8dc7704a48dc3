package opt

import (
	"fmt"
	"sync"
)

// FiniteDifferenceGradient returns an EnergyGradient that differentiates
// energy by central differences with step h (bohr): 6N energies per
// gradient, run on `workers` goroutines. The truncation error is O(h²)
// (about 1e-7 hartree/bohr for h = 1e-3 bohr on typical surfaces).
func FiniteDifferenceGradient(energy func(x []float64) (float64, error), h float64, workers int) EnergyGradient {
	if workers < 1 {
		workers = 1
	}
	return func(x []float64) (float64, []float64, error) {
		n := len(x)
		vals := make([]float64, 2*n)
		errs := make([]error, 2*n)
		tasks := make(chan int)
		var wg sync.WaitGroup
		for w := 0; w < workers; w++ {
			wg.Add(1)
			go func() {
				defer wg.Done()
				for t := range tasks {
					y := append([]float64(nil), x...)
					i := t / 2
					if t%2 == 0 {
						y[i] += h
					} else {
						y[i] -= h
					}
					vals[t], errs[t] = energy(y)
				}
			}()
		}
		var e0 float64
		var err0 error
		wg.Add(1)
		go func() { defer wg.Done(); e0, err0 = energy(x) }()
		for t := 0; t < 2*n; t++ {
			tasks <- t
		}
		close(tasks)
		wg.Wait()
		if err0 != nil {
			return 0, nil, err0
		}
		g := make([]float64, n)
		for i := 0; i < n; i++ {
			for s := 0; s < 2; s++ {
				if errs[2*i+s] != nil {
					return 0, nil, fmt.Errorf("displaced energy for coordinate %d: %w", i, errs[2*i+s])
				}
			}
			g[i] = (vals[2*i] - vals[2*i+1]) / (2 * h)
		}
		return e0, g, nil
	}
}
