package main

import (
	"bytes"
	"fmt"
	"io"
	"strings"

	"moltrail/archive"
	"moltrail/engine"
	"moltrail/engine/molecule"
)

func init() {
	register(Command{Name: "geometry", Summary: "a record's final (or input) geometry as an XYZ file", Run: cmdGeometry})
}

// geometryJSON is the --json output of geometry.
type geometryJSON struct {
	RecordID string            `json:"record_id"`
	Molecule string            `json:"molecule"`
	Level    string            `json:"level"`
	Which    string            `json:"geometry"`
	Out      string            `json:"out,omitempty"`
	Atoms    []engine.GeomAtom `json:"geometry_angstrom"`
}

func cmdGeometry(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("geometry", stderr, "ID [--input] [--out FILE.xyz] [--json]")
	af := addArchiveFlags(fs)
	input := fs.Bool("input", false, "the geometry the record started from, not its final one")
	out := fs.String("out", "", "write the XYZ `FILE` (default: print it on stdout)")
	asJSON := fs.Bool("json", false, "print the geometry as JSON instead of XYZ (with --out: what was written)")
	pos, code, ok := parseFlags(fs, args)
	if !ok {
		return code
	}
	if len(pos) != 1 {
		fmt.Fprintln(stderr, "moltrail geometry: give one record id (or a unique prefix of at least 4 hex digits)")
		return exitUsage
	}
	if *out != "" {
		if err := checkOutPath(*out); err != nil {
			return fail(stderr, exitUsage, "geometry", fmt.Errorf("--out %s: %v", *out, err))
		}
	}
	st, code, err := af.open(true, stderr)
	if err != nil {
		return fail(stderr, code, "geometry", err)
	}
	defer st.Close()
	id, err := st.Resolve(pos[0])
	if err != nil {
		return fail(stderr, exitUsage, "geometry", err)
	}
	rec, _, err := st.Get(id)
	if err != nil {
		return fail(stderr, exitFailed, "geometry", err)
	}
	which, atoms := "final", rec.Results.GeometryAngstrom
	if *input {
		which, atoms = "input", inputAtoms(rec)
	}
	if len(atoms) == 0 {
		return fail(stderr, exitFailed, "geometry", fmt.Errorf("record %s holds no %s geometry", id[:12], which))
	}
	level := archive.LevelLabel(rec, st.Lookup())
	// Say what the numbers are, where only a person reads it.
	what := fmt.Sprintf("the %s geometry of record %s (%s, %s, task %s, status %s)", which, id[:12], rec.Input.Molecule.Name, level, rec.Input.Task, rec.Status)
	if which == "final" && rec.Status != engine.StatusConverged {
		fmt.Fprintf(stderr, "moltrail geometry: warning: record %s has status %s, so its final geometry is not a converged one\n", id[:12], rec.Status)
	}
	var xyz bytes.Buffer
	writeXYZ(&xyz, rec.Input.Molecule.Name, atoms)
	if *out != "" {
		if err := writeFileAtomic(*out, xyz.Bytes()); err != nil {
			return fail(stderr, exitFailed, "geometry", fmt.Errorf("--out %s: %v", *out, err))
		}
		fmt.Fprintf(stderr, "moltrail geometry: wrote %s to %s\n", what, *out)
	}
	switch {
	case *asJSON:
		printJSON(stdout, geometryJSON{RecordID: id, Molecule: rec.Input.Molecule.Name, Level: level, Which: which, Out: *out, Atoms: atoms})
	case *out == "":
		stdout.Write(xyz.Bytes())
		fmt.Fprintf(stderr, "moltrail geometry: %s\n", what)
	}
	return exitOK
}

// inputAtoms is the record's input geometry in ångström.
func inputAtoms(r *archive.Record) []engine.GeomAtom {
	var g []engine.GeomAtom
	for _, a := range r.Input.Molecule.Atoms {
		g = append(g, engine.GeomAtom{Symbol: a.Symbol, XYZ: [3]float64{
			a.Bohr[0] * molecule.BohrAngstrom, a.Bohr[1] * molecule.BohrAngstrom, a.Bohr[2] * molecule.BohrAngstrom}})
	}
	return g
}

// writeXYZ writes the common XYZ layout: the atom count, the molecule's
// name as the comment line (so that `moltrail run` reads the name back),
// and one `Symbol x y z` line per atom in ångström with 10 decimals.
func writeXYZ(w io.Writer, name string, atoms []engine.GeomAtom) {
	fmt.Fprintf(w, "%d\n%s\n", len(atoms), strings.ReplaceAll(strings.TrimSpace(name), "\n", " "))
	for _, a := range atoms {
		fmt.Fprintf(w, "%-2s %16s %16s %16s\n", a.Symbol, fixed(a.XYZ[0], 10), fixed(a.XYZ[1], 10), fixed(a.XYZ[2], 10))
	}
}
