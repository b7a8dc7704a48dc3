package archive

import (
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"slices"

	badger "github.com/dgraph-io/badger/v4"
)

// ErrDamaged says the archive's files are damaged so that it cannot be
// read safely.
var ErrDamaged = errors.New("archive is damaged")

// ErrNotArchive says the archive path names something that is not (and
// cannot become) an archive: a plain file, or a directory of other files.
var ErrNotArchive = errors.New("not an archive directory")

// sentinelError is an error with its own wording that still matches a
// sentinel under errors.Is.
type sentinelError struct {
	sentinel error
	msg      string
}

func (e *sentinelError) Error() string { return e.msg }
func (e *sentinelError) Unwrap() error { return e.sentinel }

// checkDir refuses a path that cannot hold an archive before badger is
// asked to open it: a plain file, or (for writing) a directory that is
// neither empty nor an archive, which would otherwise fill with store
// files next to someone's own.
func checkDir(dir string, readOnly bool) error {
	fi, err := os.Stat(dir)
	if errors.Is(err, os.ErrNotExist) {
		return nil
	}
	if err != nil {
		return fmt.Errorf("archive %s cannot be opened: %v", dir, pathErr(err))
	}
	if !fi.IsDir() {
		return &sentinelError{ErrNotArchive, fmt.Sprintf("archive %s is a file, not an archive directory", dir)}
	}
	if readOnly {
		return nil
	}
	if _, err := os.Stat(filepath.Join(dir, "MANIFEST")); err == nil {
		return nil
	}
	ents, err := os.ReadDir(dir)
	if err != nil {
		return fmt.Errorf("archive %s cannot be opened: %v", dir, pathErr(err))
	}
	// The claims directory may come first (a study claims its first item
	// before the first record creates the store), and the store's own
	// files appear before its MANIFEST while another process creates it.
	ents = slices.DeleteFunc(ents, func(e os.DirEntry) bool {
		if e.IsDir() {
			return e.Name() == claimsDir
		}
		return storeFile(e.Name())
	})
	if len(ents) > 0 {
		return &sentinelError{ErrNotArchive, fmt.Sprintf("%s holds %d file(s) but no archive; give an empty or new directory for a new archive", dir, len(ents))}
	}
	return nil
}

// storeFile reports whether name is one of the files badger keeps in a
// store directory.
func storeFile(name string) bool {
	switch name {
	case "MANIFEST", "MANIFEST-REWRITE", "KEYREGISTRY", "KEYREGISTRY-REWRITE", "LOCK", "DISCARD":
		return true
	}
	switch filepath.Ext(name) {
	case ".vlog", ".sst", ".mem":
		return true
	}
	return false
}

// checkTables checks the footer of every table file (*.sst) that the
// manifest lists. badger finds a table's index through two lengths stored
// at the end of the file; when a truncated or overwritten file makes them
// point outside the file, badger panics in a goroutine of its own, which
// no caller can recover, so the bounds are checked here first. The index
// itself carries a checksum that badger verifies. Nothing is checked
// while another process holds the archive (its tables may be half
// written; badger.Open then reports the lock), and table files the
// manifest does not list (left by a crash; badger removes them) are not
// looked at.
func checkTables(dir string) error {
	unlock, ok := lockShared(dir)
	if !ok {
		return nil
	}
	defer unlock()
	fp, err := os.Open(filepath.Join(dir, "MANIFEST"))
	if err != nil {
		return nil // a new archive, or one badger will report on
	}
	opts := badgerOptions(dir, true)
	m, _, err := badger.ReplayManifestFile(fp, opts.ExternalMagicVersion, opts)
	fp.Close()
	if err != nil {
		return nil // badger reports a damaged manifest itself
	}
	ids := make([]uint64, 0, len(m.Tables))
	for id := range m.Tables {
		ids = append(ids, id)
	}
	slices.Sort(ids)
	for _, id := range ids {
		name := fmt.Sprintf("%06d.sst", id)
		if what := tableFooterProblem(filepath.Join(dir, name)); what != "" {
			return &sentinelError{ErrDamaged, fmt.Sprintf("archive %s is damaged: table file %s %s; restore it from a copy or rebuild it from an export", dir, name, what)}
		}
	}
	return nil
}

// tableFooterProblem says what is wrong with a table file's footer, or "".
func tableFooterProblem(path string) string {
	f, err := os.Open(path)
	if err != nil {
		return "cannot be read: " + pathErr(err).Error()
	}
	defer f.Close()
	fi, err := f.Stat()
	if err != nil {
		return "cannot be read: " + pathErr(err).Error()
	}
	size := fi.Size()
	if size < 8 {
		return fmt.Sprintf("is truncated (%d bytes)", size)
	}
	u32 := func(off int64) (int64, bool) {
		var b [4]byte
		if _, err := f.ReadAt(b[:], off); err != nil && err != io.EOF {
			return 0, false
		}
		return int64(binary.BigEndian.Uint32(b[:])), true
	}
	sumLen, ok := u32(size - 4)
	if !ok || sumLen > size-8 {
		return "is truncated or overwritten (its checksum length points outside the file)"
	}
	indexLen, ok := u32(size - 8 - sumLen)
	if !ok || indexLen > size-8-sumLen {
		return "is truncated or overwritten (its index length points outside the file)"
	}
	return ""
}

// pathErr drops the operation and path that an *os.PathError repeats
// when the caller already names the file.
func pathErr(err error) error {
	var pe *os.PathError
	if errors.As(err, &pe) {
		return pe.Err
	}
	return err
}
