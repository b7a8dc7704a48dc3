// Package readfile reads input files with a stated size limit, so that a
// file named by mistake (a device such as /dev/zero, a huge log) is
// refused in one sentence instead of being read whole.
package readfile

import (
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
)

// TooLargeError says a file holds more than its limit.
type TooLargeError struct {
	Path  string
	Limit int64
}

func (e *TooLargeError) Error() string {
	return fmt.Sprintf("%s is larger than %s, the limit for this kind of file", e.Path, Size(e.Limit))
}

// Size words a byte count for a message ("16 MiB").
func Size(n int64) string {
	switch {
	case n >= 1<<30 && n%(1<<30) == 0:
		return fmt.Sprintf("%d GiB", n>>30)
	case n >= 1<<20 && n%(1<<20) == 0:
		return fmt.Sprintf("%d MiB", n>>20)
	case n >= 1<<10 && n%(1<<10) == 0:
		return fmt.Sprintf("%d KiB", n>>10)
	}
	return fmt.Sprintf("%d bytes", n)
}

// Read returns the contents of the file at path, or an error when it is a
// directory, cannot be read, or holds more than limit bytes (a
// *TooLargeError). Errors name the path; the underlying error wraps
// fs.ErrNotExist and the like.
func Read(path string, limit int64) ([]byte, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	fi, err := f.Stat()
	if err != nil {
		return nil, err
	}
	if fi.IsDir() {
		return nil, &fs.PathError{Op: "read", Path: path, Err: errors.New("is a directory")}
	}
	if fi.Mode().IsRegular() && fi.Size() > limit {
		return nil, &TooLargeError{Path: path, Limit: limit}
	}
	return ReadAll(f, path, limit)
}

// ReadAll reads r to its end, or fails with a *TooLargeError naming name
// once more than limit bytes have come.
func ReadAll(r io.Reader, name string, limit int64) ([]byte, error) {
	b, err := io.ReadAll(io.LimitReader(r, limit+1))
	if err != nil {
		return nil, err
	}
	if int64(len(b)) > limit {
		return nil, &TooLargeError{Path: name, Limit: limit}
	}
	return b, nil
}
