package study

import (
	"bytes"
	"encoding/json"
	"fmt"
	"reflect"
	"regexp"
	"sort"
	"strconv"
	"strings"
	"unicode/utf8"
)

// locator knows where each key and value of a JSON document starts, by
// path: "" for the document, "levels", "levels[0]", "levels[0].method".
// It lets an error about a path name the line and column of the file.
type locator struct {
	b      []byte
	values map[string]int
	keys   []keyAt
}

// keyAt is one object key as written: its path, the path of the object
// holding it, and its byte offset.
type keyAt struct {
	path, parent, key string
	off               int
}

// locate reads b's structure; it returns nil for a document that is not
// valid JSON (the decoder's own error then says where).
func locate(b []byte) *locator {
	l := &locator{b: b, values: map[string]int{}}
	dec := json.NewDecoder(bytes.NewReader(b))
	if err := l.value(dec, ""); err != nil {
		return nil
	}
	return l
}

// next is the offset where the next token starts.
func (l *locator) next(dec *json.Decoder) int {
	o := int(dec.InputOffset())
	for o < len(l.b) && strings.IndexByte(" \t\r\n,:", l.b[o]) >= 0 {
		o++
	}
	return o
}

func (l *locator) value(dec *json.Decoder, path string) error {
	start := l.next(dec)
	tok, err := dec.Token()
	if err != nil {
		return err
	}
	l.values[path] = start
	switch tok {
	case json.Delim('{'):
		for dec.More() {
			ko := l.next(dec)
			kt, err := dec.Token()
			if err != nil {
				return err
			}
			key, _ := kt.(string)
			kp := key
			if path != "" {
				kp = path + "." + key
			}
			l.keys = append(l.keys, keyAt{path: kp, parent: path, key: key, off: ko})
			if err := l.value(dec, kp); err != nil {
				return err
			}
		}
		_, err = dec.Token()
	case json.Delim('['):
		for i := 0; dec.More(); i++ {
			if err := l.value(dec, fmt.Sprintf("%s[%d]", path, i)); err != nil {
				return err
			}
		}
		_, err = dec.Token()
	}
	return err
}

// lineCol turns a byte offset of b into a line and a column (both from 1;
// the column counts characters).
func lineCol(b []byte, off int) (int, int) {
	off = min(max(off, 0), len(b))
	line := 1 + bytes.Count(b[:off], []byte("\n"))
	start := bytes.LastIndexByte(b[:off], '\n') + 1
	return line, 1 + utf8.RuneCount(b[start:off])
}

func at(b []byte, off int) string {
	line, col := lineCol(b, off)
	return fmt.Sprintf("line %d, column %d", line, col)
}

// where names the place of path ("" when the path is not in the file).
func (l *locator) where(path string) string {
	if l == nil {
		return ""
	}
	if off, ok := l.values[path]; ok {
		return at(l.b, off)
	}
	return ""
}

// typeAt follows path through the Go type t (structs by their JSON keys,
// slices, maps and pointers) and returns the type of the value there.
func typeAt(t reflect.Type, path string) (reflect.Type, bool) {
	for t.Kind() == reflect.Pointer {
		t = t.Elem()
	}
	if path == "" {
		return t, true
	}
	head, rest := path, ""
	if i := strings.IndexAny(path, ".["); i >= 0 {
		head, rest = path[:i], path[i:]
	}
	switch {
	case head == "" && strings.HasPrefix(rest, "["):
		i := strings.IndexByte(rest, ']')
		if (t.Kind() != reflect.Slice && t.Kind() != reflect.Array) || i < 0 {
			return nil, false
		}
		return typeAt(t.Elem(), strings.TrimPrefix(rest[i+1:], "."))
	case t.Kind() == reflect.Map:
		return typeAt(t.Elem(), strings.TrimPrefix(rest, "."))
	case t.Kind() == reflect.Struct:
		for _, f := range jsonFields(t) {
			if f.name == head {
				return typeAt(f.typ, strings.TrimPrefix(rest, "."))
			}
		}
	}
	return nil, false
}

type jsonField struct {
	name string
	typ  reflect.Type
}

// jsonFields are the keys a struct decodes, in declaration order.
func jsonFields(t reflect.Type) []jsonField {
	var out []jsonField
	for i := 0; i < t.NumField(); i++ {
		f := t.Field(i)
		if !f.IsExported() {
			continue
		}
		name, _, _ := strings.Cut(f.Tag.Get("json"), ",")
		switch {
		case name == "-":
			continue
		case f.Anonymous && name == "":
			ft := f.Type
			for ft.Kind() == reflect.Pointer {
				ft = ft.Elem()
			}
			if ft.Kind() == reflect.Struct {
				out = append(out, jsonFields(ft)...)
				continue
			}
		case name == "":
			name = f.Name
		}
		out = append(out, jsonField{name, f.Type})
	}
	return out
}

