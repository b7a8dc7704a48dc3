package report

import (
	"strings"
	"sync"

	"github.com/jung-kurt/gofpdf"
	"golang.org/x/image/font/gofont/gobold"
	"golang.org/x/image/font/gofont/gobolditalic"
	"golang.org/x/image/font/gofont/goitalic"
	"golang.org/x/image/font/gofont/gomono"
	"golang.org/x/image/font/gofont/goregular"
	"golang.org/x/image/font/sfnt"
)

// The PDF core fonts are limited to cp1252 and lack Θ, μ, Δ, σ and the
// sub/superscript digits. The Go font family (BSD licence, shipped as Go
// source in golang.org/x/image) covers all the symbols the report prints
// (checked by TestFontCoverage) and is embedded as subset TrueType.
const (
	famText = "mtext"
	famMono = "mmono"
)

func addFonts(f *gofpdf.Fpdf) error {
	f.AddUTF8FontFromBytes(famText, "", goregular.TTF)
	f.AddUTF8FontFromBytes(famText, "B", gobold.TTF)
	f.AddUTF8FontFromBytes(famText, "I", goitalic.TTF)
	f.AddUTF8FontFromBytes(famText, "BI", gobolditalic.TTF)
	f.AddUTF8FontFromBytes(famMono, "", gomono.TTF)
	if err := f.Error(); err != nil {
		return err
	}
	return nil
}

// fontOf maps a span style to a gofpdf family and style.
func fontOf(s style, boldBase bool) (string, string) {
	switch s {
	case mono:
		return famMono, ""
	case italic:
		if boldBase {
			return famText, "BI"
		}
		return famText, "I"
	case bold:
		return famText, "B"
	}
	if boldBase {
		return famText, "B"
	}
	return famText, ""
}

// Glyph coverage of the embedded faces, looked up in the font files and
// remembered: a rune without a glyph would print as an empty box, so it is
// replaced by a stand-in (substitutes) or by "?".
var (
	coverMu    sync.Mutex
	coverFaces map[bool][]*sfnt.Font // mono? → faces that must all have the glyph
	coverSeen  = map[bool]map[rune]bool{false: {}, true: {}}
	coverBuf   sfnt.Buffer
)

var substitutes = map[rune]string{
	'∠':      "θ", // the angle sign: an angle is written θ(A–B–C)
	'≲':      "≤",
	'≳':      "≥",
	'\u2009': " ",
	'\u202f': " ",
}

func parseFaces(ttfs ...[]byte) []*sfnt.Font {
	var out []*sfnt.Font
	for _, b := range ttfs {
		if f, err := sfnt.Parse(b); err == nil {
			out = append(out, f)
		}
	}
	return out
}

// covered reports whether every face of the kind has a glyph for c.
// The caller holds coverMu.
func covered(c rune, monoFace bool) bool {
	if ok, seen := coverSeen[monoFace][c]; seen {
		return ok
	}
	if coverFaces == nil {
		coverFaces = map[bool][]*sfnt.Font{
			false: parseFaces(goregular.TTF, gobold.TTF, goitalic.TTF, gobolditalic.TTF),
			true:  parseFaces(gomono.TTF),
		}
	}
	ok := len(coverFaces[monoFace]) > 0
	for _, f := range coverFaces[monoFace] {
		if g, err := f.GlyphIndex(&coverBuf, c); err != nil || g == 0 {
			ok = false
			break
		}
	}
	coverSeen[monoFace][c] = ok
	return ok
}

// printable replaces the runes the face cannot show.
func printable(s string, monoFace bool) string {
	ascii := true
	for i := 0; i < len(s); i++ {
		if s[i] < 0x20 || s[i] > 0x7e {
			ascii = false
			break
		}
	}
	if ascii {
		return s
	}
	coverMu.Lock()
	defer coverMu.Unlock()
	var b strings.Builder
	for _, c := range s {
		switch {
		case c != '\n' && c != '\t' && covered(c, monoFace):
			b.WriteRune(c)
		case substitutes[c] != "":
			b.WriteString(substitutes[c])
		case c == '\n' || c == '\t':
			b.WriteByte(' ')
		default:
			b.WriteByte('?')
		}
	}
	return b.String()
}

// meter measures text with a page-less gofpdf document holding the same
// faces: its widths are exactly those of the output document, and setting
// its font writes nothing into any page stream.
var meter struct {
	sync.Mutex
	f        *gofpdf.Fpdf
	fam, sty string
	err      error
}

// symbolWidth is the width of s in the face, in 1/1000 of the type size.
func symbolWidth(fam, sty, s string) float64 {
	meter.Lock()
	defer meter.Unlock()
	if meter.f == nil && meter.err == nil {
		f := gofpdf.New("P", "pt", "A4", "")
		if err := addFonts(f); err != nil {
			meter.err = err
		}
		meter.f = f
	}
	if meter.err != nil {
		return 500 * float64(len([]rune(s)))
	}
	if fam != meter.fam || sty != meter.sty {
		meter.f.SetFont(fam, sty, 10)
		meter.fam, meter.sty = fam, sty
	}
	return float64(meter.f.GetStringSymbolWidth(s))
}
