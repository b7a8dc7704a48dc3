package archive

import (
	"encoding/json"
	"fmt"
	"math"
	"sort"
	"strings"
)

// FieldDiff is one input field that differs.
type FieldDiff struct {
	Field string `json:"field"`
	A     any    `json:"a"`
	B     any    `json:"b"`
}

// ResultDiff is one numeric (or status) result that differs.
type ResultDiff struct {
	Quantity string   `json:"quantity"`
	Unit     string   `json:"unit"`
	A        *float64 `json:"a"`
	B        *float64 `json:"b"`
	Abs      *float64 `json:"abs_difference,omitempty"`
	Rel      *float64 `json:"rel_difference,omitempty"`
	// Noise: both values are present and differ by less than one unit of
	// the last decimal moltrail prints the quantity with (Resolution).
	Noise      bool    `json:"noise"`
	Resolution float64 `json:"printed_resolution"`
}

// RecordDiff is what differs between two records.
type RecordDiff struct {
	A       string       `json:"a"`
	B       string       `json:"b"`
	Input   []FieldDiff  `json:"input"`
	Code    []CodeDiff   `json:"code"`
	Status  []FieldDiff  `json:"status"`
	Results []ResultDiff `json:"results"`
}

// flatten lists the leaves of a JSON value by path.
func flatten(prefix string, v any, out map[string]any) {
	switch x := v.(type) {
	case map[string]any:
		for k, e := range x {
			p := k
			if prefix != "" {
				p = prefix + "." + k
			}
			flatten(p, e, out)
		}
	case []any:
		for i, e := range x {
			flatten(fmt.Sprintf("%s[%d]", prefix, i), e, out)
		}
	default:
		out[prefix] = v
	}
}

func leaves(v any) map[string]any {
	b, _ := json.Marshal(v)
	var g any
	json.Unmarshal(b, &g)
	out := map[string]any{}
	flatten("", g, out)
	return out
}

// Diff compares two records: every canonical-input field that differs,
// the code fields that differ, and every quantity (see Quantities) whose
// value differs, with absolute and — where the reference value is not
// near zero — relative difference, marked as noise when the difference is
// below the printed resolution of its kind.
func Diff(a, b *Record) RecordDiff {
	d := RecordDiff{A: a.ID, B: b.ID, Input: []FieldDiff{}, Code: DiffCode(a.Code, b.Code), Status: []FieldDiff{}, Results: []ResultDiff{}}
	if d.Code == nil {
		d.Code = []CodeDiff{}
	}
	la, lb := leaves(a.Input), leaves(b.Input)
	keys := map[string]bool{}
	for k := range la {
		keys[k] = true
	}
	for k := range lb {
		keys[k] = true
	}
	var ks []string
	for k := range keys {
		ks = append(ks, k)
	}
	sort.Strings(ks)
	for _, k := range ks {
		x, okx := la[k]
		y, oky := lb[k]
		if okx && oky && fmt.Sprint(x) == fmt.Sprint(y) {
			continue
		}
		if !okx {
			x = nil
		}
		if !oky {
			y = nil
		}
		if k == "basis.inline_base64" {
			x, y = abbreviate(x), abbreviate(y)
		}
		d.Input = append(d.Input, FieldDiff{Field: k, A: x, B: y})
	}
	if a.Status != b.Status {
		d.Status = append(d.Status, FieldDiff{"status", a.Status, b.Status})
	}
	if a.Results.Error != b.Results.Error {
		d.Status = append(d.Status, FieldDiff{"error", a.Results.Error, b.Results.Error})
	}
	qa, qb := Quantities(a), Quantities(b)
	mb := map[string]Quantity{}
	for _, q := range qb {
		mb[q.Path] = q
	}
	seen := map[string]bool{}
	for _, q := range qa {
		seen[q.Path] = true
		o, ok := mb[q.Path]
		if !ok {
			v := q.Value
			d.Results = append(d.Results, ResultDiff{Quantity: q.Path, Unit: KindUnit[q.Kind], A: &v, Resolution: Resolution(q.Kind)})
			continue
		}
		if o.Value == q.Value {
			continue
		}
		av, bv := q.Value, o.Value
		abs := bv - av
		rd := ResultDiff{Quantity: q.Path, Unit: KindUnit[q.Kind], A: &av, B: &bv, Abs: &abs, Resolution: Resolution(q.Kind)}
		rd.Noise = math.Abs(abs) < rd.Resolution
		if math.Abs(av) > 1e-6 {
			rel := abs / math.Abs(av)
			rd.Rel = &rel
		}
		d.Results = append(d.Results, rd)
	}
	for _, q := range qb {
		if !seen[q.Path] {
			v := q.Value
			d.Results = append(d.Results, ResultDiff{Quantity: q.Path, Unit: KindUnit[q.Kind], B: &v, Resolution: Resolution(q.Kind)})
		}
	}
	return d
}

func abbreviate(v any) any {
	s, ok := v.(string)
	if !ok || len(s) < 24 {
		return v
	}
	return fmt.Sprintf("%s… (%d characters)", strings.TrimSpace(s[:16]), len(s))
}
