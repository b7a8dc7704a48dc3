package report

import (
	"strings"
)

// shift places a span on, above or below the baseline.
type shift int8

const (
	base shift = iota
	sub
	sup
)

// style is a span's face.
type style int8

const (
	plain style = iota
	bold
	italic
	mono
)

// span is a run of text in one face and position.
type span struct {
	Text  string
	Shift shift
	Style style
}

// rich is a line of typeset text: symbols, subscripts, superscripts, faces.
type rich []span

// txt is literal text (no markup is interpreted: safe for data strings).
func txt(s string) rich { return rich{{Text: s}} }

// monoTxt is literal text in the monospaced face.
func monoTxt(s string) rich { return rich{{Text: s, Style: mono}} }

// italicTxt is literal text in italics.
func italicTxt(s string) rich { return rich{{Text: s, Style: italic}} }

// boldTxt is literal text in bold.
func boldTxt(s string) rich { return rich{{Text: s, Style: bold}} }

// mk parses the report's own small markup, used only for strings written in
// this package (never for data): "_{…}" subscript, "^{…}" superscript,
// "*…*" italic, "\\c" a literal c. A brace group may not nest. Data put
// into markup goes through esc.
func mk(s string) rich {
	var out rich
	var cur strings.Builder
	st := plain
	flush := func(sh shift) {
		if cur.Len() > 0 {
			out = append(out, span{Text: cur.String(), Shift: sh, Style: st})
			cur.Reset()
		}
	}
	for i := 0; i < len(s); i++ {
		c := s[i]
		switch {
		case c == '\\' && i+1 < len(s):
			cur.WriteByte(s[i+1])
			i++
		case (c == '_' || c == '^') && i+1 < len(s) && s[i+1] == '{':
			end := strings.IndexByte(s[i+2:], '}')
			if end < 0 {
				cur.WriteByte(c)
				continue
			}
			flush(base)
			sh := sub
			if c == '^' {
				sh = sup
			}
			cur.WriteString(s[i+2 : i+2+end])
			flush(sh)
			i += 2 + end
		case c == '*':
			flush(base)
			if st == italic {
				st = plain
			} else {
				st = italic
			}
		default:
			cur.WriteByte(c)
		}
	}
	flush(base)
	return out
}

// esc protects a data string placed inside mk markup.
func esc(s string) string {
	return strings.NewReplacer(`\`, `\\`, `*`, `\*`, `_`, `\_`, `^`, `\^`).Replace(s)
}

// cat joins rich texts.
func cat(parts ...rich) rich {
	var out rich
	for _, p := range parts {
		out = append(out, p...)
	}
	return out
}

// Plain is the text with subscripts and superscripts written as Unicode
// sub/superscript characters where every character has one, else inline.
func (r rich) Plain() string {
	var b strings.Builder
	for _, s := range r {
		switch s.Shift {
		case sub:
			b.WriteString(scriptForm(s.Text, subForms))
		case sup:
			b.WriteString(scriptForm(s.Text, supForms))
		default:
			b.WriteString(s.Text)
		}
	}
	return b.String()
}

// HTML is the text with <sub>/<sup>/<em> tags and HTML-escaped content
// (for Markdown, where GitHub-flavoured renderers accept these tags).
func (r rich) HTML() string {
	var b strings.Builder
	for _, s := range r {
		t := htmlEscape(s.Text)
		if s.Style == italic {
			t = "<em>" + t + "</em>"
		}
		switch s.Shift {
		case sub:
			b.WriteString("<sub>" + t + "</sub>")
		case sup:
			b.WriteString("<sup>" + t + "</sup>")
		default:
			b.WriteString(t)
		}
	}
	return b.String()
}

func htmlEscape(s string) string {
	r := strings.NewReplacer("&", "&amp;", "<", "&lt;", ">", "&gt;", "|", "&#124;")
	return r.Replace(s)
}

var subForms = map[rune]rune{
	'0': '₀', '1': '₁', '2': '₂', '3': '₃', '4': '₄', '5': '₅', '6': '₆', '7': '₇', '8': '₈', '9': '₉',
	'+': '₊', '-': '₋', '−': '₋', '(': '₍', ')': '₎',
}

var supForms = map[rune]rune{
	'0': '⁰', '1': '¹', '2': '²', '3': '³', '4': '⁴', '5': '⁵', '6': '⁶', '7': '⁷', '8': '⁸', '9': '⁹',
	'+': '⁺', '-': '⁻', '−': '⁻', '(': '⁽', ')': '⁾', 'n': 'ⁿ',
}

// scriptForm maps every rune of s through forms, or returns "_s"/"^s"
// style inline text when one rune has no form.
func scriptForm(s string, forms map[rune]rune) string {
	var b strings.Builder
	for _, c := range s {
		f, ok := forms[c]
		if !ok {
			return s
		}
		b.WriteRune(f)
	}
	return b.String()
}
