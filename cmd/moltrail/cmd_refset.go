package main

import (
	"encoding/json"
	"fmt"
	"io"
	"os"
	"strconv"
	"strings"

	"moltrail/archive"
	"moltrail/compare"
)

func init() {
	register(Command{Name: "refset", Summary: "build a reference-set file of theoretical values from archived records", Run: cmdRefset})
}

func cmdRefset(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("refset", stderr, "--out FILE --name NAME [--level LABEL] [--record ID]… [--reaction ENTRY]…")
	af := addArchiveFlags(fs)
	out := fs.String("out", "", "reference-set `FILE` to write (JSON, schemas/refset.schema.json)")
	name := fs.String("name", "", "the set's `NAME`")
	descr := fs.String("description", "", "the set's description (default: says the values come from archived records)")
	level := fs.String("level", "", "the newest converged record of each molecule at this level `LABEL` as printed by moltrail show (e.g. 'CCSD(T)(fc)/CBS(cc-pVTZ,cc-pVQZ)') gives an entry")
	var ids, reactions multiFlag
	fs.Var(&ids, "record", "record `ID` (unique prefix) whose value gives an entry (repeatable)")
	fs.Var(&reactions, "reaction", "an energy difference `ENTRY` 'NAME = C ID + C ID …' (coefficients C, record ids of at least 8 characters, all of one level; repeatable)")
	dipoles := fs.Bool("dipoles", false, "entries of the dipole magnitude instead of the total energy")
	eUnc := fs.Float64("energy-uncertainty", -1, "uncertainty (hartree) of total energies whose record carries none (derived extrapolations carry their last step's change)")
	dUnc := fs.Float64("dipole-uncertainty", -1, "uncertainty (D) of dipoles whose record carries none (finite-field dipoles carry their error estimate)")
	rUnc := fs.Float64("reaction-uncertainty", -1, "uncertainty (kJ/mol) of the energy differences (default: from the records' own, when each has one)")
	asJSON := fs.Bool("json", false, "print the set as JSON too")
	pos, code, ok := parseFlags(fs, args)
	if !ok {
		return code
	}
	if len(pos) > 0 || *out == "" || *name == "" {
		fmt.Fprintln(stderr, "moltrail refset: give --out FILE and --name NAME, and records by --level, --record or --reaction")
		return exitUsage
	}
	st, code, err := af.open(true, stderr)
	if err != nil {
		return fail(stderr, code, "refset", err)
	}
	defer st.Close()
	look := st.Lookup()
	get := func(p string) (*archive.Record, error) {
		if len(p) < 8 {
			return nil, fmt.Errorf("record id %q: give at least 8 characters", p)
		}
		id, err := st.Resolve(p)
		if err != nil {
			return nil, err
		}
		r, _, err := st.Get(id)
		return r, err
	}
	kind, unc := compare.KindEnergy, *eUnc
	if *dipoles {
		kind, unc = compare.KindDipoleNorm, *dUnc
	}
	var recs []*archive.Record
	if *level != "" {
		all, err := st.Records(archive.Filter{Status: "converged"})
		if err != nil {
			return fail(stderr, exitFailed, "refset", err)
		}
		// one record per molecule: the newest at the level
		at := map[string]int{}
		for _, r := range all {
			if archive.LevelLabel(r, look) != *level {
				continue
			}
			if i, ok := at[r.Input.Molecule.Name]; ok {
				recs[i] = r
				continue
			}
			at[r.Input.Molecule.Name] = len(recs)
			recs = append(recs, r)
		}
		if len(recs) == 0 {
			return fail(stderr, exitUsage, "refset", fmt.Errorf("--level %q: no converged record is at this level", *level))
		}
	}
	for _, p := range ids {
		r, err := get(p)
		if err != nil {
			return fail(stderr, exitUsage, "refset", fmt.Errorf("--record %s: %v", p, err))
		}
		recs = append(recs, r)
	}
	var entries []compare.Entry
	for _, r := range recs {
		e, err := compare.FromRecord(r, kind, unc, look)
		if err != nil {
			return fail(stderr, exitUsage, "refset", err)
		}
		entries = append(entries, e)
	}
	for _, rx := range reactions {
		id, terms, err := parseReaction(rx, get)
		if err != nil {
			return fail(stderr, exitUsage, "refset", fmt.Errorf("--reaction %q: %v", rx, err))
		}
		e, err := compare.FromDifference(id, terms, *rUnc, look)
		if err != nil {
			return fail(stderr, exitUsage, "refset", err)
		}
		entries = append(entries, e)
	}
	set, err := compare.NewTheorySet(*name, *descr, entries)
	if err != nil {
		return fail(stderr, exitUsage, "refset", err)
	}
	b, err := json.MarshalIndent(set, "", "  ")
	if err != nil {
		return fail(stderr, exitFailed, "refset", err)
	}
	b = append(b, '\n')
	if _, err := compare.ParseRefSet(b, *out); err != nil {
		return fail(stderr, exitFailed, "refset", fmt.Errorf("the set built does not read back: %v", err))
	}
	if err := os.WriteFile(*out, b, 0o644); err != nil {
		return fail(stderr, exitFailed, "refset", err)
	}
	fmt.Fprintf(stderr, "moltrail refset: wrote %d theoretical entr(y/ies) to %s\n", len(entries), *out)
	if *asJSON {
		stdout.Write(b)
		return exitOK
	}
	t := &table{head: []string{"entry", "value", "unit", "±", "source"}, right: []bool{false, true}}
	for _, e := range entries {
		t.add(e.ID, strconv.FormatFloat(e.Value, 'f', 8, 64), e.Unit, strconv.FormatFloat(e.Uncertainty, 'g', 3, 64), e.Source)
	}
	t.write(stdout)
	return exitOK
}

// parseReaction reads 'NAME = C ID + C ID …' (a term without a coefficient
// counts 1; '−' or '-' before a term negates it).
func parseReaction(s string, get func(string) (*archive.Record, error)) (string, []compare.RecordTerm, error) {
	name, rhs, ok := strings.Cut(s, "=")
	name = strings.TrimSpace(name)
	if !ok || name == "" {
		return "", nil, fmt.Errorf("write it as NAME = C ID + C ID …")
	}
	f := strings.Fields(strings.NewReplacer("+", " + ", "−", " - ", "-", " - ").Replace(rhs))
	var terms []compare.RecordTerm
	sign, coef := 1.0, 1.0
	haveCoef := false
	for _, w := range f {
		switch {
		case w == "+":
			sign, coef, haveCoef = 1, 1, false
		case w == "-":
			sign, coef, haveCoef = -1, 1, false
		default:
			if c, err := strconv.ParseFloat(w, 64); err == nil && !haveCoef && len(w) < 8 {
				coef, haveCoef = c, true
				continue
			}
			r, err := get(w)
			if err != nil {
				return "", nil, err
			}
			terms = append(terms, compare.RecordTerm{Coefficient: sign * coef, Record: r})
			sign, coef, haveCoef = 1, 1, false
		}
	}
	return name, terms, nil
}
