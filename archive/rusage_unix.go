//go:build unix

package archive

import (
	"runtime"
	"syscall"
)

// peakMemoryMiB is the process's peak resident set size.
func peakMemoryMiB() float64 {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	if runtime.GOOS == "darwin" {
		return float64(ru.Maxrss) / (1 << 20) // bytes
	}
	return float64(ru.Maxrss) / 1024 // KiB
}

// processCPUSeconds is the processor time (user and system) the process
// has used so far, for benchmarks that must not trust the wall clock on a
// shared machine.
func processCPUSeconds() float64 {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return float64(ru.Utime.Sec+ru.Stime.Sec) + float64(ru.Utime.Usec+ru.Stime.Usec)/1e6
}
