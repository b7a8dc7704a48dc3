package archive

import (
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"os"
	"path/filepath"
)

// claimsDir is the directory inside an archive that holds claim files.
const claimsDir = "claims"

// Claim is a hold on one input key of an archive, taken by a process
// before it computes that input, so that other processes working on the
// same archive (two studies started at once, a shard submitted twice)
// wait for the result instead of computing it again.
//
// A claim is an advisory lock (flock) on a file in the archive's claims
// directory. The operating system drops the lock when the process ends in
// any way — normally, by a signal, or killed outright — so a claim never
// outlives its process and needs no clean-up. On systems without flock
// (see claim_other.go) every claim succeeds and there is no coordination.
// On a network file system the lock is as good as that system's locking.
type Claim struct {
	f    *os.File
	path string
}

// claimPath is the claim file of an input key (a 64-hex-digit key is used
// as it is; anything else is hashed into a file name).
func claimPath(dir, key string) string {
	name := key
	if len(key) != idLen || !isHex(key) {
		h := sha256.Sum256([]byte(key))
		name = hex.EncodeToString(h[:])
	}
	return filepath.Join(dir, claimsDir, name)
}

func isHex(s string) bool {
	for _, c := range s {
		if (c < '0' || c > '9') && (c < 'a' || c > 'f') {
			return false
		}
	}
	return true
}

// TryClaim takes the claim on key in the archive at dir without waiting.
// held is false when another process (or another claim in this process)
// holds it. The archive directory is created if it does not exist.
func TryClaim(dir, key string) (c *Claim, held bool, err error) {
	if err := checkDir(dir, false); err != nil {
		return nil, false, err
	}
	if err := os.MkdirAll(filepath.Join(dir, claimsDir), 0o755); err != nil {
		return nil, false, fmt.Errorf("archive %s: cannot make its claims directory: %v", dir, pathErr(err))
	}
	p := claimPath(dir, key)
	for {
		f, err := os.OpenFile(p, os.O_RDWR|os.O_CREATE, 0o644)
		if err != nil {
			return nil, false, fmt.Errorf("archive %s: cannot make the claim file %s: %v", dir, filepath.Base(p), pathErr(err))
		}
		ok, err := lockExclusive(f)
		if err != nil {
			f.Close()
			return nil, false, fmt.Errorf("archive %s: cannot lock the claim file %s: %v", dir, filepath.Base(p), err)
		}
		if !ok {
			f.Close()
			return nil, true, nil
		}
		// The holder before us removes the file before it lets go; a lock
		// on a removed file claims nothing, so try again on the new one.
		if same, _ := sameFile(f, p); !same {
			f.Close()
			continue
		}
		return &Claim{f: f, path: p}, false, nil
	}
}

// Release gives the claim up. The file is removed while still locked, so
// a process that opened it meanwhile sees that it is stale (TryClaim).
func (c *Claim) Release() error {
	if c == nil || c.f == nil {
		return nil
	}
	err := os.Remove(c.path)
	if cerr := c.f.Close(); err == nil {
		err = cerr
	}
	c.f = nil
	return err
}

// sameFile reports whether the open file f is still the file at path.
func sameFile(f *os.File, path string) (bool, error) {
	a, err := f.Stat()
	if err != nil {
		return false, err
	}
	b, err := os.Stat(path)
	if err != nil {
		return false, err
	}
	return os.SameFile(a, b), nil
}
