package engine

import (
	"fmt"
	"io"
)

// RunOptions control how (not what) a job is computed; they never change a
// number and are not part of the canonical input.
type RunOptions struct {
	// Threads is the number of goroutines for integral and grid work (0 = all cores).
	Threads int
	// Progress receives human-readable progress lines (nil = silent).
	Progress io.Writer
}

// Run computes a normalised job. A calculation that ran but did not
// converge returns a Result with Status not_converged and a nil error; an
// error means the job could not be computed at all.
func Run(job *Job, opt RunOptions) (*Result, error) {
	if err := job.Validate(); err != nil {
		return nil, err
	}
	return nil, fmt.Errorf("the SCF engine is not wired in yet")
}
