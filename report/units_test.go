package report

import (
	"math"
	"reflect"
	"sort"
	"strings"
	"testing"

	"moltrail/engine"
	"moltrail/engine/basis"
	"moltrail/engine/molecule"
)

// Every symbol the report prints must have a glyph in every embedded face
// (else it would show as an empty box).
func TestFontCoverage(t *testing.T) {
	need := "ÅÅ°±μµΘΔσθ·−×≤≥≈→–—‘’“”…ΣδÆøöüé½₀₁₂₃₄₅₆₇₈₉⁰¹²³⁴⁵⁶⁷⁸⁹⁻⁺|"
	for _, monoFace := range []bool{false, true} {
		for _, c := range need {
			if monoFace && strings.ContainsRune("ΘΔσθΣδ", c) {
				continue // Greek is never set in the monospaced face
			}
			if got := printable(string(c), monoFace); got != string(c) {
				t.Errorf("face (mono %v) has no glyph for %q (U+%04X): printed as %q", monoFace, c, c, got)
			}
		}
	}
	// a rune the faces lack is replaced, not printed as a box
	if got := printable("∠(H–O–H)", false); got != "θ(H–O–H)" {
		t.Errorf("angle sign: got %q", got)
	}
	if got := printable("a\U0001F600b", false); got != "a?b" {
		t.Errorf("missing glyph: got %q", got)
	}
}

func TestMarkup(t *testing.T) {
	for _, c := range []struct {
		in   string
		want rich
	}{
		{"Θ_{zz} / D·Å", rich{{Text: "Θ"}, {Text: "zz", Shift: sub}, {Text: " / D·Å"}}},
		{"10^{−3} E_{h}", rich{{Text: "10"}, {Text: "−3", Shift: sup}, {Text: " E"}, {Text: "h", Shift: sub}}},
		{"*r* / Å", rich{{Text: "r", Style: italic}, {Text: " / Å"}}},
		{esc("6-31G* a_b^c"), rich{{Text: "6-31G* a_b^c"}}},
		{"x_{unclosed", rich{{Text: "x_{unclosed"}}},
	} {
		if got := mk(c.in); !reflect.DeepEqual(got, c.want) {
			t.Errorf("mk(%q) = %#v, want %#v", c.in, got, c.want)
		}
	}
	if got := mk("H_{2}O 10^{-3} Θ_{zz}").Plain(); got != "H₂O 10⁻³ Θzz" {
		t.Errorf("Plain: %q", got)
	}
	if got := mk("a<b Θ_{zz}").HTML(); got != "a&lt;b Θ<sub>zz</sub>" {
		t.Errorf("HTML: %q", got)
	}
}

func TestNiceTicks(t *testing.T) {
	for _, c := range []struct {
		lo, hi float64
		n      int
		ticks  []float64
		dec    int
	}{
		{-1.6, 0.9, 5, []float64{-2, -1.5, -1, -0.5, 0, 0.5, 1}, 1},
		{0, 0.23, 5, []float64{0, 0.05, 0.1, 0.15, 0.2, 0.25}, 2},
		{95, 121, 5, []float64{90, 100, 110, 120, 130}, 0},
		{-0.024, 0.058, 4, []float64{-0.025, 0, 0.025, 0.05, 0.075}, 3},
	} {
		ticks, a, b, dec := niceTicks(c.lo, c.hi, c.n)
		if len(ticks) != len(c.ticks) || dec != c.dec || a > c.lo || b < c.hi {
			t.Errorf("niceTicks(%g, %g): %v [%g, %g] dec %d, want %v dec %d", c.lo, c.hi, ticks, a, b, dec, c.ticks, c.dec)
			continue
		}
		for i := range ticks {
			if math.Abs(ticks[i]-c.ticks[i]) > 1e-12 {
				t.Errorf("niceTicks(%g, %g): %v, want %v", c.lo, c.hi, ticks, c.ticks)
				break
			}
		}
	}
	// degenerate and non-finite input still gives a usable axis
	for _, c := range [][2]float64{{1, 1}, {0, 0}, {math.NaN(), 1}, {math.Inf(-1), 0}} {
		ticks, a, b, _ := niceTicks(c[0], c[1], 5)
		if len(ticks) < 2 || !(b > a) {
			t.Errorf("niceTicks(%g, %g) gave %v [%g, %g]", c[0], c[1], ticks, a, b)
		}
	}
}

