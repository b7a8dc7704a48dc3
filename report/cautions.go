package report

import "strings"

// standingCaution is printed in every report, flagged entries or not.
const standingCaution = "Small and sign-sensitive quantities deserve particular care. A dipole or quadrupole moment near zero " +
	"is the small difference of a large nuclear and a large electronic contribution: a modest relative error in either part " +
	"becomes a large relative error, or a change of sign, in the total, and relative deviations of such values mean little. " +
	"The direction and sign of a moment component depend on the orientation of the molecule and on the sign convention; " +
	"the higher moments of a charged or polar molecule depend on the origin about which they are taken, so values from " +
	"different origins cannot be compared. Basis sets without diffuse functions underestimate the tails of the density that " +
	"dominate multipole moments. Numbers below the convergence noise of the calculation carry no information. The cautions " +
	"below point to entries where such effects were detected; their absence is no proof that a value is reliable. The reader " +
	"should validate the values that matter for their own purpose before relying on them."

func (b *builder) cautions() {
	t := b.tbl
	b.add(heading{Level: 1, Number: "3", Text: txt("Cautions"), Break: true})
	b.add(paragraph{Text: txt(standingCaution)})
	for _, n := range t.Notes {
		b.add(paragraph{Text: cat(txt("• "), txt(n))})
	}
	// The legend: every code with its mark and explanation.
	codes := b.codesInOrder()
	if len(codes) == 0 {
		b.add(paragraph{Text: txt("No entry of this comparison carries a caution.")})
	} else {
		b.add(heading{Level: 2, Number: "3.1", Text: txt("Kinds of caution")})
		var items []kv
		for _, code := range codes {
			expl := ""
			for _, l := range t.Legend {
				if l.Code == code {
					expl = l.Explain
				}
			}
			if expl == "" {
				for _, c := range t.Cautions {
					if c.Code == code && c.Explain != "" {
						expl = c.Explain
						break
					}
				}
			}
			items = append(items, kv{
				Key:   cat(rich{{Text: b.marks[code], Shift: sup}}, txt(" "+code)),
				Value: cat(boldTxt(b.cautionTitle(code)+". "), txt(expl)),
			})
		}
		b.add(kvList{Items: items})
	}
	if len(t.Cautions) > 0 {
		b.add(heading{Level: 2, Number: "3.2", Text: txt("Flagged entries")})
		ct := b.newTable("cautions", txt("Every caution raised, with the numbers behind it."))
		ct.Head = []rich{txt("Mark"), txt("Molecule"), txt("Quantity"), txt("Level"), txt("Detail"), txt("Record")}
		ct.Align = []align{alignCentre, alignLeft, alignLeft, alignLeft, alignLeft, alignLeft}
		ct.Wrap = []float64{0, 70, 60, 80, 190, 0}
		ct.Mono = []bool{false, false, false, false, false, true}
		ct.Key = 1
		prev := ""
		for _, c := range t.Cautions {
			detail := c.Detail
			if detail == "" {
				detail = c.Title
			}
			ct.Rows = append(ct.Rows, row{Cells: []cell{
				{Lines: []rich{txt(b.marks[c.Code])}, Raw: b.marks[c.Code] + " " + c.Code},
				textCell(orDash(c.Molecule)), textCell(orDash(c.Quantity)), textCell(orDash(c.Level)), textCell(detail), textCell(orDash(shortID(c.RecordID))),
			}, Rule: c.Code != prev})
			prev = c.Code
		}
		ct.Notes = []rich{txt("Record ids are shortened to 12 characters; Appendix B gives them in full.")}
		b.add(ct)
	}
	if len(t.Excluded) > 0 || len(t.Unmatched) > 0 {
		b.add(heading{Level: 2, Number: "3.3", Text: txt("Records and entries not used")})
	}
	if len(t.Excluded) > 0 {
		et := b.newTable("excluded", txt("Records that matched a reference entry but were not used."))
		et.Head = []rich{txt("Record"), txt("Molecule"), txt("Level"), txt("Status"), txt("Reason")}
		et.Align = []align{alignLeft, alignLeft, alignLeft, alignLeft, alignLeft}
		et.Mono = []bool{true}
		et.Wrap = []float64{0, 80, 90, 0, 200}
		et.Key = 1
		for _, x := range t.Excluded {
			et.Rows = append(et.Rows, row{Cells: []cell{textCell(shortID(x.RecordID)), textCell(x.Molecule), textCell(x.Level), textCell(x.Status), textCell(x.Reason)}})
		}
		b.add(et)
	}
	if len(t.Unmatched) > 0 {
		ut := b.newTable("unmatched", txt("Reference entries without a usable record at a level."))
		ut.Head = []rich{txt("Entry"), txt("Molecule"), txt("Quantity"), txt("Level"), txt("Reason")}
		ut.Align = []align{alignLeft, alignLeft, alignLeft, alignLeft, alignLeft}
		ut.Wrap = []float64{80, 80, 60, 90, 170}
		ut.Key = 1
		for _, u := range t.Unmatched {
			ut.Rows = append(ut.Rows, row{Cells: []cell{textCell(u.EntryID), textCell(u.Molecule), textCell(u.Quantity), textCell(u.Level), textCell(u.Reason)}})
		}
		b.add(ut)
	}
}

func orDash(s string) string {
	if strings.TrimSpace(s) == "" {
		return "—"
	}
	return s
}
