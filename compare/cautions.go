package compare

import (
	"fmt"
	"math"
	"sort"
	"strings"
)

// catalogue explains every caution code; the order is the legend order.
var catalogue = []CautionInfo{
	{CodeSmall, "near-zero quantity",
		"The reference or computed value is close to zero compared with its own uncertainty or with the floor for its kind. A relative deviation would be meaningless and is not given; the sign of such a value is fragile and a small absolute error can reverse it."},
	{CodeFlip, "opposite sign to the reference",
		"The computed value has the opposite sign (for a dipole: the opposite polarity) to the reference. The absolute deviation understates how wrong the physical picture is."},
	{CodeFlipLevel, "levels disagree on the sign",
		"Different methods or basis sets give this quantity opposite signs. At least one of them describes the charge distribution qualitatively wrongly; the quantity is sensitive to the level."},
	{CodeCancel, "small residue of large opposing parts",
		"The total moment is a small difference of much larger nuclear and electronic contributions. A small relative error in the electron density becomes a large relative error in the moment. The ratio shown is the size of the parts over the size of the total."},
	{CodeOrigin, "depends on the origin",
		"The quadrupole of a polar molecule (or the dipole of an ion) changes with the point it is taken about. It was compared about the origin the reference states; a value quoted about any other point is a different number."},
	{CodeDiffuse, "basis without diffuse functions",
		"Electric moments depend on the outer tail of the electron density, which basis sets without diffuse functions describe poorly. Differences from the reference at this level may reflect the basis more than the method."},
	{CodeNoise, "deviation within the noise",
		"The deviation is smaller than the reference's stated uncertainty or than the precision the calculation's convergence criteria guarantee. It is not significant: neither its size nor its sign means anything."},
	{CodeExcluded, "record left out",
		"A record that carries a reference molecule's name was not used: it did not converge, failed, or is another species (charge or spin state) of the same atoms. It is listed so that nothing is dropped silently."},
}

// Legend returns the explanation of every caution code.
func Legend() []CautionInfo { return append([]CautionInfo(nil), catalogue...) }

func info(code string) CautionInfo {
	for _, c := range catalogue {
		if c.Code == code {
			return c
		}
	}
	return CautionInfo{Code: code, Title: code}
}

func (t *Table) addCaution(code string, d *Deviation, detail string) *Caution {
	ci := info(code)
	c := Caution{Code: code, Title: ci.Title, Explain: ci.Explain, Detail: detail}
	if d != nil {
		c.EntryID, c.RecordID, c.Molecule, c.Quantity, c.Level = d.EntryID, d.RecordID, d.Molecule, d.Quantity, d.Level
		d.Cautions = appendCode(d.Cautions, code)
	}
	t.Cautions = append(t.Cautions, c)
	return &t.Cautions[len(t.Cautions)-1]
}

func appendCode(list []string, code string) []string {
	for _, c := range list {
		if c == code {
			return list
		}
	}
	return append(list, code)
}

func isMoment(kind string) bool {
	return kind == KindDipoleNorm || kind == KindDipoleAxis || kind == KindQuadrupole
}

// floorOf is the near-zero floor of a kind (0: the kind is never near zero).
func floorOf(kind string, o Options) float64 {
	switch kind {
	case KindDipoleNorm, KindDipoleAxis:
		return o.DipoleFloorDebye
	case KindQuadrupole:
		return o.QuadFloorDA
	case KindEnergyDelta:
		return o.EnergyFloorKJ
	}
	return 0
}

// fmtv prints a value with a sensible number of digits for its unit.
func fmtv(v float64, unit string) string {
	switch unit {
	case "pm":
		return fmt.Sprintf("%.2f pm", v)
	case "deg":
		return fmt.Sprintf("%.2f°", v)
	case "D":
		return fmt.Sprintf("%+.4f D", v)
	case "D·Å":
		return fmt.Sprintf("%+.3f D·Å", v)
	case "kJ/mol":
		return fmt.Sprintf("%.2f kJ/mol", v)
	}
	return fmt.Sprintf("%g %s", v, unit)
}

