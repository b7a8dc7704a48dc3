package report

import (
	"bytes"
	"encoding/csv"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"moltrail/archive"
	"moltrail/compare"
)

// pdfText extracts the text of a PDF with poppler's pdftotext, page by
// page (pages are separated by form feeds in its output).
func pdfText(t testing.TB, pdf []byte) []string {
	t.Helper()
	bin, err := exec.LookPath("pdftotext")
	if err != nil {
		t.Fatalf("pdftotext (Debian package poppler-utils) is needed to read the report back and is not installed: apt-get install -y poppler-utils")
	}
	dir := t.TempDir()
	in := filepath.Join(dir, "r.pdf")
	if err := os.WriteFile(in, pdf, 0o644); err != nil {
		t.Fatal(err)
	}
	out, err := exec.Command(bin, "-enc", "UTF-8", in, "-").CombinedOutput()
	if err != nil {
		t.Fatalf("pdftotext could not read the report: %v\n%s", err, out)
	}
	pages := strings.Split(string(out), "\f")
	if len(pages) > 0 && strings.TrimSpace(pages[len(pages)-1]) == "" {
		pages = pages[:len(pages)-1]
	}
	return pages
}

func render(t testing.TB, tbl *compare.Table, recs []archive.Record, opts Options) []byte {
	t.Helper()
	var buf bytes.Buffer
	if err := PDF(&buf, tbl, recs, opts); err != nil {
		t.Fatalf("PDF: %v", err)
	}
	return buf.Bytes()
}

var testOpts = Options{Title: "Dipoles and structures of small molecules", Author: "A. N. Author", Affiliation: "Institute of Examples", Date: "2025-03-14"}

func TestPDFContent(t *testing.T) {
	tbl, recs := fixture(t, 4)
	pdf := render(t, tbl, recs, testOpts)
	pages := pdfText(t, pdf)
	all := strings.Join(pages, "\n")
	fp := Fingerprint(tbl, recs, testOpts)

	for _, want := range []string{
		// section titles
		"Computational details", "Results", "Bond lengths", "Bond angles", "Dipole moments", "Quadrupole moments",
		"Statistics", "Cautions", "Kinds of caution", "Flagged entries", "Appendix A", "Structures", "Appendix B", "Provenance", "References", "Contents",
		// title page
		testOpts.Title, testOpts.Author, testOpts.Affiliation, testOpts.Date, "HF/cc-pVDZ", "MP2(fc)/cc-pVDZ", "B3LYP/aug-cc-pVDZ",
		// symbols
		"Å", "°", "±", "μ", "Θ", "Δ",
		// reference of water's bond, 95.78 pm printed in Å with its uncertainty
		"0.9578 ± 0.0005",
		// the computed details come from the records
		"moltrail 0.1.0", "frozen", "spherical-harmonic", "becke", "z-vector"[:1] + "-vector", "centre of mass",
		// cc-pVDZ literature for H and first-row atoms, from the basis file
		"Dunning",
		// the standing caution paragraph and a flagged detail
		"Small and sign-sensitive quantities", "below the 0.2 D floor",
		// the record table names every record in full
		recs[0].ID, recs[len(recs)-1].InputKey,
	} {
		if !strings.Contains(all, want) {
			t.Errorf("report text lacks %q", want)
		}
	}
	// every deviation is printed (with the typographic minus) in its table
	for _, d := range tbl.Deviations {
		ki := kindOf(d.Kind, d.Unit)
		s := num(d.Signed, ki.devDec).Lines[0].Plain()
		if !strings.Contains(all, s) {
			t.Errorf("deviation %s %s %s = %s is not in the report", d.Molecule, d.Quantity, d.Level, s)
		}
	}
	// a statistics value: the MSE of the first row
	s0 := tbl.Stats[0]
	if s := num(s0.MSE, kindOf(s0.Kind, s0.Unit).devDec).Lines[0].Plain(); !strings.Contains(all, s) {
		t.Errorf("MSE %s of %s/%s is not in the report", s, s0.Level, s0.Kind)
	}
	// coordinates of the first structure in the appendix, 6 decimals
	if !strings.Contains(all, "0.111645") {
		t.Errorf("coordinates of the ammonia structure are missing")
	}
	// the footer of every page: fingerprint and "page X of Y"
	for i, p := range pages {
		if !strings.Contains(p, fp) {
			t.Errorf("page %d lacks the fingerprint in its footer", i+1)
		}
		if want := fmt.Sprintf("page %d of %d", i+1, len(pages)); !strings.Contains(p, want) {
			t.Errorf("page %d lacks %q", i+1, want)
		}
	}
	if !bytes.HasPrefix(pdf, []byte("%PDF-")) {
		t.Errorf("output does not start as a PDF")
	}
}

