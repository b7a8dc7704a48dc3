package main

import (
	"fmt"
	"io"
	"strings"

	"moltrail/engine/basis"
	"moltrail/engine/molecule"
)

func init() {
	register(Command{Name: "basis", Summary: "the basis library: names, aliases, angular default, elements covered", Run: cmdBasis})
}

type basisEntry struct {
	Name       string   `json:"name"`
	Aliases    []string `json:"aliases"`
	Role       string   `json:"role"`
	Angular    string   `json:"angular_default"`
	Elements   []string `json:"elements"`
	File       string   `json:"file"`
	References []string `json:"references,omitempty"`
}

func cmdBasis(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("basis", stderr, "[NAME] [--refs] [--json]")
	refs := fs.Bool("refs", false, "include the literature references of each set")
	asJSON := fs.Bool("json", false, "print a JSON array")
	pos, code, ok := parseFlags(fs, args)
	if !ok {
		return code
	}
	var entries []basisEntry
	for _, in := range basis.Library() {
		e := basisEntry{Name: in.Name, Aliases: in.Aliases, Role: in.Role, Angular: string(in.Angular), Elements: in.Elements, File: in.File}
		if e.Aliases == nil {
			e.Aliases = []string{}
		}
		if len(pos) > 0 {
			keep := false
			for _, p := range pos {
				if basis.Normalize(p) == basis.Normalize(in.Name) {
					keep = true
				}
				for _, a := range in.Aliases {
					keep = keep || basis.Normalize(p) == basis.Normalize(a)
				}
			}
			if !keep {
				continue
			}
		}
		if *refs || len(pos) > 0 {
			set, err := basis.Builtin(in.Name)
			if err != nil {
				return fail(stderr, exitFailed, "basis", err)
			}
			e.References = set.References
		}
		entries = append(entries, e)
	}
	if len(pos) > 0 && len(entries) == 0 {
		return fail(stderr, exitUsage, "basis", fmt.Errorf("no library set is called %s", strings.Join(pos, " or ")))
	}
	if *asJSON {
		if entries == nil {
			entries = []basisEntry{}
		}
		printJSON(stdout, entries)
		return exitOK
	}
	t := &table{head: []string{"name", "also known as", "role", "d/f default", "elements"}}
	for _, e := range entries {
		t.add(e.Name, strings.Join(e.Aliases, ", "), e.Role, e.Angular, elementRanges(e.Elements))
	}
	t.write(stdout)
	if *refs || len(pos) > 0 {
		for _, e := range entries {
			fmt.Fprintf(stdout, "\n%s — references\n", e.Name)
			for _, r := range e.References {
				fmt.Fprintf(stdout, "  · %s\n", r)
			}
		}
	}
	return exitOK
}

// elementRanges writes element lists compactly: H–Ar, K, Ca, Ga–Kr.
func elementRanges(els []string) string {
	var zs []int
	for _, e := range els {
		if el, err := molecule.Lookup(e); err == nil {
			zs = append(zs, el.Z)
		}
	}
	sym := func(z int) string {
		el, err := molecule.ByZ(z)
		if err != nil {
			return fmt.Sprint(z)
		}
		return el.Symbol
	}
	var parts []string
	for i := 0; i < len(zs); {
		j := i
		for j+1 < len(zs) && zs[j+1] == zs[j]+1 {
			j++
		}
		switch {
		case j == i:
			parts = append(parts, sym(zs[i]))
		case j == i+1:
			parts = append(parts, sym(zs[i]), sym(zs[j]))
		default:
			parts = append(parts, sym(zs[i])+"–"+sym(zs[j]))
		}
		i = j + 1
	}
	return strings.Join(parts, ", ")
}
