package archive

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"moltrail/engine/molecule"
)

// unitInfo converts from a unit to the kind's stored unit: stored = value × Factor.
type unitInfo struct {
	Kind   string
	Factor float64
	Name   string
}

// TraceUnits are the units trace accepts (case-insensitive spellings).
var traceUnits = map[string]unitInfo{
	"hartree": {KindEnergy, 1, "hartree"}, "eh": {KindEnergy, 1, "hartree"}, "au": {KindEnergy, 1, "hartree"},
	"kj/mol": {KindEnergy, 1 / molecule.KJPerMolPerHartree, "kJ/mol"}, "kcal/mol": {KindEnergy, 1 / molecule.KcalPerMolPerHartree, "kcal/mol"},
	"ev": {KindEnergy, 1 / molecule.HartreeEV, "eV"},
	"d":  {KindDipole, 1, "D"}, "debye": {KindDipole, 1, "D"},
	"e·a0": {KindDipole, molecule.DebyePerAU, "e·a0"}, "ea0": {KindDipole, molecule.DebyePerAU, "e·a0"}, "e*a0": {KindDipole, molecule.DebyePerAU, "e·a0"},
	"å": {KindLength, 1, "Å"}, "a": {KindLength, 1, "Å"}, "angstrom": {KindLength, 1, "Å"}, "pm": {KindLength, 0.01, "pm"},
	"bohr": {KindLength, molecule.BohrAngstrom, "bohr"},
	"deg":  {KindAngle, 1, "degrees"}, "degrees": {KindAngle, 1, "degrees"}, "°": {KindAngle, 1, "degrees"},
	"b": {KindQuadrupole, 1, "D·Å"}, "buckingham": {KindQuadrupole, 1, "D·Å"}, "d·å": {KindQuadrupole, 1, "D·Å"},
}

// UnitNames lists accepted --unit spellings.
func UnitNames() string {
	return "hartree, kJ/mol, kcal/mol, eV, D, e·a0, D·Å, Å, pm, bohr, degrees"
}

// PrintedValue is a number as printed: the interval of values that print
// the same with the same number of digits.
type PrintedValue struct {
	Text     string  `json:"text"`
	Value    float64 `json:"value"`
	Low      float64 `json:"low"`  // inclusive
	High     float64 `json:"high"` // exclusive
	Decimals int     `json:"decimals"`
}

// ParsePrinted reads a printed figure ("1.93", "-76.0268", "9.58e1") and
// its rounding interval: 1.93 stands for 1.925 ≤ x < 1.935.
func ParsePrinted(s string) (PrintedValue, error) {
	t := strings.TrimSpace(s)
	v, err := strconv.ParseFloat(t, 64)
	if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
		return PrintedValue{}, fmt.Errorf("%q is not a number", s)
	}
	mant, exp := t, 0
	if i := strings.IndexAny(t, "eE"); i >= 0 {
		mant = t[:i]
		exp, _ = strconv.Atoi(t[i+1:])
	}
	dec := 0
	if i := strings.IndexByte(mant, '.'); i >= 0 {
		dec = len(mant) - i - 1
	}
	half := 0.5 * math.Pow(10, float64(exp-dec))
	return PrintedValue{Text: t, Value: v, Low: v - half, High: v + half, Decimals: dec - exp}, nil
}

// TraceMatch is one stored quantity that prints as the figure.
type TraceMatch struct {
	RecordID      string  `json:"record_id"`
	Molecule      string  `json:"molecule"`
	Formula       string  `json:"formula"`
	Quantity      string  `json:"quantity"`
	Kind          string  `json:"kind"`
	Value         float64 `json:"value"`
	Unit          string  `json:"unit"`
	MagnitudeOnly bool    `json:"magnitude_only"`
	// Level is the record's level label (LevelLabel over the records searched).
	Level       string  `json:"level"`
	Method      string  `json:"method"`
	Basis       string  `json:"basis"`
	Angular     string  `json:"angular"`
	EnergyTol   float64 `json:"energy_tol_hartree"`
	DensityTol  float64 `json:"density_rms_tol"`
	GradientTol float64 `json:"orbital_gradient_tol"`
	Revision    string  `json:"vcs_revision"`
	Version     string  `json:"code_version"`
	StartUTC    string  `json:"start_utc"`
	Status      string  `json:"status"`
	// Recipe and DerivedFrom are set for a derived record: the inputs it
	// was combined from (trace each by its id).
	Recipe      string         `json:"recipe,omitempty"`
	DerivedFrom []DerivedInput `json:"derived_from,omitempty"`
	// FitSet names the auxiliary set of density-fitted integrals (empty: exact integrals).
	FitSet string `json:"fit_set,omitempty"`
}

// Trace finds every quantity of the given records that, expressed in the
// given unit ("" = each kind in its stored unit: hartree, D, D·Å, Å,
// degrees), rounds to the printed figure. A quantity whose magnitude
// matches but whose sign does not is reported with MagnitudeOnly.
func Trace(recs []*Record, printed string, unit string) ([]TraceMatch, PrintedValue, error) {
	pv, err := ParsePrinted(printed)
	if err != nil {
		return nil, pv, err
	}
	var want *unitInfo
	if unit != "" {
		u, ok := traceUnits[strings.ToLower(strings.TrimSpace(unit))]
		if !ok {
			return nil, pv, fmt.Errorf("--unit %q is not known (known: %s)", unit, UnitNames())
		}
		want = &u
	}
	in := func(x float64) bool { return x >= pv.Low && x < pv.High }
	look := LookupIn(recs)
	var out []TraceMatch
	for _, r := range recs {
		for _, q := range Quantities(r) {
			v, uname := q.Value, KindUnit[q.Kind]
			if want != nil {
				if q.Kind != want.Kind {
					continue
				}
				v, uname = q.Value/want.Factor, want.Name
			}
			m := in(v)
			mag := !m && in(-v)
			if !m && !mag {
				continue
			}
			tm := TraceMatch{RecordID: r.ID, Molecule: r.Input.Molecule.Name, Formula: r.Formula(), Quantity: q.Path,
				Kind: q.Kind, Value: v, Unit: uname, MagnitudeOnly: mag, Level: LevelLabel(r, look), Method: r.Input.Method, Basis: r.Input.Basis.Name,
				Angular: string(r.Input.Basis.Angular), EnergyTol: r.Input.SCF.EnergyTolHartree, DensityTol: r.Input.SCF.DensityTol,
				GradientTol: r.Input.SCF.GradientTol, Revision: r.Code.Revision, Version: r.Code.Version, StartUTC: r.Run.StartUTC, Status: r.Status,
				FitSet: r.FitSet()}
			if d := r.Derivation; d != nil {
				tm.Recipe, tm.DerivedFrom = d.Recipe, d.Inputs
			}
			out = append(out, tm)
		}
	}
	return out, pv, nil
}
