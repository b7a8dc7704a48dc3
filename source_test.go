package moltrail

import (
	"bufio"
	"crypto/sha256"
	"encoding/hex"
	"io/fs"
	"os"
	"path"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"testing"
)

// moduleSource lists, from the files on disk, what the code identity must
// cover: go.mod, go.sum, every non-test Go file outside testdata
// directories, and every file a package embeds.
func moduleSource(t *testing.T) []string {
	t.Helper()
	want := map[string]bool{"go.mod": true, "go.sum": true}
	err := filepath.WalkDir(".", func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		name := d.Name()
		if d.IsDir() {
			if p != "." && (name == "testdata" || strings.HasPrefix(name, ".") || strings.HasPrefix(name, "_")) {
				return filepath.SkipDir
			}
			if _, err := os.Stat(filepath.Join(p, "go.mod")); err == nil && p != "." {
				return filepath.SkipDir // another module
			}
			return nil
		}
		if !strings.HasSuffix(name, ".go") || strings.HasSuffix(name, "_test.go") {
			return nil
		}
		slash := filepath.ToSlash(p)
		want[slash] = true
		if slash == "source.go" {
			return nil // its patterns are what is checked here
		}
		for _, pat := range embedPatterns(t, p) {
			for _, f := range embedded(t, filepath.Dir(p), pat) {
				want[f] = true
			}
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	var out []string
	for f := range want {
		out = append(out, f)
	}
	sort.Strings(out)
	return out
}

// embedPatterns reads the //go:embed patterns of one Go file.
func embedPatterns(t *testing.T, file string) []string {
	t.Helper()
	f, err := os.Open(file)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	var pats []string
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		rest, ok := strings.CutPrefix(strings.TrimSpace(sc.Text()), "//go:embed ")
		if !ok {
			continue
		}
		for _, w := range strings.Fields(rest) {
			if u, err := strconv.Unquote(w); err == nil {
				w = u
			}
			pats = append(pats, strings.TrimPrefix(w, "all:"))
		}
	}
	return pats
}

// embedded lists the files (slash paths from the module root) that an
// embed pattern of the package in dir matches; a directory brings its
// files, leaving out names that start with . or _ as go:embed does.
func embedded(t *testing.T, dir, pat string) []string {
	t.Helper()
	matches, err := fs.Glob(os.DirFS(dir), pat)
	if err != nil || len(matches) == 0 {
		t.Fatalf("%s: embed pattern %q matches nothing (%v)", dir, pat, err)
	}
	var out []string
	for _, m := range matches {
		root := filepath.Join(dir, m)
		filepath.WalkDir(root, func(p string, d fs.DirEntry, err error) error {
			if err != nil {
				return err
			}
			if p != root && (strings.HasPrefix(d.Name(), ".") || strings.HasPrefix(d.Name(), "_")) {
				if d.IsDir() {
					return filepath.SkipDir
				}
				return nil
			}
			if !d.IsDir() {
				out = append(out, path.Clean(filepath.ToSlash(p)))
			}
			return nil
		})
	}
	return out
}

// TestSourceCoversModule: the code identity covers exactly the module's
// non-test sources and embedded data, and hashes to what the files on
// disk hash to (so the identity depends on the source alone, not on how
// the binary was built).
func TestSourceCoversModule(t *testing.T) {
	want := moduleSource(t)
	got := SourceFiles()
	gs, ws := map[string]bool{}, map[string]bool{}
	for _, f := range got {
		gs[f] = true
	}
	for _, f := range want {
		ws[f] = true
		if !gs[f] {
			t.Errorf("%s can change what moltrail computes but is not in the code identity: add it to the embed list in source.go", f)
		}
	}
	for _, f := range got {
		if !ws[f] {
			t.Errorf("%s is in the code identity but is neither a Go source nor embedded data", f)
		}
	}
	h := sha256.New()
	for _, f := range want {
		b, err := os.ReadFile(filepath.FromSlash(f))
		if err != nil {
			t.Fatal(err)
		}
		h.Write([]byte(f + "\x00" + strconv.Itoa(len(b)) + "\x00"))
		h.Write(b)
	}
	if disk := hex.EncodeToString(h.Sum(nil)); disk != SourceSHA256() {
		t.Errorf("SourceSHA256 %s, but the files on disk hash to %s", SourceSHA256(), disk)
	}
}

// TestSourceHashSeparatesFiles: moving bytes from the end of one file to
// the start of the next changes the hash (the lengths are hashed).
func TestSourceHashSeparatesFiles(t *testing.T) {
	hash := func(files [][2]string) string {
		h := sha256.New()
		for _, f := range files {
			h.Write([]byte(f[0] + "\x00" + strconv.Itoa(len(f[1])) + "\x00" + f[1]))
		}
		return hex.EncodeToString(h.Sum(nil))
	}
	a := hash([][2]string{{"a.go", "package a\n"}, {"b.go", "package b\n"}})
	b := hash([][2]string{{"a.go", "package a\np"}, {"b.go", "ackage b\n"}})
	if a == b {
		t.Error("the framing of files in the hash does not separate them")
	}
	if len(SourceSHA256()) != 64 || strings.Trim(SourceSHA256(), "0123456789abcdef") != "" {
		t.Errorf("SourceSHA256 %q is not 64 hex digits", SourceSHA256())
	}
}
