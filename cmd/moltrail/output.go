package main

import (
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
)

// checkOutPath says, before any work is done, whether a file can be
// written at path: not a directory, in a directory that exists and takes
// new files. The error says what is wrong; the caller names the path (as
// for every error of this file).
func checkOutPath(path string) error {
	if fi, err := os.Stat(path); err == nil && fi.IsDir() {
		return errors.New("is a directory; give a file name")
	}
	dir := filepath.Dir(path)
	fi, err := os.Stat(dir)
	switch {
	case errors.Is(err, fs.ErrNotExist):
		return fmt.Errorf("directory %s does not exist", dir)
	case err != nil:
		return pathErr(err)
	case !fi.IsDir():
		return fmt.Errorf("%s is not a directory", dir)
	}
	f, err := os.CreateTemp(dir, ".moltrail-probe-*")
	if err != nil {
		return fmt.Errorf("cannot create files in %s (%v)", dir, pathErr(err))
	}
	f.Close()
	os.Remove(f.Name())
	return nil
}

// atomicFile is an output file written under a temporary name in the same
// directory and renamed into place by Commit, so that a failed or
// interrupted command never leaves half a file behind.
type atomicFile struct {
	*os.File
	path string
}

// createAtomic starts writing the file at path.
func createAtomic(path string) (*atomicFile, error) {
	if err := checkOutPath(path); err != nil {
		return nil, err
	}
	f, err := os.CreateTemp(filepath.Dir(path), ".moltrail-out-*")
	if err != nil {
		return nil, pathErr(err)
	}
	return &atomicFile{File: f, path: path}, nil
}

// Commit closes the file and puts it in place, readable by all (0644).
func (a *atomicFile) Commit() error {
	name := a.File.Name()
	err := a.File.Close()
	if err == nil {
		err = os.Chmod(name, 0o644)
	}
	if err == nil {
		err = os.Rename(name, a.path)
	}
	if err != nil {
		os.Remove(name)
		return pathErr(err)
	}
	return nil
}

// Abort drops the unfinished file.
func (a *atomicFile) Abort() {
	a.File.Close()
	os.Remove(a.File.Name())
}

// writeFileAtomic writes b to path through a temporary file in the same
// directory (see atomicFile).
func writeFileAtomic(path string, b []byte) error {
	f, err := createAtomic(path)
	if err != nil {
		return err
	}
	if _, err := f.Write(b); err != nil {
		f.Abort()
		return pathErr(err)
	}
	return f.Commit()
}

// pathErr drops the operation and path that an *fs.PathError repeats when
// the message already names the file.
func pathErr(err error) error {
	var pe *fs.PathError
	if errors.As(err, &pe) {
		return pe.Err
	}
	var le *os.LinkError
	if errors.As(err, &le) {
		return le.Err
	}
	return err
}
