// Package report writes moltrail's supplementary-information document: the
// comparison of archived results with a reference set (compare.Table), the
// computational details written out from the records themselves, tables,
// vector figures, cautions, the Cartesian coordinates of every structure
// and the provenance of every record — as PDF, or its tables as CSV or
// Markdown.
//
// The output is a pure function of the table, the records and the
// options: no clock, no randomness, no map order. The same inputs give a
// byte-identical PDF, and every page carries a fingerprint (SHA-256 of the
// record ids, the reference set and the options) that names the inputs.
package report

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"io"
	"sort"
	"strings"
	"time"

	"moltrail/archive"
	"moltrail/compare"
)

// Options are the report's own settings.
type Options struct {
	// Title of the document; empty gives a title naming the reference set.
	Title       string `json:"title"`
	Author      string `json:"author"`
	Affiliation string `json:"affiliation"`
	// Date printed on the title page and used as the PDF's creation date
	// (YYYY-MM-DD is best). Empty: the latest run date among the records.
	Date string `json:"date"`
	// Selection describes how the records were chosen (e.g. the command's
	// selection flags); printed on the title page and part of the fingerprint.
	Selection []string `json:"selection"`
}

// fingerprintVersion names the layout of the fingerprinted bytes.
const fingerprintVersion = "moltrail-report-fingerprint/1"

// Fingerprint is the hex SHA-256 that names a report's inputs: the sorted
// record ids, the reference set's content hash and the options.
func Fingerprint(tbl *compare.Table, records []archive.Record, opts Options) string {
	h := sha256.New()
	fmt.Fprintf(h, "%s\n", fingerprintVersion)
	if tbl != nil {
		fmt.Fprintf(h, "refset %s %s\n", tbl.RefSet.Name, tbl.RefSet.SHA256)
	}
	ids := make([]string, 0, len(records))
	for _, r := range records {
		ids = append(ids, r.ID)
	}
	sort.Strings(ids)
	for _, id := range ids {
		fmt.Fprintf(h, "record %s\n", id)
	}
	o, _ := json.Marshal(opts) // a struct of strings: cannot fail
	fmt.Fprintf(h, "options %s\n", o)
	return hex.EncodeToString(h.Sum(nil))
}

// PDF writes the supplementary-information document as PDF.
func PDF(w io.Writer, tbl *compare.Table, records []archive.Record, opts Options) error {
	d, created, err := build(tbl, records, opts)
	if err != nil {
		return err
	}
	return renderPDF(d, w, created)
}

// CSV writes every table of the document as CSV: each table starts with a
// row ("table", name, caption), then its header row and data rows, and is
// followed by an empty line.
func CSV(w io.Writer, tbl *compare.Table, records []archive.Record, opts Options) error {
	d, _, err := build(tbl, records, opts)
	if err != nil {
		return err
	}
	return renderCSV(d, w)
}

// Markdown writes the document's text and tables as Markdown (figures are
// PDF-only and are named where they stand).
func Markdown(w io.Writer, tbl *compare.Table, records []archive.Record, opts Options) error {
	d, _, err := build(tbl, records, opts)
	if err != nil {
		return err
	}
	return renderMarkdown(d, w)
}

// checkInputs rejects what cannot make a report.
func checkInputs(tbl *compare.Table, records []archive.Record) error {
	if tbl == nil {
		return fmt.Errorf("report: no comparison table was given")
	}
	seen := make(map[string]bool, len(records))
	for i, r := range records {
		if r.ID == "" {
			return fmt.Errorf("report: record %d (molecule %q) has no id", i, r.Input.Molecule.Name)
		}
		if seen[r.ID] {
			return fmt.Errorf("report: record %s is given twice", r.ID)
		}
		seen[r.ID] = true
	}
	return nil
}

// reportDate picks the printed date and the PDF date: the option when set,
// else the latest run time among the records, else a fixed date.
func reportDate(opts Options, records []archive.Record) (string, time.Time) {
	latest := time.Time{}
	for _, r := range records {
		for _, s := range []string{r.Run.EndUTC, r.Run.StartUTC} {
			if t, err := time.Parse(time.RFC3339, s); err == nil && t.After(latest) {
				latest = t.UTC()
			}
		}
	}
	if opts.Date != "" {
		for _, layout := range []string{"2006-01-02", time.RFC3339, "2 January 2006", "January 2 2006", "January 2006", "2006-01"} {
			if t, err := time.Parse(layout, opts.Date); err == nil {
				return opts.Date, t.UTC()
			}
		}
		if !latest.IsZero() {
			return opts.Date, latest
		}
		return opts.Date, time.Date(2000, 1, 1, 0, 0, 0, 0, time.UTC)
	}
	if latest.IsZero() {
		return "", time.Date(2000, 1, 1, 0, 0, 0, 0, time.UTC)
	}
	return latest.Format("2 January 2006"), latest
}

// sortedRecords orders records by molecule, level and id (not by the
// caller's order, so the document does not depend on archive iteration).
func sortedRecords(records []archive.Record, level func(*archive.Record) string) []archive.Record {
	out := append([]archive.Record(nil), records...)
	sort.SliceStable(out, func(i, j int) bool {
		a, b := &out[i], &out[j]
		if a.Input.Molecule.Name != b.Input.Molecule.Name {
			return naturalLess(a.Input.Molecule.Name, b.Input.Molecule.Name)
		}
		if la, lb := level(a), level(b); la != lb {
			return la < lb
		}
		return a.ID < b.ID
	})
	return out
}

// recordLevels gives every record its level label (archive.LevelLabel):
// as the comparison named it, else resolved among the records given.
func recordLevels(tbl *compare.Table, records []archive.Record) map[string]string {
	out := make(map[string]string, len(records))
	for _, ri := range tbl.Records {
		out[ri.RecordID] = ri.Level
	}
	ptrs := make([]*archive.Record, len(records))
	for i := range records {
		ptrs[i] = &records[i]
	}
	look := archive.LookupIn(ptrs)
	for _, r := range ptrs {
		if _, ok := out[r.ID]; !ok {
			out[r.ID] = archive.LevelLabel(r, look)
		}
	}
	return out
}

func shortID(id string) string {
	if len(id) > 12 {
		return id[:12]
	}
	return id
}

// naturalLess orders names with their digit runs read as numbers
// ("water 2" before "water 10"); ties fall back to byte order.
func naturalLess(a, b string) bool {
	i, j := 0, 0
	for i < len(a) && j < len(b) {
		ca, cb := a[i], b[j]
		if isDigit(ca) && isDigit(cb) {
			si, sj := i, j
			for i < len(a) && isDigit(a[i]) {
				i++
			}
			for j < len(b) && isDigit(b[j]) {
				j++
			}
			na := strings.TrimLeft(a[si:i], "0")
			nb := strings.TrimLeft(b[sj:j], "0")
			if len(na) != len(nb) {
				return len(na) < len(nb)
			}
			if na != nb {
				return na < nb
			}
			continue
		}
		if ca != cb {
			return ca < cb
		}
		i++
		j++
	}
	if len(a)-i != len(b)-j {
		return len(a)-i < len(b)-j
	}
	return a < b
}

func isDigit(c byte) bool { return c >= '0' && c <= '9' }
