package readfile

import (
	"errors"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func TestRead(t *testing.T) {
	dir := t.TempDir()
	small := filepath.Join(dir, "small")
	os.WriteFile(small, []byte("12345"), 0o644)
	if b, err := Read(small, 5); err != nil || string(b) != "12345" {
		t.Fatalf("at the limit: %q %v", b, err)
	}
	var tl *TooLargeError
	if _, err := Read(small, 4); !errors.As(err, &tl) || !strings.Contains(err.Error(), "larger than 4 bytes") {
		t.Fatalf("over the limit: %v", err)
	}
	if _, err := Read(dir, 10); err == nil || !strings.Contains(err.Error(), "is a directory") {
		t.Fatalf("directory: %v", err)
	}
	if _, err := Read(filepath.Join(dir, "none"), 10); !errors.Is(err, fs.ErrNotExist) {
		t.Fatalf("missing: %v", err)
	}
	// A device that never ends is cut at the limit, not read whole.
	if _, err := os.Stat("/dev/zero"); err == nil {
		if _, err := Read("/dev/zero", 1<<20); !errors.As(err, &tl) || !strings.Contains(err.Error(), "1 MiB") {
			t.Fatalf("/dev/zero: %v", err)
		}
	}
}
