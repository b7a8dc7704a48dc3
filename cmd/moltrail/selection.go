package main

import (
	"flag"
	"fmt"
	"io"
	"strings"
	"time"

	"moltrail/archive"
	"moltrail/compare"
)

// comparisonFlags are the flags that choose a reference set, the archived
// records held against it and the bootstrap: compare and report take the
// same ones, so the same selection gives the same table in both.
type comparisonFlags struct {
	filter  *filterFlags
	refs    *string
	samples *int
	seed    *uint64
	scf     *bool
	geom    *string
}

// comparisonFlagNames are the flags of addComparisonFlags (with the
// filters); report writes the ones given into the document's provenance.
var comparisonFlagNames = map[string]bool{
	"refs": true, "molecule": true, "formula": true, "method": true, "basis": true, "status": true,
	"tag": true, "since": true, "until": true, "bootstrap": true, "seed": true, "scf-moments": true, "property-geometry": true,
}

func addComparisonFlags(fs *flag.FlagSet) *comparisonFlags {
	return &comparisonFlags{
		filter:  addFilterFlags(fs),
		refs:    fs.String("refs", "builtin", "reference `SET`: builtin (all built-in sets), a built-in set name ("+strings.Join(compare.BuiltinNames(), ", ")+") or a reference-set JSON file"),
		samples: fs.Int("bootstrap", compare.DefaultOptions.BootstrapSamples, "bootstrap resamples for confidence intervals (100–1000000)"),
		seed:    fs.Uint64("seed", compare.DefaultOptions.Seed, "seed of the bootstrap random stream (fixed: same input, same output)"),
		scf:     fs.Bool("scf-moments", false, "compare the SCF density's moments of correlated records that have none of their own, labelled as such (e.g. HF/6-31G*//MP2(fc)/6-31G*)"),
		geom:    fs.String("property-geometry", "", "`RULE` for the geometry of properties and energies: optimised (each level's optimised structure) or input (single points at the input geometry); default: the reference set's"),
	}
}

// comparison is a checked selection: the reference set, which records to
// consider and how to compare them.
type comparison struct {
	set     *compare.RefSet
	filter  archive.Filter
	options compare.Options
}

// resolve checks the flags and loads the reference set; every error is
// bad usage or input (exitUsage).
func (c *comparisonFlags) resolve() (*comparison, error) {
	if *c.samples < 100 || *c.samples > 1000000 {
		return nil, fmt.Errorf("--bootstrap %d is outside 100–1000000", *c.samples)
	}
	f, err := c.filter.filter()
	if err != nil {
		return nil, err
	}
	switch *c.geom {
	case "", compare.GeometryRuleOptimised, compare.GeometryRuleInput:
	default:
		return nil, fmt.Errorf("--property-geometry %q is not %s or %s", *c.geom, compare.GeometryRuleOptimised, compare.GeometryRuleInput)
	}
	out := &comparison{filter: f, options: compare.Options{BootstrapSamples: *c.samples, Seed: *c.seed, SCFMoments: *c.scf, PropertyGeometry: *c.geom}}
	if out.set, err = compare.LoadRefSet(*c.refs); err != nil {
		return nil, err
	}
	return out, nil
}

// selectRecordsForComparison returns the stored records that a comparison
// with set considers: those the filter admits (--since and --until
// included) and named like a molecule of the set (a name or an alias). It decides nothing more: compare.Compare picks the newest
// converged record per molecule and level among them and lists the rest
// as left out. Records come in the archive's listing order.
//
// Records that cannot be vouched for are left out and counted on
// stderr: a signature that does not match, a signing key the archive does
// not trust, a start time in the future. Unsigned records (written before
// records were signed) are taken as they are.
func selectRecordsForComparison(st *archive.Store, set *compare.RefSet, f archive.Filter, stderr io.Writer) ([]*archive.Record, error) {
	sums, err := st.List(f)
	if err != nil {
		return nil, err
	}
	trust, err := st.Trust()
	if err != nil {
		return nil, err
	}
	now := time.Now()
	left := map[string]int{}
	var recs []*archive.Record
	defer func() {
		if n := left[archive.SigInvalid] + left[archive.SigUntrusted] + left["future"]; n > 0 {
			fmt.Fprintf(stderr, "moltrail: %d record(s) left out of the comparison: %d with a signature that does not match, %d signed by keys this archive does not trust (moltrail trust), %d dated in the future\n",
				n, left[archive.SigInvalid], left[archive.SigUntrusted], left["future"])
		}
	}()
	for _, s := range sums {
		if !set.Names(s.Molecule) {
			continue
		}
		r, _, err := st.Get(s.ID)
		if err != nil {
			return nil, err
		}
		if r.InFuture(now) {
			left["future"]++
			continue
		}
		if c := trust.Check(r); c.State == archive.SigInvalid || c.State == archive.SigUntrusted {
			left[c.State]++
			continue
		}
		recs = append(recs, r)
	}
	return recs, nil
}

