package archive

import (
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestOpenRefusesUnfitPlaces: a plain file, a directory of other files
// (for writing) and damaged table files give errors, never a panic, and
// nothing is written into someone else's directory.
func TestOpenRefusesUnfitPlaces(t *testing.T) {
	root := t.TempDir()
	file := filepath.Join(root, "plain")
	os.WriteFile(file, []byte("x"), 0o644)
	other := filepath.Join(root, "other")
	os.Mkdir(other, 0o755)
	os.WriteFile(filepath.Join(other, "notes.txt"), []byte("mine"), 0o644)

	// An archive with a table file, then damaged copies of it.
	good := filepath.Join(root, "good")
	s := openRW(t, good)
	if _, err := s.Put(fixture(t, 1, "hf", "sto-3g", nil, t0)); err != nil {
		t.Fatal(err)
	}
	if err := s.Close(); err != nil {
		t.Fatal(err)
	}
	ssts, _ := filepath.Glob(filepath.Join(good, "*.sst"))
	if len(ssts) == 0 {
		t.Fatal("closing the archive left no table file to damage")
	}
	damaged := func(name string, edit func(path string)) string {
		dir := filepath.Join(root, name)
		os.Mkdir(dir, 0o755)
		ents, _ := os.ReadDir(good)
		for _, e := range ents {
			b, _ := os.ReadFile(filepath.Join(good, e.Name()))
			os.WriteFile(filepath.Join(dir, e.Name()), b, 0o644)
		}
		edit(filepath.Join(dir, filepath.Base(ssts[0])))
		return dir
	}
	truncated := damaged("truncated", func(p string) { os.Truncate(p, 50) })
	empty := damaged("empty", func(p string) { os.Truncate(p, 0) })
	footer := damaged("footer", func(p string) {
		fi, _ := os.Stat(p)
		f, _ := os.OpenFile(p, os.O_WRONLY, 0)
		f.WriteAt([]byte{0x7f, 0xff, 0xff, 0xff}, fi.Size()-4)
		f.Close()
	})

	cases := []struct {
		name     string
		dir      string
		readOnly bool
		want     error
		text     string
	}{
		{"file, reading", file, true, ErrNotArchive, "is a file"},
		{"file, writing", file, false, ErrNotArchive, "is a file"},
		{"other files, writing", other, false, ErrNotArchive, "holds 1 file(s) but no archive"},
		{"other files, reading", other, true, ErrNoArchive, "no archive"},
		{"truncated table, reading", truncated, true, ErrDamaged, "is truncated or overwritten"},
		{"truncated table, writing", truncated, false, ErrDamaged, "is truncated or overwritten"},
		{"empty table", empty, true, ErrDamaged, "is truncated (0 bytes)"},
		{"overwritten footer", footer, true, ErrDamaged, "checksum length points outside"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			st, err := Open(c.dir, OpenOptions{ReadOnly: c.readOnly, Wait: -1})
			if err == nil {
				st.Close()
				t.Fatal("opened")
			}
			if !errors.Is(err, c.want) || !strings.Contains(err.Error(), c.text) {
				t.Fatalf("got %v, want %v mentioning %q", err, c.want, c.text)
			}
		})
	}
	if ents, _ := os.ReadDir(other); len(ents) != 1 {
		t.Errorf("a refused open wrote into the directory: %d entries", len(ents))
	}
	// The undamaged original still opens, also with a half-written table
	// file that the manifest does not list (as a crash leaves one).
	os.WriteFile(filepath.Join(good, "000999.sst"), []byte("xyz"), 0o644)
	st, err := Open(good, OpenOptions{ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	st.Close()
	// While a writer holds the archive its tables are not judged (they
	// may be half written); the reader is told that it is in use.
	w := openRW(t, good)
	defer w.Close()
	if _, err := Open(good, OpenOptions{ReadOnly: true, Wait: -1}); !errors.Is(err, ErrInUse) {
		t.Fatalf("reader beside a writer: got %v, want ErrInUse", err)
	}
}
