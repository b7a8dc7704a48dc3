package main

import (
	"flag"
	"fmt"
	"io"
	"strconv"

	"moltrail/archive"
)

func init() {
	register(Command{Name: "derive", Summary: "store a derived record: a basis-set extrapolation or a composite level from archived records", Run: cmdDerive})
}

func cmdDerive(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("derive", stderr, "cbs ID ID [ID]  |  composite ID ID ID [ID ID …]   (composite: the base record, then pairs of higher and lower level records)")
	af := addArchiveFlags(fs)
	scf := fs.String("scf", "", "cbs: SCF `TREATMENT`: karton-martin (two-point, the default for two records), exponential (three consecutive cardinal numbers, the default for three) or largest (no extrapolation)")
	alpha := fs.Float64("correlation-exponent", 3, "cbs: α of the two-point X^-α correlation formula (3 is the published one)")
	var tags multiFlag
	fs.Var(&tags, "tag", "`KEY=VALUE` stored with the record (repeatable)")
	asJSON := fs.Bool("json", false, "print the stored record as JSON")
	pos, code, ok := parseFlags(fs, args)
	if !ok {
		return code
	}
	if len(pos) < 1 {
		fmt.Fprintln(stderr, "moltrail derive: give a recipe (cbs or composite) and record ids")
		return exitUsage
	}
	recipe := map[string]string{"cbs": archive.RecipeCBS, "composite": archive.RecipeComposite}[pos[0]]
	if recipe == "" {
		fmt.Fprintf(stderr, "moltrail derive: recipe %q is not known (cbs or composite)\n", pos[0])
		return exitUsage
	}
	params := map[string]string{}
	set := map[string]bool{}
	fs.Visit(func(f *flag.Flag) { set[f.Name] = true })
	if recipe == archive.RecipeCBS {
		if *scf != "" {
			params["scf"] = *scf
		}
		if set["correlation-exponent"] {
			params["correlation_exponent"] = strconv.FormatFloat(*alpha, 'g', -1, 64)
		}
	} else if set["scf"] || set["correlation-exponent"] {
		fmt.Fprintln(stderr, "moltrail derive: --scf and --correlation-exponent apply to the cbs recipe")
		return exitUsage
	}
	tagMap, err := parseTags(tags)
	if err != nil {
		return fail(stderr, exitUsage, "derive", err)
	}
	st, code, err := af.open(false, stderr)
	if err != nil {
		return fail(stderr, code, "derive", err)
	}
	defer st.Close()
	var inputs []*archive.Record
	for _, p := range pos[1:] {
		id, err := st.Resolve(p)
		if err != nil {
			return fail(stderr, exitUsage, "derive", err)
		}
		r, _, err := st.Get(id)
		if err != nil {
			return fail(stderr, exitFailed, "derive", err)
		}
		inputs = append(inputs, r)
	}
	rec, err := archive.Derive(recipe, inputs, params)
	if err != nil {
		return fail(stderr, exitUsage, "derive", err)
	}
	if len(tagMap) > 0 {
		rec.Tags = tagMap
		if err := rec.Seal(); err != nil {
			return fail(stderr, exitFailed, "derive", err)
		}
		// the tags changed the id: sign the record again
		k, err := archive.UserKey()
		if err == nil {
			err = k.Sign(rec)
		}
		if err != nil {
			return fail(stderr, exitFailed, "derive", err)
		}
	}
	sums, err := st.ByInputKey(rec.InputKey)
	if err != nil {
		return fail(stderr, exitFailed, "derive", err)
	}
	if len(sums) > 0 {
		fmt.Fprintf(stderr, "moltrail derive: record %s already holds this derivation; nothing was stored\n", sums[0].ID[:12])
		old, _, err := st.Get(sums[0].ID)
		if err != nil {
			return fail(stderr, exitFailed, "derive", err)
		}
		rec = old
	} else {
		if _, err := st.Put(rec); err != nil {
			return fail(stderr, exitFailed, "derive", err)
		}
		fmt.Fprintf(stderr, "moltrail derive: stored record %s in %s\n", rec.ID[:12], af.path())
	}
	if *asJSON {
		b, err := rec.Encode()
		if err != nil {
			return fail(stderr, exitFailed, "derive", err)
		}
		fmt.Fprintf(stdout, "%s\n", b)
		return exitOK
	}
	writeRunSummary(stdout, rec, st.Lookup(), energyUnits[0])
	for _, v := range rec.Derivation.Values {
		fmt.Fprintf(stdout, "%-8s %s %s\n", "", fixed(v.Value, 10), v.Name)
	}
	return exitOK
}