// compareArchive opens the archive read-only, selects the records and
// compares them with the set: the one way from a selection to a
// compare.Table. code is the exit status to use when err is not nil.
func compareArchive(af *archiveFlags, c *comparison, stderr io.Writer) (tab *compare.Table, recs []*archive.Record, code int, err error) {
	st, code, err := af.open(true, stderr)
	if err != nil {
		return nil, nil, code, err
	}
	defer st.Close()
	if recs, err = selectRecordsForComparison(st, c.set, c.filter, stderr); err != nil {
		return nil, nil, exitFailed, err
	}
	if recs, err = withReferenceRecords(st, c.set, recs); err != nil {
		return nil, nil, exitUsage, err
	}
	opts := c.options
	opts.Lookup = st.Lookup()
	if tab, err = compare.Compare(c.set, recs, opts); err != nil {
		return nil, nil, exitUsage, err
	}
	return tab, recs, 0, nil
}

// withReferenceRecords adds the archived records the set's theoretical
// entries were taken from, so that the comparison and the report cite them.
func withReferenceRecords(st *archive.Store, set *compare.RefSet, recs []*archive.Record) ([]*archive.Record, error) {
	have := map[string]bool{}
	for _, r := range recs {
		have[r.ID] = true
	}
	var add func(entry, id string) error
	add = func(entry, id string) error {
		if have[id] {
			return nil
		}
		r, _, err := st.Get(id)
		if err != nil {
			return fmt.Errorf("reference entry %s: record %s is not in this archive: %v", entry, shortPrefix(id), err)
		}
		have[id] = true
		recs = append(recs, r)
		for _, in := range archive.DerivedInputsOf(r) {
			if err := add(entry, in); err != nil {
				return err
			}
		}
		return nil
	}
	for _, e := range set.Entries {
		for _, id := range e.Records {
			if err := add(e.ID, id); err != nil {
				return nil, err
			}
		}
	}
	return recs, nil
}

func shortPrefix(id string) string {
	if len(id) > 12 {
		return id[:12]
	}
	return id
}

// recordsUsed returns, once each and in the order of recs, the records a
// comparison table used (picked or giving a deviation): the records a
// report over that table covers.
func recordsUsed(tab *compare.Table, recs []*archive.Record) []archive.Record {
	used := map[string]bool{}
	for _, p := range tab.Picked {
		used[p.RecordID] = true
	}
	for _, d := range tab.Deviations {
		used[d.RecordID] = true
	}
	for _, id := range tab.ReferenceRecords {
		used[id] = true
	}
	// The inputs of derived records used are cited with them, and the
	// records whose structures the used ones borrowed belong to their
	// provenance.
	byID := map[string]*archive.Record{}
	for _, r := range recs {
		byID[r.ID] = r
	}
	look := archive.LookupIn(recs)
	for changed := true; changed; {
		changed = false
		for id := range used {
			if r := byID[id]; r != nil {
				ins := archive.DerivedInputsOf(r)
				if g := archive.GeometryOf(r, look); g.Source != "" && look(g.Source) != nil {
					ins = append(ins, g.Source)
				}
				for _, in := range ins {
					if !used[in] {
						used[in], changed = true, true
					}
				}
			}
		}
	}
	var out []archive.Record
	for _, r := range recs {
		if used[r.ID] {
			out = append(out, *r)
			delete(used, r.ID)
		}
	}
	return out
}
