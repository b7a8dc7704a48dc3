package archive

import (
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strings"

	badger "github.com/dgraph-io/badger/v4"
	"github.com/dgraph-io/badger/v4/options"
	"github.com/dgraph-io/badger/v4/table"
	"github.com/dgraph-io/ristretto/v2/z"
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
	return eachTable(dir, func(path string, _ options.CompressionType) string { return tableFooterProblem(path) })
}

// eachTable runs check on every table file (*.sst) the manifest lists, in
// the order of their numbers, and turns the first problem it reports into
// the archive's damage sentence. A missing or unreadable manifest is left
// to badger to report.
func eachTable(dir string, check func(path string, compression options.CompressionType) string) error {
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
		if what := check(filepath.Join(dir, name), m.Tables[id].Compression); what != "" {
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

// checkTableBlocks reads every block of every table file the manifest
// lists and checks its checksum; the first failure is returned as an
// ErrDamaged sentence naming the file. It is the slow, thorough part of
// Verify (footers alone are checked on every Open).
func checkTableBlocks(dir string) error {
	o := badgerOptions(dir, true)
	return eachTable(dir, func(path string, compression options.CompressionType) string {
		return tableBlocksProblem(path, o, compression)
	})
}

// tableBlocksProblem opens one table file on its own and checks the
// checksum of each block; "" when all match.
func tableBlocksProblem(path string, o badger.Options, compression options.CompressionType) (problem string) {
	mf, err := z.OpenMmapFile(path, os.O_RDONLY, 0)
	if err != nil && !errors.Is(err, z.NewFile) {
		return "cannot be read: " + pathErr(err).Error()
	}
	defer func() {
		// badger's own check dereferences the missing block when a
		// checksum fails; that is a finding here, not a crash.
		if r := recover(); r != nil {
			problem = "has a block whose checksum does not match its content"
		}
	}()
	t, err := table.OpenTable(mf, table.Options{ReadOnly: true, ChkMode: options.OnBlockRead, BlockSize: o.BlockSize,
		Compression: compression, AllocPool: z.NewAllocatorPool(1)})
	if err != nil {
		return "cannot be read as a table: " + err.Error()
	}
	defer t.DecrRef()
	if err := t.VerifyChecksum(); err != nil {
		return "has a block whose checksum does not match its content"
	}
	return ""
}

var reOpeningTable = regexp.MustCompile(`Opening table: "([^"]*)"`)

// damagedOpen says which file badger found damaged when it refused to open
// the archive ("" when the error is not about damage).
func damagedOpen(err error) string {
	m := err.Error()
	if !strings.Contains(m, "checksum") && !strings.Contains(m, "failed to read index") && !strings.Contains(m, "failed to initialize table") {
		return ""
	}
	if t := reOpeningTable.FindStringSubmatch(m); t != nil {
		return fmt.Sprintf("table file %s fails its checksum", filepath.Base(t[1]))
	}
	return "a file fails its checksum"
}
