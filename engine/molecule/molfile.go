package molecule

import (
	"fmt"
	"strconv"
	"strings"
	"unicode/utf8"
)

// readMolfile reads an MDL molfile in the V2000 layout, or the first record
// of an SD file (records ending in "$$$$"; a note says how many the file
// holds). Coordinates are in ångström. The total charge is the sum of the
// formal charges (the properties block's CHG entries replace the atom
// block's charge codes, as the layout prescribes). Radical and isotope marks
// are not used (a note says so): the multiplicity is given separately and
// the masses are those of the most abundant isotopes. A header that marks
// the coordinates as 2D (a drawing) is refused, and so is the V3000 layout.
func readMolfile(l *lineReader) (*Input, error) {
	var head [3]string
	for i := range head {
		s, ln, ok, err := l.next()
		if err != nil {
			return nil, err
		}
		if !ok {
			return nil, l.errf(ln, "the file ends inside the molfile header (3 lines, then the counts line)")
		}
		head[i] = s
	}
	if !utf8.ValidString(head[0]) {
		return nil, l.errf(1, "the name line is not valid UTF-8 text")
	}
	if len(head[1]) >= 22 && strings.EqualFold(head[1][20:22], "2D") {
		return nil, l.errf(2, "the header marks the coordinates as 2D (a drawing); moltrail needs a 3D structure")
	}
	counts, ln, ok, err := l.next()
	if err != nil {
		return nil, err
	}
	if !ok {
		return nil, l.errf(ln, "the file ends before the counts line")
	}
	if strings.Contains(counts, "V3000") {
		return nil, l.errf(ln, "this is a V3000 molfile; moltrail reads the V2000 layout: save the molecule as a V2000 molfile")
	}
	na, nb, err := countsOf(counts)
	if err != nil {
		return nil, l.errf(ln, "%v", err)
	}
	if na > MaxAtoms {
		return nil, l.errf(ln, "%s", tooMany(na))
	}
	in := &Input{Mol: &Molecule{Name: strings.TrimSpace(head[0])}, Format: InputMolfile, ChargeGiven: true}
	blockCharge := make([]int, 0, na)
	radical, isotope := false, false
	for i := 0; i < na; i++ {
		s, ln, ok, err := l.next()
		if err != nil {
			return nil, err
		}
		if !ok {
			return nil, l.errf(ln, "the counts line promises %d atoms but only %d atom lines follow", na, i)
		}
		el, pos, chg, iso, err := molfileAtom(s)
		if err != nil {
			return nil, l.errf(ln, "%v", err)
		}
		switch chg {
		case 4:
			radical = true
			chg = 0
		case 0:
		default:
			chg = 4 - chg
		}
		isotope = isotope || iso
		blockCharge = append(blockCharge, chg)
		if err := addAtom(in.Mol, el, pos, func(j int) string { return fmt.Sprintf("line %d", j+5) }); err != nil {
			return nil, l.errf(ln, "%v", err)
		}
	}
	for i := 0; i < nb; i++ {
		if _, ln, ok, err := l.next(); err != nil {
			return nil, err
		} else if !ok {
			return nil, l.errf(ln, "the counts line promises %d bonds but only %d bond lines follow", nb, i)
		}
	}
	var chgList map[int]int
	sdf := false
props:
	for {
		s, ln, ok, err := l.next()
		if err != nil {
			return nil, err
		}
		if !ok {
			break
		}
		switch {
		case strings.HasPrefix(s, "M  END"):
			break props
		case strings.HasPrefix(s, "$$$$"):
			sdf = true
			break props
		case strings.HasPrefix(s, "M  CHG"):
			if chgList == nil {
				chgList = map[int]int{}
			}
			if err := pairsOf(s, na, func(a, v int) { chgList[a] = v }); err != nil {
				return nil, l.errf(ln, "%v", err)
			}
		case strings.HasPrefix(s, "M  RAD"):
			radical = true
		case strings.HasPrefix(s, "M  ISO"):
			isotope = true
		}
	}
	total := 0
	if chgList != nil {
		for _, v := range chgList {
			total += v
		}
	} else {
		for _, v := range blockCharge {
			total += v
		}
	}
	in.Mol.Charge = total
	if total != 0 {
		in.Notes = append(in.Notes, fmt.Sprintf("total charge %+d from the molfile's formal charges", total))
	}
	if radical {
		in.Notes = append(in.Notes, "the molfile marks radical centres; the multiplicity is not taken from them (give it explicitly)")
	}
	if isotope {
		in.Notes = append(in.Notes, "isotope marks were ignored: masses are those of the most abundant isotopes")
	}
	// The rest of the first record (SD data items), then further records.
	records := 1
	rest := false
	for {
		s, _, ok, err := l.next()
		if err != nil {
			return nil, err
		}
		if !ok {
			break
		}
		if strings.HasPrefix(s, "$$$$") {
			if sdf {
				records++
			}
			sdf, rest = true, false
			continue
		}
		if sdf && strings.TrimSpace(s) != "" {
			rest = true
		}
	}
	if sdf {
		in.Format = InputSDF
		if rest {
			records++
		}
		if records > 1 {
			in.Notes = append(in.Notes, fmt.Sprintf("the SD file holds %d records; the first (%q) was read: to use another, save it in a file of its own", records, in.Mol.Name))
		}
	}
	return in, nil
}

