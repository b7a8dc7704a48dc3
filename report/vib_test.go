package report

import (
	"bytes"
	"strings"
	"testing"

	"moltrail/archive"
	"moltrail/engine"
)

// A structure whose frequencies show a saddle point is marked "Not a
// minimum" in its caption; one shown to be a minimum says so; structures
// without frequencies carry neither.
func TestStructuresMarkedByFrequencies(t *testing.T) {
	tbl, recs := fixture(t, 2)
	recs[0].Results.Vibrations = &engine.Vibrations{WavenumbersPerCm: []float64{-1081.4, 1866.4, 1866.4, 4023.6, 4363.5, 4363.5}, ImaginaryModes: 1, StationaryPoint: "saddle-point", ZeroPointHartree: 0.0376}
	recs[1].Results.Vibrations = &engine.Vibrations{WavenumbersPerCm: []float64{1826.5, 4070.5, 4188.7}, StationaryPoint: "minimum", ZeroPointHartree: 0.022977}
	var m bytes.Buffer
	if err := Markdown(&m, tbl, recs, testOpts); err != nil {
		t.Fatal(err)
	}
	md := m.String()
	for _, w := range []string{"Not a minimum at " + archive.JobLevel(&recs[0].Input) + ": 1 imaginary harmonic wavenumber (1081.4i cm<sup>−1</sup>).",
		"A minimum at " + archive.JobLevel(&recs[1].Input) + ": no imaginary harmonic wavenumber (lowest 1826.5 cm<sup>−1</sup>; zero-point energy 0.022977 E<sub>h</sub>)."} {
		if !strings.Contains(md, w) {
			t.Errorf("Markdown lacks %q", w)
		}
	}
	if n := strings.Count(md, "minimum at "); n != 2 {
		t.Errorf("%d frequency remarks, want 2", n)
	}
}
