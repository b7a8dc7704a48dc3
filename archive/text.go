package archive

import (
	"fmt"
	"strings"
	"unicode/utf8"
)

// MaxTagBytes bounds a tag (key, "=" and value together). Tags are index
// keys, and badger refuses keys over 65,000 bytes; the bound is checked
// before anything is computed.
const MaxTagBytes = 4096

// MaxNoteBytes bounds the text of a note.
const MaxNoteBytes = 64 << 10

// checkText refuses text that cannot be stored as given: bytes that are
// not UTF-8 (JSON would silently replace them, so the stored text would
// differ from the text given) and NUL characters (the separator of index
// keys).
func checkText(field, s string) error {
	if !utf8.ValidString(s) {
		return fmt.Errorf("%s is not valid UTF-8 text", field)
	}
	if strings.ContainsRune(s, 0) {
		return fmt.Errorf("%s contains a NUL character", field)
	}
	return nil
}

// CheckTags checks tags before anything is computed: keys not empty and
// without "=", UTF-8 text without NUL, each tag at most MaxTagBytes.
func CheckTags(tags map[string]string) error {
	for k, v := range tags {
		where := fmt.Sprintf("tag %q", clip(k))
		if strings.TrimSpace(k) == "" {
			return fmt.Errorf("a tag key is empty")
		}
		if strings.Contains(k, "=") {
			return fmt.Errorf("%s: a tag key cannot contain \"=\"", where)
		}
		if err := checkText(where+" key", k); err != nil {
			return err
		}
		if err := checkText(where+" value", v); err != nil {
			return err
		}
		if n := len(k) + 1 + len(v); n > MaxTagBytes {
			return fmt.Errorf("%s is %d bytes long; a tag is at most %d bytes (key=value)", where, n, MaxTagBytes)
		}
	}
	return nil
}

// clip shortens text for an error message.
func clip(s string) string {
	if len(s) <= 40 {
		return s
	}
	cut := 40
	for cut > 0 && !utf8.RuneStart(s[cut]) {
		cut--
	}
	return s[:cut] + "…"
}
