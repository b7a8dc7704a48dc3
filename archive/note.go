package archive

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"strings"
	"time"

	badger "github.com/dgraph-io/badger/v4"
)

// NoteFormat names the canonical layout of Note (same rules as records:
// encoding/json of the struct, id = SHA-256 of the bytes with id empty).
const NoteFormat = "moltrail-note/1"

// Note is a remark about a record, stored beside it; records themselves
// never change.
type Note struct {
	ID       string `json:"id"`
	RecordID string `json:"record_id"`
	TimeUTC  string `json:"time_utc"`
	Text     string `json:"text"`
	Format   string `json:"note_format"`
}

func (n *Note) computeID() string {
	c := *n
	c.ID = ""
	b, _ := json.Marshal(&c)
	s := sha256.Sum256(b)
	return hex.EncodeToString(s[:])
}

func (n *Note) check() error {
	if n.Format != NoteFormat {
		return fmt.Errorf("note_format is %q; this build reads %q", n.Format, NoteFormat)
	}
	if id := n.computeID(); id != n.ID {
		return fmt.Errorf("id %s… does not match the content, which hashes to %s…", short(n.ID), short(id))
	}
	return nil
}

func decodeNote(b []byte) (*Note, error) {
	dec := json.NewDecoder(bytes.NewReader(b))
	dec.DisallowUnknownFields()
	var n Note
	if err := dec.Decode(&n); err != nil {
		return nil, fmt.Errorf("not a moltrail note: %v", err)
	}
	return &n, nil
}

// AddNote stores a note about the record with this full id.
func (s *Store) AddNote(recordID, text string, now time.Time) (*Note, error) {
	if s.readOnly {
		return nil, fmt.Errorf("archive %s is open read-only", s.dir)
	}
	text = strings.TrimSpace(text)
	if text == "" {
		return nil, fmt.Errorf("the note text is empty")
	}
	if err := checkText("the note text", text); err != nil {
		return nil, err
	}
	if len(text) > MaxNoteBytes {
		return nil, fmt.Errorf("the note text is %d bytes long; a note is at most %d bytes", len(text), MaxNoteBytes)
	}
	n := &Note{RecordID: recordID, TimeUTC: now.UTC().Format(time.RFC3339Nano), Text: text, Format: NoteFormat}
	n.ID = n.computeID()
	b, err := json.Marshal(n)
	if err != nil {
		return nil, err
	}
	err = s.db.Update(func(txn *badger.Txn) error {
		if _, err := txn.Get([]byte(pRecord + recordID)); errors.Is(err, badger.ErrKeyNotFound) {
			return fmt.Errorf("no record %s in archive %s", short(recordID), s.dir)
		} else if err != nil {
			return err
		}
		return txn.Set([]byte(pNote+recordID+"/"+tsHex(now)+n.ID), b)
	})
	if isNoSpace(err) {
		return nil, s.writeErr(err)
	}
	if err != nil {
		return nil, err
	}
	return n, nil
}

// Notes returns the notes about a record, oldest first.
func (s *Store) Notes(recordID string) ([]Note, error) {
	out := []Note{}
	err := s.db.View(func(txn *badger.Txn) error {
		o := badger.DefaultIteratorOptions
		o.Prefix = []byte(pNote + recordID + "/")
		it := txn.NewIterator(o)
		defer it.Close()
		for it.Rewind(); it.Valid(); it.Next() {
			v, err := it.Item().ValueCopy(nil)
			if err != nil {
				return err
			}
			n, err := decodeNote(v)
			if err != nil {
				return err
			}
			out = append(out, *n)
		}
		return nil
	})
	return out, err
}

// noteKey is the key a note is stored under (see keys.go).
func noteKey(n *Note) ([]byte, error) {
	t, err := time.Parse(time.RFC3339Nano, n.TimeUTC)
	if err != nil {
		return nil, fmt.Errorf("time_utc %q is not an RFC 3339 time", n.TimeUTC)
	}
	return []byte(pNote + n.RecordID + "/" + tsHex(t) + n.ID), nil
}

// noteEntry is a checked note to store: its key and bytes, and where it
// was read (a file and line, or an archive) for the messages.
type noteEntry struct {
	k, v       []byte
	id, record string
	where      string
	line       int
	note       *Note // as decoded, for notes read from a file
}

// putNotes stores notes for records s holds, in as few transactions as
// fit. A note whose record is absent, or whose key holds other bytes, is
// refused; one already stored is counted as present.
func (s *Store) putNotes(notes []noteEntry) (added, present int, refused []Refusal, err error) {
	refuse := func(nk noteEntry, why string) {
		refused = append(refused, Refusal{Line: nk.line, ID: nk.id, Reason: fmt.Sprintf("%s: note %s… refused: %s", nk.where, short(nk.id), why)})
	}
	for len(notes) > 0 {
		txn := s.db.NewTransaction(true)
		n := 0
		for ; n < len(notes); n++ {
			nk := notes[n]
			if _, err := txn.Get([]byte(pRecord + nk.record)); errors.Is(err, badger.ErrKeyNotFound) {
				refuse(nk, fmt.Sprintf("its record %s… is not in the target archive", short(nk.record)))
				continue
			} else if err != nil {
				txn.Discard()
				return added, present, refused, err
			}
			if item, err := txn.Get(nk.k); err == nil {
				same := false
				item.Value(func(v []byte) error { same = bytes.Equal(v, nk.v); return nil })
				if !same {
					refuse(nk, "the target holds a different note under its key")
				} else {
					present++
				}
				continue
			} else if !errors.Is(err, badger.ErrKeyNotFound) {
				txn.Discard()
				return added, present, refused, err
			}
			if err := txn.Set(nk.k, nk.v); errors.Is(err, badger.ErrTxnTooBig) && n > 0 {
				break
			} else if err != nil {
				txn.Discard()
				return added, present, refused, err
			}
			added++
		}
		if testHoldCommit > 0 {
			time.Sleep(testHoldCommit)
		}
		if err := txn.Commit(); err != nil {
			return added, present, refused, fmt.Errorf("archive %s: write failed: %v", s.dir, err)
		}
		notes = notes[n:]
	}
	return added, present, refused, nil
}
