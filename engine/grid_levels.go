package engine

import "moltrail/engine/dft"

// GridForLevel returns the full grid specification of a named grid level
// ("" = the default level); see dft.LevelNames for the names.
func GridForLevel(level string) (GridSpec, error) {
	s, err := dft.Level(level)
	if err != nil {
		return GridSpec{}, err
	}
	return GridFromDFT(s), nil
}

// GridFromDFT converts the DFT package's grid specification to the job's.
func GridFromDFT(s dft.GridSpec) GridSpec {
	return GridSpec{Level: s.Level, RadialScheme: s.RadialScheme, RadialPoints: s.RadialPoints, AngularOrder: s.AngularOrder,
		Partition: s.Partition, Pruning: s.Pruning, DensityCut: s.DensityCut, BasisCut: s.BasisCut}
}

// DFTGrid converts the job's grid specification for the DFT package.
func (g GridSpec) DFTGrid() dft.GridSpec {
	return dft.GridSpec{Level: g.Level, RadialScheme: g.RadialScheme, RadialPoints: g.RadialPoints, AngularOrder: g.AngularOrder,
		Partition: g.Partition, Pruning: g.Pruning, DensityCut: g.DensityCut, BasisCut: g.BasisCut}
}