// attachCautions checks one new deviation and fills its relative deviation.
func (t *Table) attachCautions(i int, e *Entry, ctx *devContext, lv Level, o Options) {
	d := &t.Deviations[i]
	floor := floorOf(d.Kind, o)
	small := false
	if floor > 0 {
		var why []string
		if math.Abs(d.Reference) < floor {
			why = append(why, fmt.Sprintf("|reference| %s is below the floor %s", strings.TrimPrefix(fmtv(math.Abs(d.Reference), d.Unit), "+"), strings.TrimPrefix(fmtv(floor, d.Unit), "+")))
		}
		if d.Uncertainty > 0 && math.Abs(d.Reference) < 3*d.Uncertainty {
			why = append(why, fmt.Sprintf("|reference| is less than 3 × its uncertainty %s", strings.TrimPrefix(fmtv(d.Uncertainty, d.Unit), "+")))
		}
		if math.Abs(d.Computed) < floor {
			why = append(why, fmt.Sprintf("|computed| %s is below the floor", strings.TrimPrefix(fmtv(math.Abs(d.Computed), d.Unit), "+")))
		}
		if len(why) > 0 {
			small = true
			t.addCaution(CodeSmall, d, strings.Join(why, "; ")+"; relative deviation suppressed; sign-sensitive")
		}
	}
	if !small && d.Kind != KindEnergy && d.Reference != 0 {
		r := d.Signed / math.Abs(d.Reference)
		d.Relative = &r
	}
	if ctx.signed && d.Reference*d.Computed < 0 && math.Abs(d.Computed) > ctx.precision {
		what := "sign"
		if d.Kind == KindDipoleAxis {
			what = "polarity"
		}
		t.addCaution(CodeFlip, d, fmt.Sprintf("computed %s, reference %s: opposite %s", fmtv(d.Computed, d.Unit), fmtv(d.Reference, d.Unit), what))
	}
	if ctx.cancelRatio > 0 {
		thr := o.CancelDipole
		if d.Kind == KindQuadrupole {
			thr = o.CancelQuad
		}
		if ctx.cancelRatio > thr {
			c := t.addCaution(CodeCancel, d, ctx.cancelDetail+fmt.Sprintf(" (flagged above %.0f)", thr))
			r := ctx.cancelRatio
			c.Ratio = &r
		}
	}
	if ctx.originCaution {
		t.addCaution(CodeOrigin, d, ctx.originDetail)
	}
	if isMoment(d.Kind) && !lv.Diffuse {
		d.Cautions = appendCode(d.Cautions, CodeDiffuse)
	}
	abs := math.Abs(d.Signed)
	switch {
	case d.Uncertainty > 0 && abs < d.Uncertainty:
		t.addCaution(CodeNoise, d, fmt.Sprintf("|deviation| %s is below the reference uncertainty %s: not significant", strings.TrimPrefix(fmtv(abs, d.Unit), "+"), strings.TrimPrefix(fmtv(d.Uncertainty, d.Unit), "+")))
	case ctx.precision > 0 && abs < ctx.precision:
		t.addCaution(CodeNoise, d, fmt.Sprintf("|deviation| %s is below the precision %s guaranteed by the %s: not significant", strings.TrimPrefix(fmtv(abs, d.Unit), "+"), strings.TrimPrefix(fmtv(ctx.precision, d.Unit), "+"), ctx.precisionHow))
	}
}

