package engine

import "fmt"

// GridForLevel returns the full grid specification of a named grid level.
// Until the DFT engine lands there are no grid levels.
func GridForLevel(level string) (GridSpec, error) {
	return GridSpec{}, fmt.Errorf("DFT grids are not available in this build yet (level %q)", level)
}
