package archive

import (
	"bytes"
	"encoding/json"
	"fmt"

	badger "github.com/dgraph-io/badger/v4"
)

// Problem is one finding of Verify.
type Problem struct {
	ID      string `json:"id"`
	Problem string `json:"problem"`
}

// VerifyReport sums up Verify.
type VerifyReport struct {
	Records  int       `json:"records"`
	Notes    int       `json:"notes"`
	Problems []Problem `json:"problems"`
}

// Verify re-reads every record and checks that it parses strictly, is in
// canonical form, that its id and input key match its content, that it is
// stored under its own id and that its summary and index entries exist.
// Notes are checked the same way.
func (s *Store) Verify() (VerifyReport, error) {
	rep := VerifyReport{Problems: []Problem{}}
	err := s.db.View(func(txn *badger.Txn) error {
		o := badger.DefaultIteratorOptions
		o.Prefix = []byte(pRecord)
		it := txn.NewIterator(o)
		defer it.Close()
		for it.Rewind(); it.Valid(); it.Next() {
			rep.Records++
			key := string(it.Item().Key()[len(pRecord):])
			raw, err := it.Item().ValueCopy(nil)
			if err != nil {
				rep.Problems = append(rep.Problems, Problem{key, fmt.Sprintf("value cannot be read: %v", err)})
				continue
			}
			if p := checkStored(txn, key, raw); p != "" {
				rep.Problems = append(rep.Problems, Problem{key, p})
			}
		}
		return nil
	})
	if err != nil {
		return rep, err
	}
	err = s.db.View(func(txn *badger.Txn) error {
		o := badger.DefaultIteratorOptions
		o.Prefix = []byte(pNote)
		it := txn.NewIterator(o)
		defer it.Close()
		for it.Rewind(); it.Valid(); it.Next() {
			rep.Notes++
			k := it.Item().Key()
			_, nid, _ := tailID(k)
			raw, err := it.Item().ValueCopy(nil)
			if err != nil {
				rep.Problems = append(rep.Problems, Problem{nid, fmt.Sprintf("note cannot be read: %v", err)})
				continue
			}
			n, err := decodeNote(raw)
			if err == nil {
				err = n.check()
			}
			if err == nil && n.ID != nid {
				err = fmt.Errorf("stored under id %s… but its content has id %s…", short(nid), short(n.ID))
			}
			if err != nil {
				rep.Problems = append(rep.Problems, Problem{nid, "note: " + err.Error()})
			}
		}
		return nil
	})
	return rep, err
}

func checkStored(txn *badger.Txn, key string, raw []byte) string {
	r, err := Decode(raw)
	if err != nil {
		return err.Error()
	}
	if err := r.Check(); err != nil {
		return err.Error()
	}
	if r.ID != key {
		return fmt.Sprintf("stored under id %s… but its content has id %s…", short(key), short(r.ID))
	}
	enc, err := r.Encode()
	if err != nil {
		return err.Error()
	}
	if !bytes.Equal(enc, raw) {
		return "stored bytes are not in canonical form"
	}
	sum, err := json.Marshal(Summarise(r))
	if err != nil {
		return err.Error()
	}
	it, err := txn.Get([]byte(pSummary + key))
	if err != nil {
		return "listing summary is missing"
	}
	if v, err := it.ValueCopy(nil); err != nil || !bytes.Equal(v, sum) {
		return "listing summary does not match the record"
	}
	for _, k := range recordKeys(r) {
		if _, err := txn.Get(k); err != nil {
			return fmt.Sprintf("index entry %q is missing", bytes.ReplaceAll(k, []byte{0}, []byte{'|'}))
		}
	}
	return ""
}