// levelCautions adds the per-level basis caution and the sign
// disagreements between levels.
func (t *Table) levelCautions(o Options) {
	for _, lv := range t.Levels {
		if lv.Diffuse {
			continue
		}
		n := 0
		for _, d := range t.Deviations {
			if d.Level == lv.Label && isMoment(d.Kind) {
				n++
			}
		}
		if n > 0 {
			ci := info(CodeDiffuse)
			t.Cautions = append(t.Cautions, Caution{Code: CodeDiffuse, Title: ci.Title, Explain: ci.Explain, Level: lv.Label,
				Detail: fmt.Sprintf("%d moment value(s) at %s: basis %s has no diffuse functions (judged from its name)", n, lv.Label, lv.Basis)})
		}
	}
	byEntry := map[string][]int{}
	var order []string
	for i, d := range t.Deviations {
		if d.Kind != KindDipoleAxis && d.Kind != KindQuadrupole && d.Kind != KindEnergyDelta {
			continue
		}
		if _, ok := byEntry[d.EntryID]; !ok {
			order = append(order, d.EntryID)
		}
		byEntry[d.EntryID] = append(byEntry[d.EntryID], i)
	}
	for _, id := range order {
		idx := byEntry[id]
		pos, neg := false, false
		for _, i := range idx {
			if t.Deviations[i].Computed > 0 {
				pos = true
			} else if t.Deviations[i].Computed < 0 {
				neg = true
			}
		}
		if !(pos && neg) {
			continue
		}
		var parts []string
		for _, i := range idx {
			d := &t.Deviations[i]
			parts = append(parts, d.Level+" "+fmtv(d.Computed, d.Unit))
			d.Cautions = appendCode(d.Cautions, CodeFlipLevel)
		}
		d0 := t.Deviations[idx[0]]
		ci := info(CodeFlipLevel)
		t.Cautions = append(t.Cautions, Caution{Code: CodeFlipLevel, Title: ci.Title, Explain: ci.Explain, EntryID: id,
			Molecule: d0.Molecule, Quantity: d0.Quantity, Detail: strings.Join(parts, "; ")})
	}
	for i := range t.Deviations {
		sort.Strings(t.Deviations[i].Cautions)
	}
}

func (t *Table) excludedCautions() {
	ci := info(CodeExcluded)
	for _, x := range t.Excluded {
		t.Cautions = append(t.Cautions, Caution{Code: CodeExcluded, Title: ci.Title, Explain: ci.Explain, RecordID: x.RecordID,
			Molecule: x.Molecule, Level: x.Level, Detail: x.Reason})
	}
}

// standardNotes are the remarks every rendering carries.
func standardNotes(t *Table) []string {
	mem := 0
	for _, d := range t.Deviations {
		if d.FromMemory {
			mem++
		}
	}
	notes := []string{
		"Deviations are computed − reference, in pm, degrees, D, D·Å or kJ/mol. MSE measures accuracy (systematic error), SD precision (scatter about the MSE).",
		"Experimental moments are vibrationally averaged and experimental structures are equilibrium values derived with models of their own; a computed value at one geometry is not the same physical quantity, and agreement can be fortuitous.",
		"Confidence intervals are percentile bootstrap intervals over the entries of each row (fixed seed, so the same input gives the same output); with few entries they are rough.",
		"Statistics over a handful of small molecules do not transfer to other chemistry; validate against data for your own systems before drawing conclusions.",
	}
	if mem > 0 {
		notes = append(notes, fmt.Sprintf("%d of %d reference values used are marked as recalled from their cited source rather than transcribed; check them against the source before publishing.", mem, len(t.Deviations)))
	}
	// Traceless quadrupole components of one molecule sum to zero, so
	// their deviations are not independent: a mean over them says little.
	perMol := map[string]int{}
	for _, d := range t.Deviations {
		if d.Kind == KindQuadrupole {
			perMol[d.Level+"|"+d.Molecule]++
		}
	}
	for _, n := range perMol {
		if n > 1 {
			notes = append(notes, "Several quadrupole components of one molecule enter the statistics; the components of a traceless quadrupole sum to zero, so their deviations are not independent and their mean is pulled towards zero.")
			break
		}
	}
	if len(t.Excluded) > 0 {
		notes = append(notes, fmt.Sprintf("%d record(s) matching reference molecules were left out (not converged, failed, or another charge or spin state; see the list of records left out).", len(t.Excluded)))
	}
	return notes
}
