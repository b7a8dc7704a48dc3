package archive

import (
	"encoding/json"
	"errors"
	"fmt"
	"sort"
	"strings"
	"time"

	badger "github.com/dgraph-io/badger/v4"
)

// TrustList returns the archive's trust list, by fingerprint.
func (s *Store) TrustList() ([]TrustEntry, error) {
	out := []TrustEntry{}
	err := s.db.View(func(txn *badger.Txn) error {
		o := badger.DefaultIteratorOptions
		o.Prefix = []byte(pTrust)
		it := txn.NewIterator(o)
		defer it.Close()
		for it.Rewind(); it.Valid(); it.Next() {
			var e TrustEntry
			if err := it.Item().Value(func(v []byte) error { return json.Unmarshal(v, &e) }); err != nil {
				return fmt.Errorf("archive %s: trust list entry %s is unreadable: %v", s.dir, it.Item().Key()[len(pTrust):], err)
			}
			out = append(out, e)
		}
		return nil
	})
	sort.Slice(out, func(i, j int) bool { return out[i].Fingerprint < out[j].Fingerprint })
	return out, err
}

// Trust returns the set of keys this archive accepts for the user running
// this process: the trust list and the user's own key. It is read once
// per open store.
func (s *Store) Trust() (*TrustSet, error) {
	s.trustOnce.Do(func() {
		var list []TrustEntry
		list, s.trustErr = s.TrustList()
		if s.trustErr != nil {
			return
		}
		own, err := ExistingUserKey()
		if err != nil {
			s.trustErr = err
			return
		}
		s.trust = NewTrustSet(list, own)
	})
	return s.trust, s.trustErr
}

// AddTrust puts a public key (text form) on the archive's trust list with
// a label saying whose it is. Adding a key already there changes its label.
func (s *Store) AddTrust(publicKey, label string, now time.Time) (TrustEntry, error) {
	if s.readOnly {
		return TrustEntry{}, fmt.Errorf("archive %s is open read-only", s.dir)
	}
	pub, err := ParsePublicKey(publicKey)
	if err != nil {
		return TrustEntry{}, err
	}
	label = strings.TrimSpace(label)
	if err := checkText("label", label); err != nil {
		return TrustEntry{}, err
	}
	e := TrustEntry{PublicKey: FormatPublicKey(pub), Fingerprint: Fingerprint(pub), Label: label, AddedUTC: now.UTC().Format(time.RFC3339)}
	b, err := json.Marshal(e)
	if err != nil {
		return e, err
	}
	err = s.db.Update(func(txn *badger.Txn) error { return txn.Set([]byte(pTrust+e.Fingerprint), b) })
	if err != nil {
		return e, s.writeErr(err)
	}
	return e, nil
}

// RemoveTrust takes a key off the trust list: by fingerprint (or a unique
// prefix of at least 8 hex digits) or by its text form. Records it signed
// stay in the archive and are reported as signed by an untrusted key.
func (s *Store) RemoveTrust(which string) (TrustEntry, error) {
	if s.readOnly {
		return TrustEntry{}, fmt.Errorf("archive %s is open read-only", s.dir)
	}
	list, err := s.TrustList()
	if err != nil {
		return TrustEntry{}, err
	}
	which = strings.TrimSpace(which)
	fp := strings.ToLower(which)
	if pub, err := ParsePublicKey(which); err == nil {
		fp = Fingerprint(pub)
	} else if strings.HasPrefix(which, publicKeyPrefix) {
		return TrustEntry{}, err
	} else if len(fp) < 8 || strings.Trim(fp, "0123456789abcdef") != "" {
		return TrustEntry{}, fmt.Errorf("%q is neither a key fingerprint (at least 8 hex digits) nor a public key", which)
	}
	var hit []TrustEntry
	for _, e := range list {
		if strings.HasPrefix(e.Fingerprint, fp) {
			hit = append(hit, e)
		}
	}
	switch len(hit) {
	case 0:
		return TrustEntry{}, fmt.Errorf("no key %s is on the trust list of archive %s", which, s.dir)
	case 1:
	default:
		return TrustEntry{}, fmt.Errorf("%q matches %d keys on the trust list; give more digits", which, len(hit))
	}
	err = s.db.Update(func(txn *badger.Txn) error {
		err := txn.Delete([]byte(pTrust + hit[0].Fingerprint))
		if errors.Is(err, badger.ErrKeyNotFound) {
			return nil
		}
		return err
	})
	if err != nil {
		return hit[0], s.writeErr(err)
	}
	return hit[0], nil
}
