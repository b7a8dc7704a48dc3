package archive

import (
	"errors"
	"fmt"
	"strings"
	"syscall"
)

// ErrDiskFull says the disk holding the archive has no room for a write.
var ErrDiskFull = errors.New("the disk is full")

// isNoSpace reports whether err comes from a full disk or an exhausted
// quota.
func isNoSpace(err error) bool {
	if err == nil {
		return false
	}
	if errors.Is(err, syscall.ENOSPC) || errors.Is(err, syscall.EDQUOT) {
		return true
	}
	m := err.Error()
	return strings.Contains(m, "no space left on device") || strings.Contains(m, "disk quota exceeded")
}

// writeErr words an error of a write to the archive.
func (s *Store) writeErr(err error) error {
	if isNoSpace(err) {
		return &sentinelError{ErrDiskFull, fmt.Sprintf("archive %s: the disk is full, so nothing more was written; the records stored before stay readable; free some space and run the command again", s.dir)}
	}
	return fmt.Errorf("archive %s: write failed: %v", s.dir, err)
}
