package archive

import (
	"bytes"
	"encoding/json"
	"fmt"
	"hash/fnv"
	"sort"

	badger "github.com/dgraph-io/badger/v4"
)

// Kinds of Verify findings.
const (
	// ProblemDamaged: the store's own files fail their checksums.
	ProblemDamaged = "damaged"
	// ProblemLost: a summary, index entry or note names a record whose
	// body is missing or cannot be read.
	ProblemLost = "lost"
	// ProblemContent: a record or note does not parse, is not in
	// canonical form, or does not match its id or input key.
	ProblemContent = "content"
	// ProblemIndex: a record lacks its summary or an index entry, or an
	// entry does not match the record it names.
	ProblemIndex = "index"
	// ProblemSignature: a signature does not match the record's id.
	ProblemSignature = "signature"
	// ProblemUntrusted: a valid signature by a key the archive does not
	// trust (see Store.Trust).
	ProblemUntrusted = "untrusted"
)

// Problem is one finding of Verify. ID names the record or note ("" for
// damage to the store's files).
type Problem struct {
	ID      string `json:"id"`
	Kind    string `json:"kind"`
	Problem string `json:"problem"`
}

// VerifyReport sums up Verify.
type VerifyReport struct {
	Records int `json:"records"`
	Notes   int `json:"notes"`
	// Trusted, Untrusted and Unsigned count the records whose hashes
	// match by the state of their signature (invalid signatures are
	// problems of kind ProblemSignature).
	Trusted   int          `json:"signed_by_trusted_keys"`
	Untrusted int          `json:"signed_by_untrusted_keys"`
	Unsigned  int          `json:"unsigned"`
	TrustList []TrustEntry `json:"trust_list"`
	Problems  []Problem    `json:"problems"`
}

// Verify checks the whole archive and reports every finding:
//
//   - every block of every table file matches its checksum (damage to the
//     files badger keeps);
//   - every record parses strictly, is in canonical form, matches its id
//     and input key, and is stored under its own id;
//   - every record has its listing summary (equal to the one its content
//     gives) and every index entry its content gives;
//   - every summary, index entry and note names a record whose body can be
//     read, and every index entry is one that record's content gives (so a
//     record that listings show but that cannot be read is named as lost);
//   - every signature matches its record's id, and its key is trusted by
//     the archive (its trust list, or the key of the user running verify).
//
// Unsigned records (written before signatures) are counted, not findings.
func (s *Store) Verify() (VerifyReport, error) {
	rep := VerifyReport{Problems: []Problem{}}
	add := func(id, kind, msg string) { rep.Problems = append(rep.Problems, Problem{id, kind, msg}) }
	if err := checkTableBlocks(s.dir); err != nil {
		add("", ProblemDamaged, err.Error())
	}
	trust, err := s.Trust()
	if err != nil {
		return rep, err
	}
	if rep.TrustList, err = s.TrustList(); err != nil {
		return rep, err
	}
	readable := map[string]bool{}
	owned := map[uint64]bool{}
	err = s.db.View(func(txn *badger.Txn) error {
		o := badger.DefaultIteratorOptions
		o.Prefix = []byte(pRecord)
		it := txn.NewIterator(o)
		defer it.Close()
		for it.Rewind(); it.Valid(); it.Next() {
			rep.Records++
			key := string(it.Item().Key()[len(pRecord):])
			raw, err := it.Item().ValueCopy(nil)
			if err != nil {
				add(key, ProblemLost, fmt.Sprintf("the record's body cannot be read: %v", err))
				continue
			}
			r, kind, p := checkStored(txn, key, raw)
			if r != nil {
				readable[key] = true
				for _, k := range recordKeys(r) {
					owned[keyHash(k)] = true
				}
			}
			if p != "" {
				add(key, kind, p)
				if kind != ProblemIndex {
					continue // a signature of content that does not match says nothing
				}
			}
			switch c := trust.Check(r); c.State {
			case SigTrusted:
				rep.Trusted++
			case SigUnsigned:
				rep.Unsigned++
			case SigUntrusted:
				rep.Untrusted++
				add(key, ProblemUntrusted, fmt.Sprintf("signed by key %s, which this archive does not trust (moltrail trust add puts a key on its trust list)", c.Fingerprint))
			default:
				add(key, ProblemSignature, c.Problem)
			}
		}
		return nil
	})
	if err != nil {
		return rep, err
	}
	lost := map[string]int{}
	err = s.db.View(func(txn *badger.Txn) error {
		for _, prefix := range []string{pSummary, pInput, pTime, pIndex} {
			o := badger.DefaultIteratorOptions
			o.PrefetchValues = false
			o.Prefix = []byte(prefix)
			it := txn.NewIterator(o)
			for it.Rewind(); it.Valid(); it.Next() {
				k := it.Item().KeyCopy(nil)
				var id string
				if prefix == pSummary {
					id = string(k[len(pSummary):])
				} else if _, tid, ok := tailID(k); ok {
					id = tid
				} else {
					add("", ProblemIndex, fmt.Sprintf("index entry %q does not name a record", printableKey(k)))
					continue
				}
				switch {
				case !readable[id]:
					lost[id]++
				case prefix != pSummary && !owned[keyHash(k)]:
					add(id, ProblemIndex, fmt.Sprintf("index entry %q does not match the record's content", printableKey(k)))
				}
			}
			it.Close()
		}
		return nil
	})
	if err != nil {
		return rep, err
	}
	ids := make([]string, 0, len(lost))
	for id := range lost {
		ids = append(ids, id)
	}
	sort.Strings(ids)
	for _, id := range ids {
		add(id, ProblemLost, fmt.Sprintf("the record is lost: %d listing and index entr%s name it, but its body is missing or cannot be read (it shows in listings and cannot be shown or exported)", lost[id], plural(lost[id], "y", "ies")))
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
			rid, _, _ := bytes.Cut(k[len(pNote):], []byte("/"))
			raw, err := it.Item().ValueCopy(nil)
			if err != nil {
				add(nid, ProblemLost, fmt.Sprintf("note cannot be read: %v", err))
				continue
			}
			n, err := decodeNote(raw)
			if err == nil {
				err = n.check()
			}
			if err == nil && n.ID != nid {
				err = fmt.Errorf("stored under id %s… but its content has id %s…", short(nid), short(n.ID))
			}
			if err == nil && n.RecordID != string(rid) {
				err = fmt.Errorf("stored with record %s… but its content names record %s…", short(string(rid)), short(n.RecordID))
			}
			if err != nil {
				add(nid, ProblemContent, "note: "+err.Error())
			} else if !readable[string(rid)] && lost[string(rid)] == 0 {
				add(nid, ProblemLost, fmt.Sprintf("note about record %s…, which is not in the archive", short(string(rid))))
			}
		}
		return nil
	})
	return rep, err
}

