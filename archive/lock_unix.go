//go:build linux || darwin || freebsd || netbsd || openbsd || dragonfly

package archive

import (
	"errors"
	"os"
	"syscall"
)

// lockShared takes the directory lock that badger takes (flock on the
// directory) in shared mode without waiting. ok is false while another
// process holds it for writing, or when the directory cannot be opened.
func lockShared(dir string) (unlock func(), ok bool) {
	f, err := os.Open(dir)
	if err != nil {
		return nil, false
	}
	for {
		err = syscall.Flock(int(f.Fd()), syscall.LOCK_SH|syscall.LOCK_NB)
		if !errors.Is(err, syscall.EINTR) {
			break
		}
	}
	if err != nil {
		f.Close()
		return nil, false
	}
	return func() {
		syscall.Flock(int(f.Fd()), syscall.LOCK_UN)
		f.Close()
	}, true
}
