package dft

import (
	"fmt"
	"strings"
)

// DefaultLevel is the grid level used when none is named.
const DefaultLevel = "standard"

// levels are moltrail's named grid levels. Radial points use the
// Treutler–Ahlrichs M4 mapping; the angular order is the degree of the
// product rule (points per full shell: (L+1)²/2). The standard level's 60
// radial points and outer pruning were chosen by measurement: against 75
// points with "zones" pruning they change the B3LYP/cc-pVDZ energies of
// water, CO and OH by < 1e-7 Eh and their integrated electron counts by
// < 5e-8; for benzene (263,802 points instead of 369,768) the energy stays
// within 1e-6 Eh of the reference level's and the electron count error is
// 7e-7 (1.4e-6 before).
var levels = []GridSpec{
	{Level: "coarse", RadialScheme: "treutler-m4", RadialPoints: 50, AngularOrder: 23, Partition: "becke-size-adjusted", Pruning: "zones", DensityCut: 1e-12, BasisCut: 1e-10},
	{Level: "standard", RadialScheme: "treutler-m4", RadialPoints: 60, AngularOrder: 35, Partition: "becke-size-adjusted", Pruning: "zones-outer", DensityCut: 1e-14, BasisCut: 1e-12},
	{Level: "fine", RadialScheme: "treutler-m4", RadialPoints: 99, AngularOrder: 47, Partition: "becke-size-adjusted", Pruning: "zones", DensityCut: 1e-14, BasisCut: 1e-13},
	{Level: "reference", RadialScheme: "treutler-m4", RadialPoints: 110, AngularOrder: 53, Partition: "becke-size-adjusted", Pruning: "zones", DensityCut: 1e-15, BasisCut: 1e-14},
}

// Level returns the full specification of a named grid level ("" = the
// default level).
func Level(name string) (GridSpec, error) {
	key := strings.ToLower(strings.TrimSpace(name))
	if key == "" {
		key = DefaultLevel
	}
	for _, l := range levels {
		if l.Level == key {
			return l, nil
		}
	}
	return GridSpec{}, fmt.Errorf("grid level %q is not known (known: %s)", name, strings.Join(LevelNames(), ", "))
}

// LevelNames lists the named grid levels from coarsest to finest.
func LevelNames() []string {
	out := make([]string, len(levels))
	for i, l := range levels {
		out[i] = l.Level
	}
	return out
}
