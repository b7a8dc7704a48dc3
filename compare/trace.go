package compare

import (
	"fmt"
	"strings"
)

// Figure is one number of a comparison table, as the text, CSV, Markdown
// and PDF renderings print it, with what it is and what it rests on.
type Figure struct {
	// Part is "deviation", "statistics" or "level difference".
	Part string `json:"part"`
	// What names the number: "computed", "reference", "uncertainty",
	// "signed deviation", "relative deviation", "MSE", "SD", "MAE", "RMS",
	// "largest |error|", "largest signed error", "MSE CI low", …
	What     string  `json:"what"`
	Value    float64 `json:"value"`
	Unit     string  `json:"unit"`
	Level    string  `json:"level"`
	Kind     string  `json:"kind"`
	Molecule string  `json:"molecule,omitempty"`
	Quantity string  `json:"quantity,omitempty"`
	EntryID  string  `json:"entry_id,omitempty"`
	// N is the number of deviations a statistic is over.
	N int `json:"n,omitempty"`
	// Records are the archived records the number comes from.
	Records []string `json:"records"`
	// MagnitudeOnly: the figure matches the number's magnitude, not its sign.
	MagnitudeOnly bool `json:"magnitude_only"`
}

// traceUnit resolves a unit given to trace among the comparison's units
// (case-insensitive; "degrees" for deg); ok is false for one it does not
// know. "%" stands for relative deviations in per cent.
func traceUnit(u string) (name string, info unitInfo, ok bool) {
	t := strings.TrimSpace(u)
	switch strings.ToLower(t) {
	case "degrees", "degree", "deg":
		t = "deg"
	case "%", "percent":
		return "%", unitInfo{}, true
	}
	for k, v := range units {
		if strings.EqualFold(k, t) {
			return k, v, true
		}
	}
	return "", unitInfo{}, false
}

// Figures lists every number of the table that prints as a figure standing
// for low ≤ x < high: each in the unit its row gives it in, or, when
// unit is not empty, converted to that unit (numbers of another dimension
// are left out; "%" matches relative deviations in per cent). A number
// whose magnitude matches but whose sign does not is listed with
// MagnitudeOnly. An unknown unit gives an error.
func Figures(t *Table, low, high float64, unit string) ([]Figure, error) {
	var want unitInfo
	wantName := ""
	if unit != "" {
		n, info, ok := traceUnit(unit)
		if !ok {
			return nil, fmt.Errorf("--unit %q is not a unit of the comparison", unit)
		}
		wantName, want = n, info
	}
	in := func(x float64) bool { return x >= low && x < high }
	var out []Figure
	// add checks one number v given in the unit f.Unit of its table row.
	add := func(f Figure, v float64) {
		u := f.Unit
		switch {
		case f.What == "relative deviation":
			if wantName != "" && wantName != "%" {
				return
			}
			v, u = 100*v, "%"
		case wantName == "%":
			return
		case wantName != "":
			have, ok := units[f.Unit]
			if !ok || have.dim != want.dim || want.factor == 0 {
				return
			}
			v, u = v*have.factor/want.factor, wantName
		}
		m := in(v)
		if !m && !in(-v) {
			return
		}
		f.Value, f.Unit, f.MagnitudeOnly = v, u, !m
		out = append(out, f)
	}
	byLevelKind := map[[2]string][]string{}
	for _, d := range t.Deviations {
		k := [2]string{d.Level, d.Kind}
		byLevelKind[k] = appendOnce(byLevelKind[k], d.RecordID)
		base := Figure{Part: "deviation", Level: d.Level, Kind: d.Kind, Unit: d.Unit, Molecule: d.Molecule, Quantity: d.Quantity, EntryID: d.EntryID, Records: []string{d.RecordID}}
		for _, x := range []struct {
			what string
			v    float64
		}{{"computed", d.Computed}, {"reference", d.Reference}, {"uncertainty", d.Uncertainty}, {"signed deviation", d.Signed}} {
			f := base
			f.What = x.what
			add(f, x.v)
		}
		if d.Relative != nil {
			f := base
			f.What = "relative deviation"
			add(f, *d.Relative)
		}
	}
	for _, s := range t.Stats {
		recs := byLevelKind[[2]string{s.Level, s.Kind}]
		base := Figure{Part: "statistics", Level: s.Level, Kind: s.Kind, Unit: s.Unit, N: s.N, Records: recs}
		xs := []struct {
			what string
			v    *float64
		}{{"MSE", &s.MSE}, {"SD", &s.SD}, {"MAE", &s.MAE}, {"RMS", &s.RMS}, {"largest |error|", &s.MaxAbs}, {"largest signed error", &s.MaxSigned},
			{"MSE CI low", s.CILow}, {"MSE CI high", s.CIHigh}}
		for _, x := range xs {
			if x.v == nil || (x.what == "SD" && s.N < 2) {
				continue
			}
			f := base
			f.What = x.what
			if strings.HasPrefix(x.what, "largest") {
				f.Quantity = s.MaxAt
			}
			add(f, *x.v)
		}
	}
	for _, d := range t.LevelDiffs {
		recs := append(append([]string{}, byLevelKind[[2]string{d.LevelA, d.Kind}]...), byLevelKind[[2]string{d.LevelB, d.Kind}]...)
		base := Figure{Part: "level difference", Level: d.LevelA + " − " + d.LevelB, Kind: d.Kind, Unit: d.Unit, N: d.N, Records: recs}
		for _, x := range []struct {
			what string
			v    *float64
		}{{"mean difference", &d.MeanDiff}, {"mean difference CI low", d.CILow}, {"mean difference CI high", d.CIHigh},
			{"MAE difference", &d.MAEDiff}, {"MAE difference CI low", d.MAECILow}, {"MAE difference CI high", d.MAECIHigh}} {
			if x.v == nil {
				continue
			}
			f := base
			f.What = x.what
			add(f, *x.v)
		}
	}
	return out, nil
}

func appendOnce(list []string, id string) []string {
	for _, x := range list {
		if x == id {
			return list
		}
	}
	return append(list, id)
}
