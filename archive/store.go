package archive

import (
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"time"

	badger "github.com/dgraph-io/badger/v4"
	"github.com/dgraph-io/badger/v4/options"
)

// LayoutVersion names the key layout of the store (see keys.go).
const LayoutVersion = "moltrail-archive/1"

// DefaultWait is how long Open retries while another process holds the archive.
const DefaultWait = 30 * time.Second

// ErrInUse says another process holds the archive for longer than the wait.
var ErrInUse = errors.New("archive is in use by another process")

// ErrNoArchive says there is no archive at the given directory.
var ErrNoArchive = errors.New("no archive")

// OpenOptions control Open.
type OpenOptions struct {
	// ReadOnly opens for reading; several readers may share the archive,
	// but not with a writer.
	ReadOnly bool
	// Wait bounds how long Open retries while another process holds the
	// archive (0 = DefaultWait; negative = do not wait).
	Wait time.Duration
	// Log receives remarks (waiting, crash recovery); nil = silent.
	Log io.Writer
}

// Store is an open archive.
//
// Guarantees: each record is written in one badger transaction together
// with all of its index entries, so after a crash a record is either
// wholly present or absent; writes are synced to disk before Put returns;
// records are never modified or deleted by this package.
type Store struct {
	db       *badger.DB
	dir      string
	readOnly bool

	trustOnce sync.Once
	trust     *TrustSet
	trustErr  error
}

// Dir is the archive directory.
func (s *Store) Dir() string { return s.dir }

func badgerOptions(dir string, readOnly bool) badger.Options {
	o := badger.DefaultOptions(dir).
		WithLogger(nil).
		WithReadOnly(readOnly).
		WithSyncWrites(true).
		WithMemTableSize(16 << 20).
		WithValueLogFileSize(64 << 20).
		WithNumVersionsToKeep(1).
		WithCompactL0OnClose(!readOnly).
		WithChecksumVerificationMode(options.OnBlockRead)
	return o
}

func isLockErr(err error) bool {
	return err != nil && strings.Contains(err.Error(), "Cannot acquire directory lock")
}

func isTruncateErr(err error) bool {
	return err != nil && (errors.Is(err, badger.ErrTruncateNeeded) || strings.Contains(err.Error(), "Log truncate required"))
}

// Open opens (for writing: creates) the archive in dir. While another
// process holds it, Open retries every 100 ms up to opt.Wait and then
// returns an error wrapping ErrInUse.
//
// A read-only open of an archive left by a process that died while writing
// needs badger's log replay, which read-only mode cannot do; Open then
// performs the replay once with a short writable open (which only
// completes or drops the unfinished tail of badger's own log, never a
// committed record) and reopens read-only, saying so on opt.Log.
func Open(dir string, opt OpenOptions) (*Store, error) {
	if dir == "" {
		return nil, fmt.Errorf("archive directory name is empty")
	}
	if err := checkDir(dir, opt.ReadOnly); err != nil {
		return nil, err
	}
	wait := opt.Wait
	if wait == 0 {
		wait = DefaultWait
	}
	if opt.ReadOnly {
		if _, err := os.Stat(filepath.Join(dir, "MANIFEST")); err != nil {
			return nil, fmt.Errorf("%w at %s (nothing has been stored there yet)", ErrNoArchive, dir)
		}
	}
	deadline := time.Now().Add(wait)
	said := false
	for {
		if err := checkTables(dir); err != nil {
			return nil, err
		}
		db, err := badger.Open(badgerOptions(dir, opt.ReadOnly))
		if err == nil {
			s := &Store{db: db, dir: dir, readOnly: opt.ReadOnly}
			if !opt.ReadOnly {
				if err := s.initLayout(); err != nil {
					db.Close()
					return nil, err
				}
			} else if err := s.checkLayout(); err != nil {
				db.Close()
				return nil, err
			}
			return s, nil
		}
		switch {
		case isLockErr(err):
			if wait < 0 || time.Now().After(deadline) {
				return nil, fmt.Errorf("%w: %s is held by another moltrail process (waited %s); try again when it has finished", ErrInUse, dir, maxDur(wait, 0))
			}
			if !said && opt.Log != nil {
				fmt.Fprintf(opt.Log, "archive %s is in use by another process; waiting up to %s\n", dir, wait)
				said = true
			}
			time.Sleep(100 * time.Millisecond)
		case opt.ReadOnly && isTruncateErr(err):
			if opt.Log != nil {
				fmt.Fprintf(opt.Log, "archive %s was left open by a process that stopped while writing; replaying its log once before reading\n", dir)
			}
			rw, rerr := badger.Open(badgerOptions(dir, false))
			if isLockErr(rerr) {
				continue // a writer appeared: wait for it like above
			}
			if rerr != nil {
				return nil, fmt.Errorf("archive %s needs its log replayed after a crash and the replay failed: %v", dir, rerr)
			}
			if cerr := rw.Close(); cerr != nil {
				return nil, fmt.Errorf("archive %s: closing after log replay: %v", dir, cerr)
			}
		case isNoSpace(err):
			return nil, &sentinelError{ErrDiskFull, fmt.Sprintf("archive %s cannot be opened for writing: the disk is full; free some space and run the command again (reading still works)", dir)}
		case damagedOpen(err) != "":
			return nil, &sentinelError{ErrDamaged, fmt.Sprintf("archive %s is damaged: %s; restore it from a copy or rebuild it from an export", dir, damagedOpen(err))}
		default:
			return nil, fmt.Errorf("archive %s cannot be opened: %v", dir, err)
		}
	}
}

func maxDur(a, b time.Duration) time.Duration {
	if a > b {
		return a
	}
	return b
}

// Close closes the store.
func (s *Store) Close() error {
	if s == nil || s.db == nil {
		return nil
	}
	err := s.db.Close()
	s.db = nil
	return err
}

func (s *Store) initLayout() error {
	return s.db.Update(func(txn *badger.Txn) error {
		v, found, err := readLayout(txn)
		if err != nil {
			return err
		}
		if !found {
			return txn.Set(keyLayout, []byte(LayoutVersion))
		}
		if v != LayoutVersion {
			return fmt.Errorf("archive %s has key layout %q; this build writes %q", s.dir, v, LayoutVersion)
		}
		return nil
	})
}

func (s *Store) checkLayout() error {
	return s.db.View(func(txn *badger.Txn) error {
		v, found, err := readLayout(txn)
		if err != nil || !found { // not found: an empty archive
			return err
		}
		if v != LayoutVersion {
			return fmt.Errorf("archive %s has key layout %q; this build reads %q", s.dir, v, LayoutVersion)
		}
		return nil
	})
}

// readLayout reads the stored key-layout version; found is false in an
// archive that has none yet.
func readLayout(txn *badger.Txn) (v string, found bool, err error) {
	it, err := txn.Get(keyLayout)
	if errors.Is(err, badger.ErrKeyNotFound) {
		return "", false, nil
	}
	if err != nil {
		return "", false, err
	}
	b, err := it.ValueCopy(nil)
	if err != nil {
		return "", false, err
	}
	return string(b), true, nil
}
