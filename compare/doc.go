// Package compare sets archived calculation records against reference
// values: it reads reference sets (a JSON layout of moltrail's own, schema
// in schemas/refset.schema.json, with built-in sets embedded under
// refsets/), matches records to entries by molecule name, formula and atom
// order, computes signed and relative deviations in natural units,
// accuracy and precision statistics per level and quantity kind with
// bootstrap confidence intervals, compares levels pairwise, and attaches
// cautions to numbers that must not be taken at face value.
//
// compare never opens the archive: callers pass plain archive.Record
// values in and get a Table back.
package compare

// Quantity kinds of a reference entry.
const (
	KindBondLength  = "bond_length"
	KindAngle       = "angle"
	KindDipoleNorm  = "dipole_magnitude"
	KindDipoleAxis  = "dipole_component"
	KindQuadrupole  = "quadrupole_component"
	KindEnergy      = "total_energy"
	KindEnergyDelta = "energy_difference"
)

// Caution codes. They are moltrail's own short names; CautionLegend
// explains each in plain words.
const (
	CodeSmall     = "near-zero"
	CodeFlip      = "sign-flip"
	CodeFlipLevel = "sign-split"
	CodeCancel    = "cancelling"
	CodeOrigin    = "origin"
	CodeDiffuse   = "no-diffuse"
	CodeNoise     = "below-noise"
	CodeExcluded  = "left-out"
)
