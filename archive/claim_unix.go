//go:build linux || darwin || freebsd || netbsd || openbsd || dragonfly

package archive

import (
	"errors"
	"os"
	"syscall"
)

// lockExclusive takes an exclusive flock on f without waiting; ok is
// false while someone else holds it.
func lockExclusive(f *os.File) (ok bool, err error) {
	for {
		err = syscall.Flock(int(f.Fd()), syscall.LOCK_EX|syscall.LOCK_NB)
		if !errors.Is(err, syscall.EINTR) {
			break
		}
	}
	if errors.Is(err, syscall.EWOULDBLOCK) {
		return false, nil
	}
	return err == nil, err
}