// molfileCounts reports whether s looks like a V2000 or V3000 counts line.
func molfileCounts(s string) bool {
	if !strings.Contains(s, "V2000") && !strings.Contains(s, "V3000") {
		return false
	}
	if strings.Contains(s, "V3000") {
		return true
	}
	_, _, err := countsOf(s)
	return err == nil
}

// countsOf reads the atom and bond counts (columns 1–3 and 4–6).
func countsOf(s string) (atoms, bonds int, err error) {
	if len(s) < 6 {
		return 0, 0, fmt.Errorf("expected the counts line (atoms in columns 1–3, bonds in 4–6), found %q", clip(s))
	}
	atoms, err1 := strconv.Atoi(strings.TrimSpace(s[0:3]))
	bonds, err2 := strconv.Atoi(strings.TrimSpace(s[3:6]))
	if err1 != nil || err2 != nil || atoms < 1 || bonds < 0 {
		return 0, 0, fmt.Errorf("expected the counts line (a positive atom count in columns 1–3, the bond count in 4–6), found %q", clip(s))
	}
	return atoms, bonds, nil
}

// molfileAtom reads one atom line: x, y, z in columns 1–30 (ångström),
// the symbol in 32–34, the mass difference in 35–36 and the charge code in 37–39.
func molfileAtom(s string) (Element, [3]float64, int, bool, error) {
	var pos [3]float64
	if len(s) < 34 {
		return Element{}, pos, 0, false, fmt.Errorf("expected an atom line (x y z in columns 1–30, the symbol in 32–34), found %q", clip(s))
	}
	for k := 0; k < 3; k++ {
		f := strings.TrimSpace(s[10*k : 10*k+10])
		v, err := coordinate(f)
		if err != nil {
			return Element{}, pos, 0, false, fmt.Errorf("coordinate %c %v", "xyz"[k], err)
		}
		pos[k] = v
	}
	sym := strings.TrimSpace(s[31:34])
	el, err := Lookup(sym)
	if err != nil {
		return Element{}, pos, 0, false, err
	}
	iso := false
	if len(s) >= 36 {
		if d := strings.TrimSpace(s[34:36]); d != "" && d != "0" {
			iso = true
		}
	}
	chg := 0
	if len(s) >= 39 {
		if c := strings.TrimSpace(s[36:39]); c != "" {
			v, err := strconv.Atoi(c)
			if err != nil || v < 0 || v > 7 {
				return Element{}, pos, 0, false, fmt.Errorf("charge code %q (columns 37–39) is not 0–7", c)
			}
			chg = v
		}
	}
	return el, pos, chg, iso, nil
}

// pairsOf reads the atom–value pairs of a properties line ("M  CHG  n  a v …").
func pairsOf(s string, na int, set func(atom, value int)) error {
	f := strings.Fields(s)
	if len(f) < 3 {
		return fmt.Errorf("expected `M  CHG n atom value …`")
	}
	n, err := strconv.Atoi(f[2])
	if err != nil || n < 1 || n > 8 || len(f) != 3+2*n {
		return fmt.Errorf("expected `M  CHG n` with n from 1 to 8 and n atom–value pairs")
	}
	for i := 0; i < n; i++ {
		a, err1 := strconv.Atoi(f[3+2*i])
		v, err2 := strconv.Atoi(f[4+2*i])
		if err1 != nil || err2 != nil || a < 1 || a > na || v < -15 || v > 15 {
			return fmt.Errorf("pair %d: expected an atom number from 1 to %d and a charge from −15 to 15", i+1, na)
		}
		set(a, v)
	}
	return nil
}