func plural(n int, one, many string) string {
	if n == 1 {
		return one
	}
	return many
}

// keyHash is a 64-bit hash of an index key, for the set of keys the
// readable records own (8 bytes a key instead of the key).
func keyHash(k []byte) uint64 {
	h := fnv.New64a()
	h.Write(k)
	return h.Sum64()
}

// printableKey shows an index key with its NUL separators as "|".
func printableKey(k []byte) string { return string(bytes.ReplaceAll(k, []byte{0}, []byte{'|'})) }

// checkStored checks one stored record; it returns the decoded record (nil
// if it does not decode) and, when something is wrong, the kind of problem
// and a description.
func checkStored(txn *badger.Txn, key string, raw []byte) (*Record, string, string) {
	r, err := Decode(raw)
	if err != nil {
		return nil, ProblemContent, err.Error()
	}
	if err := r.Check(); err != nil {
		return r, ProblemContent, err.Error()
	}
	if r.ID != key {
		return r, ProblemContent, fmt.Sprintf("stored under id %s… but its content has id %s…", short(key), short(r.ID))
	}
	enc, err := r.Encode()
	if err != nil {
		return r, ProblemContent, err.Error()
	}
	if !bytes.Equal(enc, raw) {
		return r, ProblemContent, "stored bytes are not in canonical form"
	}
	sum, err := json.Marshal(Summarise(r))
	if err != nil {
		return r, ProblemContent, err.Error()
	}
	it, err := txn.Get([]byte(pSummary + key))
	if err != nil {
		return r, ProblemIndex, "listing summary is missing"
	}
	if v, err := it.ValueCopy(nil); err != nil || !bytes.Equal(v, sum) {
		return r, ProblemIndex, "listing summary does not match the record"
	}
	for _, k := range recordKeys(r) {
		if _, err := txn.Get(k); err != nil {
			return r, ProblemIndex, fmt.Sprintf("index entry %q is missing", printableKey(k))
		}
	}
	return r, "", ""
}