func TestNumbers(t *testing.T) {
	for _, c := range []struct {
		v         float64
		dec       int
		print, cs string
	}{
		{-1.2345, 2, "−1.23", "-1.23"},
		{-0.001, 2, "0.00", "0.00"},
		{3, 0, "3", "3"},
		{math.NaN(), 2, "—", ""},
	} {
		got := num(c.v, c.dec)
		if got.Lines[0].Plain() != c.print || got.Raw != c.cs {
			t.Errorf("num(%g, %d) = %q / %q, want %q / %q", c.v, c.dec, got.Lines[0].Plain(), got.Raw, c.print, c.cs)
		}
	}
	for v, want := range map[float64]string{1e-10: "10^{−10}", 4.5e-4: "4.5 × 10^{−4}", 0.3: "0.3", 1e-3: "10^{−3}", 0: "0"} {
		if got := sci(v); got != want {
			t.Errorf("sci(%g) = %q, want %q", v, got, want)
		}
	}
}

func TestCitations(t *testing.T) {
	// the cc-pVDZ file's header lines (the library's own data)
	set, err := basis.Builtin("cc-pVDZ")
	if err != nil {
		t.Fatal(err)
	}
	h, _ := molecule.Lookup("H")
	o, _ := molecule.Lookup("O")
	got := citations(set.References, map[int]bool{h.Z: true, o.Z: true})
	if len(got) == 0 {
		t.Fatalf("no citation for H and O in cc-pVDZ")
	}
	for _, c := range got {
		if strings.Contains(c, "EMSL") || strings.Contains(c, "----") || strings.Contains(c, "Balabanov") {
			t.Errorf("citation %q should have been dropped for H, O", c)
		}
	}
	if !strings.Contains(strings.Join(got, "|"), "Dunning") {
		t.Errorf("cc-pVDZ citations for H, O lack Dunning: %q", got)
	}
	// continuation lines are joined to their entry
	lines := []string{"X  EMSL  Basis Set Exchange Library", "Elements References", "-------- ----------",
		"H - He: A. Author, J. Chem. Phys. 56,", "2257 (1972).", "Na - Ar: B. Other, J. Chem. Phys. 77, 3654 (1982)"}
	got = citations(lines, map[int]bool{1: true})
	if !reflect.DeepEqual(got, []string{"A. Author, J. Chem. Phys. 56, 2257 (1972)."}) {
		t.Errorf("citations: %q", got)
	}
}

func TestHillFormula(t *testing.T) {
	g := func(s ...string) []engine.GeomAtom {
		var out []engine.GeomAtom
		for _, x := range s {
			out = append(out, engine.GeomAtom{Symbol: x})
		}
		return out
	}
	for want, atoms := range map[string][]engine.GeomAtom{
		"H₂O":   g("O", "H", "H"),
		"CH₂O":  g("C", "O", "H", "H"),
		"CO":    g("C", "O"),
		"FH":    g("H", "F"),
		"C₂H₆O": g("C", "C", "O", "H", "H", "H", "H", "H", "H"),
	} {
		if got := hillFormula(atoms).Plain(); got != want {
			t.Errorf("hillFormula = %q, want %q", got, want)
		}
	}
}

func TestSplitColumns(t *testing.T) {
	tb := &table{Head: make([]rich, 7), Key: 1, Groups: []colGroup{{From: 1, To: 2}, {From: 3, To: 4}, {From: 5, To: 6}}}
	m := []colMetrics{{w: 50}, {w: 40}, {w: 40}, {w: 40}, {w: 40}, {w: 40}, {w: 40}}
	got := splitColumns(tb, m, 250) // 50 + 4·40 + 4 gaps of 9 = 246 fits, one more group does not
	want := [][]int{{0, 1, 2, 3, 4}, {0, 5, 6}}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("splitColumns = %v, want %v", got, want)
	}
}

func TestNaturalOrder(t *testing.T) {
	in := []string{"water 10", "water", "ammonia 2", "water 2", "ammonia 10", "ammonia", "water 02"}
	sort.SliceStable(in, func(i, j int) bool { return naturalLess(in[i], in[j]) })
	want := []string{"ammonia", "ammonia 2", "ammonia 10", "water", "water 02", "water 2", "water 10"}
	if !reflect.DeepEqual(in, want) {
		t.Errorf("natural order: %q", in)
	}
}