func TestDeterministic(t *testing.T) {
	tbl, recs := fixture(t, 4)
	a := render(t, tbl, recs, testOpts)
	b := render(t, tbl, recs, testOpts)
	if !bytes.Equal(a, b) {
		t.Fatalf("two runs gave different PDFs (%d and %d bytes)", len(a), len(b))
	}
	// the order in which records arrive does not matter
	shuffled := append([]archive.Record(nil), recs...)
	rand.New(rand.NewPCG(1, 2)).Shuffle(len(shuffled), func(i, j int) { shuffled[i], shuffled[j] = shuffled[j], shuffled[i] })
	if c := render(t, tbl, shuffled, testOpts); !bytes.Equal(a, c) {
		t.Fatalf("record order changed the PDF")
	}
	// no clock: the PDF dates are the report date
	if !bytes.Contains(a, []byte("D:20250314000000")) {
		t.Errorf("PDF creation date is not the report date")
	}
	// the date defaults to the data, not the clock
	o := testOpts
	o.Date = ""
	d1 := render(t, tbl, recs, o)
	if !bytes.Contains(d1, []byte("D:20250304100500")) {
		t.Errorf("without a date option the PDF date should be the latest record's end time")
	}
}

func TestFingerprint(t *testing.T) {
	tbl, recs := fixture(t, 4)
	fp := Fingerprint(tbl, recs, testOpts)
	if len(fp) != 64 {
		t.Fatalf("fingerprint %q is not 64 hex characters", fp)
	}
	_, more := fixture(t, 5)
	extra := more[len(more)-1]
	recs2 := append(append([]archive.Record(nil), recs...), extra)
	fp2 := Fingerprint(tbl, recs2, testOpts)
	if fp2 == fp {
		t.Fatalf("adding a record did not change the fingerprint")
	}
	o := testOpts
	o.Title += " (revised)"
	if Fingerprint(tbl, recs, o) == fp {
		t.Errorf("changing an option did not change the fingerprint")
	}
	// the new fingerprint is what the pages carry
	pages := pdfText(t, render(t, tbl, recs2, testOpts))
	if !strings.Contains(pages[len(pages)-1], fp2) || strings.Contains(strings.Join(pages, ""), fp) {
		t.Errorf("the PDF footer does not carry the new fingerprint")
	}
}

func TestLongAndWideTables(t *testing.T) {
	tbl, recs := fixture(t, 60) // 180 records: tables run over pages
	// eight levels make the per-quantity tables too wide for one part
	for i := 0; i < 5; i++ {
		l := fmt.Sprintf("PBE0/extra-%d", i)
		tbl.Levels = append(tbl.Levels, compare.Level{Label: l, Method: "pbe0", Basis: "x"})
		for _, d := range tbl.Deviations[:8] {
			d.Level = l
			d.Signed += 0.5
			tbl.Deviations = append(tbl.Deviations, d)
		}
	}
	pages := pdfText(t, render(t, tbl, recs, testOpts))
	all := strings.Join(pages, "\n")
	if !strings.Contains(all, "(part 1 of 2)") || !strings.Contains(all, "(part 2 of 2)") {
		t.Errorf("a table with eight levels was not split into parts")
	}
	cont := 0
	for _, p := range pages {
		if strings.Contains(p, "(continued)") {
			cont++
			// the header is repeated on the continuation page
			if strings.Contains(p, "Table 1. ") && !strings.Contains(p, "Molecule") {
				t.Errorf("continued table without its header:\n%s", p)
			}
		}
	}
	if cont == 0 {
		t.Errorf("no table ran over a page with 60 molecules")
	}
	if len(pages) < 20 {
		t.Errorf("only %d pages for 180 records", len(pages))
	}
}

