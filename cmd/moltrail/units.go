package main

import (
	"flag"
	"fmt"
	"strings"

	"moltrail/engine"
	"moltrail/engine/molecule"
)

// energyUnit is a unit energies are printed in, with the decimals that
// keep total energies to about 1e-10 hartree and orbital energies to about
// 1e-6 hartree.
type energyUnit struct {
	name       string
	perHartree float64
	totalDec   int
	orbitalDec int
}

var energyUnits = []energyUnit{
	{"hartree", 1, 10, 6},
	{"kJ/mol", molecule.KJPerMolPerHartree, 7, 3},
	{"kcal/mol", molecule.KcalPerMolPerHartree, 7, 4},
	{"eV", molecule.HartreeEV, 9, 5},
}

func addEnergyUnitFlag(fs *flag.FlagSet) *string {
	return fs.String("energy-unit", "hartree", "print energies in `UNIT`: hartree, kJ/mol, kcal/mol or eV")
}

// parseEnergyUnit reads an --energy-unit value (case-insensitive; Eh for hartree).
func parseEnergyUnit(s string) (energyUnit, error) {
	k := strings.ToLower(strings.TrimSpace(s))
	if k == "eh" || k == "au" {
		k = "hartree"
	}
	for _, u := range energyUnits {
		if strings.ToLower(u.name) == k {
			return u, nil
		}
	}
	return energyUnit{}, fmt.Errorf("--energy-unit %q is not hartree, kJ/mol, kcal/mol or eV", s)
}

// header is the unit as a column heading's denominator: hartree, (kJ/mol).
func (u energyUnit) header() string {
	if strings.Contains(u.name, "/") {
		return "(" + u.name + ")"
	}
	return u.name
}

// value is a total energy in the unit, with the unit's name.
func (u energyUnit) value(eh float64) string {
	return fixed(eh*u.perHartree, u.totalDec) + " " + u.name
}

// orbital is an orbital energy (or a difference of them) in the unit.
func (u energyUnit) orbital(eh float64) string {
	return fixed(eh*u.perHartree, u.orbitalDec)
}

// total is a list cell: the energy without the unit, a dash for a failure.
func (u energyUnit) total(status string, eh float64) string {
	if status == engine.StatusFailed {
		return "—"
	}
	return fixed(eh*u.perHartree, u.totalDec)
}