// unknownKey reports the first key of the file (in file order) that the
// Go type t does not decode, where it is, and the nearest valid key.
func (l *locator) unknownKey(t reflect.Type) error {
	for _, k := range l.keys {
		pt, ok := typeAt(t, k.parent)
		if !ok {
			continue
		}
		for pt.Kind() == reflect.Pointer {
			pt = pt.Elem()
		}
		if pt.Kind() != reflect.Struct {
			continue
		}
		var names []string
		known := false
		for _, f := range jsonFields(pt) {
			names = append(names, f.name)
			known = known || f.name == k.key
		}
		if known {
			continue
		}
		in := "at the top level"
		if k.parent != "" {
			in = "in " + k.parent
		}
		msg := fmt.Sprintf("%s: unknown key %q %s", at(l.b, k.off), k.key, in)
		if s := nearest(k.key, names); s != "" {
			return fmt.Errorf("%s; did you mean %q?", msg, s)
		}
		sort.Strings(names)
		return fmt.Errorf("%s (keys there: %s)", msg, strings.Join(names, ", "))
	}
	return nil
}

// nearest is the option closest to word in edit distance (case folded),
// when it is close enough to be a likely slip: at most a third of the
// word's length, at least one edit; "" otherwise.
func nearest(word string, options []string) string {
	best, bestD := "", -1
	w := strings.ToLower(word)
	for _, o := range options {
		d := editDistance(w, strings.ToLower(o))
		if bestD < 0 || d < bestD {
			best, bestD = o, d
		}
	}
	if bestD < 0 || bestD > max(1, utf8.RuneCountInString(word)/3) {
		return ""
	}
	return best
}

// editDistance is the optimal-string-alignment distance of a and b (by
// characters): insertions, deletions, substitutions and swaps of two
// neighbours each count one.
func editDistance(a, b string) int {
	ra, rb := []rune(a), []rune(b)
	d := make([][]int, len(ra)+1)
	for i := range d {
		d[i] = make([]int, len(rb)+1)
		d[i][0] = i
	}
	for j := range d[0] {
		d[0][j] = j
	}
	for i := 1; i <= len(ra); i++ {
		for j := 1; j <= len(rb); j++ {
			c := 1
			if ra[i-1] == rb[j-1] {
				c = 0
			}
			d[i][j] = min(d[i-1][j-1]+c, d[i-1][j]+1, d[i][j-1]+1)
			if i > 1 && j > 1 && ra[i-1] == rb[j-2] && ra[i-2] == rb[j-1] {
				d[i][j] = min(d[i][j], d[i-2][j-2]+1)
			}
		}
	}
	return d[len(ra)][len(rb)]
}

// rePathLead is the path an error message starts with ("levels[0]: …",
// "name is empty").
var rePathLead = regexp.MustCompile(`^([a-z_]+(?:\[\d+\])*(?:\.[a-z_]+(?:\[\d+\])*)*)(?::| is )`)

// reSchemaField is the location in a schema-validation message.
var reSchemaField = regexp.MustCompile(`^field (/\S*):`)

// place prefixes an error about a path of the file with its line and
// column; errors that name no path of the file pass through.
func (l *locator) place(err error) error {
	if l == nil || err == nil {
		return err
	}
	msg := err.Error()
	path := ""
	if m := rePathLead.FindStringSubmatch(msg); m != nil {
		path = m[1]
	} else if m := reSchemaField.FindStringSubmatch(msg); m != nil {
		path = pointerPath(m[1])
	}
	// The deepest part of the path that the file holds.
	for path != "" {
		if w := l.where(path); w != "" {
			return fmt.Errorf("%s: %s", w, msg)
		}
		i := strings.LastIndexAny(path, ".[")
		if i < 0 {
			break
		}
		path = path[:i]
	}
	return err
}

// pointerPath turns a JSON pointer (/levels/0/method) into a path
// (levels[0].method).
func pointerPath(p string) string {
	var b strings.Builder
	for _, part := range strings.Split(strings.Trim(p, "/"), "/") {
		if part == "" {
			continue
		}
		if _, err := strconv.Atoi(part); err == nil {
			b.WriteString("[" + part + "]")
			continue
		}
		if b.Len() > 0 {
			b.WriteByte('.')
		}
		b.WriteString(part)
	}
	return b.String()
}