func TestCSVAndMarkdown(t *testing.T) {
	tbl, recs := fixture(t, 4)
	var c bytes.Buffer
	if err := CSV(&c, tbl, recs, testOpts); err != nil {
		t.Fatal(err)
	}
	r := csv.NewReader(&c)
	r.FieldsPerRecord = -1
	rows, err := r.ReadAll()
	if err != nil {
		t.Fatalf("CSV does not parse: %v", err)
	}
	tables := map[string]bool{}
	found := false
	want := num(tbl.Deviations[0].Signed, 2).Raw // ASCII minus for spreadsheets
	for _, row := range rows {
		if len(row) >= 2 && row[0] == "table" {
			tables[row[1]] = true
		}
		for _, f := range row {
			if strings.HasPrefix(f, "−") || strings.HasPrefix(f, "[−") {
				t.Errorf("CSV field %q carries a typographic minus", f)
			}
			if f == want {
				found = true
			}
		}
	}
	for _, name := range []string{"bond_lengths", "bond_angles", "dipole_moments", "quadrupole_moments", "statistics", "cautions", "records", "structure_A1"} {
		if !tables[name] {
			t.Errorf("CSV lacks table %q", name)
		}
	}
	if !found {
		t.Errorf("CSV lacks the first deviation %q", want)
	}
	var m bytes.Buffer
	if err := Markdown(&m, tbl, recs, testOpts); err != nil {
		t.Fatal(err)
	}
	md := m.String()
	for _, w := range []string{"# " + testOpts.Title, "## 1 Computational details", "| Molecule |", "<em>Θ</em><sub>ij</sub>", "**Table 1.**", "*Figure 1 (in the PDF edition).*", Fingerprint(tbl, recs, testOpts)} {
		if !strings.Contains(md, w) {
			t.Errorf("Markdown lacks %q", w)
		}
	}
}

func TestBadInput(t *testing.T) {
	tbl, recs := fixture(t, 1)
	var buf bytes.Buffer
	if err := PDF(&buf, nil, recs, testOpts); err == nil {
		t.Errorf("a nil table was accepted")
	}
	dup := append(append([]archive.Record(nil), recs...), recs[0])
	if err := PDF(&buf, tbl, dup, testOpts); err == nil || !strings.Contains(err.Error(), recs[0].ID) {
		t.Errorf("a record given twice: got %v", err)
	}
	noID := append([]archive.Record(nil), recs...)
	noID[0].ID = ""
	if err := CSV(&buf, tbl, noID, testOpts); err == nil {
		t.Errorf("a record without id was accepted")
	}
	// values that are not numbers are printed as "—" and left out of the plots
	bad := *tbl
	bad.Deviations = append([]compare.Deviation(nil), tbl.Deviations...)
	bad.Deviations[0].Computed = math.NaN()
	bad.Deviations[0].Signed = math.Inf(1)
	buf.Reset()
	compressStreams = false
	err := PDF(&buf, &bad, recs, testOpts)
	compressStreams = true
	if err != nil {
		t.Errorf("non-finite deviation: %v", err)
	}
	if bytes.Contains(buf.Bytes(), []byte("NaN")) || bytes.Contains(buf.Bytes(), []byte("Inf ")) || bytes.Contains(buf.Bytes(), []byte("Inf.")) {
		t.Errorf("a non-finite number reached the PDF page streams")
	}
	// an empty comparison still makes a document
	if err := PDF(&buf, &compare.Table{}, nil, Options{}); err != nil {
		t.Errorf("empty comparison: %v", err)
	}
}

func BenchmarkPDF500(b *testing.B) {
	tbl, recs := fixture(b, 167) // 501 records
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		var buf bytes.Buffer
		if err := PDF(&buf, tbl, recs, testOpts); err != nil {
			b.Fatal(err)
		}
		b.ReportMetric(float64(buf.Len())/1e6, "MB")
	}
}
