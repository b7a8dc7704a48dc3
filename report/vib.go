package report

import (
	"fmt"

	"moltrail/archive"
)

// minimumNote says what harmonic frequencies computed on a structure show
// about it: a minimum, or — marked in bold — not a minimum. Empty when no
// record of the structure has frequencies.
func (b *builder) minimumNote(recs []*archive.Record) rich {
	var out rich
	for _, r := range recs {
		v := r.Results.Vibrations
		if v == nil {
			continue
		}
		lvl := b.levelOf(r)
		switch v.StationaryPoint {
		case "minimum":
			low := "none"
			if len(v.WavenumbersPerCm) > 0 {
				low = fmt.Sprintf("%.1f", v.WavenumbersPerCm[0])
			}
			out = cat(out, txt(fmt.Sprintf(" A minimum at %s: no imaginary harmonic wavenumber (lowest %s cm", lvl, low)), mk("^{−1}"),
				txt(fmt.Sprintf("; zero-point energy %.6f ", v.ZeroPointHartree)), mk("E_{h})."))
		case "saddle-point":
			out = cat(out, boldTxt(" Not a minimum"), txt(fmt.Sprintf(" at %s: %d imaginary harmonic wavenumber%s (%.1fi cm", lvl, v.ImaginaryModes, plural(v.ImaginaryModes), -v.WavenumbersPerCm[0])), mk("^{−1}"), txt(")."))
		default:
			out = cat(out, boldTxt(" Not a stationary point"), txt(fmt.Sprintf(" at %s (largest force %.1e ", lvl, v.MaxForce)), mk("E_{h}/a_{0}"), txt("); its harmonic frequencies describe no minimum."))
		}
	}
	return out
}
