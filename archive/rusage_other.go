//go:build !unix

package archive

import "runtime"

// peakMemoryMiB falls back to the Go runtime's view of memory obtained from the OS.
func peakMemoryMiB() float64 {
	var ms runtime.MemStats
	runtime.ReadMemStats(&ms)
	return float64(ms.Sys) / (1 << 20)
}

// processCPUSeconds is not known here.
func processCPUSeconds() float64 { return 0 }
