package archive

import (
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"sort"
	"strconv"
	"strings"
	"time"

	badger "github.com/dgraph-io/badger/v4"
)

// Summary is the short form of a record used by listings.
type Summary struct {
	ID            string   `json:"id"`
	InputKey      string   `json:"input_key"`
	Status        string   `json:"status"`
	Molecule      string   `json:"molecule"`
	Formula       string   `json:"formula"`
	Method        string   `json:"method"`
	Reference     string   `json:"reference"`
	Basis         string   `json:"basis"`
	Angular       string   `json:"angular"`
	Task          string   `json:"task"`
	EnergyHartree float64  `json:"energy_hartree"`
	StartUTC      string   `json:"start_utc"`
	Tags          []string `json:"tags"`
	CodeVersion   string   `json:"code_version"`
	Revision      string   `json:"vcs_revision"`
	// FitSet names the auxiliary set of density-fitted integrals (empty: exact integrals).
	FitSet string `json:"fit_set,omitempty"`
}

// Summarise builds the summary of a record.
func Summarise(r *Record) Summary {
	tags := r.TagList()
	if tags == nil {
		tags = []string{}
	}
	return Summary{ID: r.ID, InputKey: r.InputKey, Status: r.Status, Molecule: r.Input.Molecule.Name, FitSet: r.FitSet(),
		Formula: r.Formula(), Method: r.Input.Method, Reference: r.Input.Reference, Basis: r.Input.Basis.Name,
		Angular: string(r.Input.Basis.Angular), Task: r.Input.Task, EnergyHartree: r.Results.EnergyHartree,
		StartUTC: r.Run.StartUTC, Tags: tags, CodeVersion: r.Code.Version, Revision: r.Code.Revision}
}

// testHoldCommit, when MOLTRAIL_TEST_HOLD_COMMIT is a duration, pauses a
// write after its entries are staged and before the transaction commits,
// so that a crash test can kill the process in the middle of a write. It
// changes no stored byte.
var testHoldCommit = func() time.Duration {
	d, err := time.ParseDuration(os.Getenv("MOLTRAIL_TEST_HOLD_COMMIT"))
	if err != nil {
		return 0
	}
	return d
}()

// Put stores a sealed record. It returns false (and writes nothing) when a
// record with this id is already stored: ids are content hashes, so that
// record is byte-identical.
func (s *Store) Put(r *Record) (bool, error) {
	n, err := s.PutMany([]*Record{r})
	return n == 1, err
}

// PutMany stores sealed records, skipping ids already present, and returns
// how many were new. Each record is written whole with its index entries
// in one transaction (several records share a transaction).
func (s *Store) PutMany(recs []*Record) (int, error) { return s.PutManyProgress(recs, nil) }

// PutManyProgress is PutMany calling progress(done, total) after each
// committed transaction. A record whose id is stored with other bytes is
// not written; the error then names it (see ConflictError).
func (s *Store) PutManyProgress(recs []*Record, progress func(done, total int)) (int, error) {
	n, conflicts, err := s.putMany(recs, progress)
	if err == nil && len(conflicts) > 0 {
		err = &ConflictError{Dir: s.dir, IDs: conflicts}
	}
	return n, err
}

// ConflictError names records whose id the archive already holds with
// different bytes. Ids are content hashes, so one of the two copies is
// damaged or forged; neither is changed.
type ConflictError struct {
	Dir string
	IDs []string
}

func (e *ConflictError) Error() string {
	var ids []string
	for _, id := range e.IDs {
		ids = append(ids, short(id)+"…")
	}
	return fmt.Sprintf("archive %s already holds a different record under the id %s; it was not overwritten", e.Dir, strings.Join(ids, ", "))
}

// conflictReason is the refusal text for a record whose id is stored with
// other bytes.
const conflictReason = "the archive already holds a different record under this id (one of the two copies is damaged or forged); it was not overwritten"

// putMany stores records like PutMany and returns, besides how many were
// new, the ids already stored with different bytes (left as they are).
func (s *Store) putMany(recs []*Record, progress func(done, total int)) (int, []string, error) {
	if s.readOnly {
		return 0, nil, fmt.Errorf("archive %s is open read-only", s.dir)
	}
	type staged struct {
		id      string
		entries [][2][]byte
	}
	var all []staged
	seen := map[string]bool{}
	for _, r := range recs {
		if err := r.Check(); err != nil {
			return 0, nil, fmt.Errorf("record %s is not sealed: %v", short(r.ID), err)
		}
		if seen[r.ID] {
			continue
		}
		seen[r.ID] = true
		val, err := r.Encode()
		if err != nil {
			return 0, nil, err
		}
		sum, err := json.Marshal(Summarise(r))
		if err != nil {
			return 0, nil, err
		}
		st := staged{id: r.ID}
		st.entries = append(st.entries, [2][]byte{[]byte(pRecord + r.ID), val}, [2][]byte{[]byte(pSummary + r.ID), sum})
		for _, k := range recordKeys(r) {
			st.entries = append(st.entries, [2][]byte{k, nil})
		}
		all = append(all, st)
	}
	added := 0
	var conflicts []string
	limit := len(all)
	for len(all) > 0 {
		if limit > len(all) {
			limit = len(all)
		}
		txn := s.db.NewTransaction(true)
		n, fresh := 0, 0
		tooBig := false
		for n < limit {
			st := all[n]
			if item, err := txn.Get([]byte(pRecord + st.id)); err == nil {
				same := false
				if err := item.Value(func(v []byte) error { same = sameRecord(v, st.entries[0][1]); return nil }); err != nil {
					txn.Discard()
					return added, conflicts, err
				}
				if !same {
					conflicts = append(conflicts, st.id)
				}
				n++
				continue
			} else if !errors.Is(err, badger.ErrKeyNotFound) {
				txn.Discard()
				return added, conflicts, err
			}
			var err error
			for _, e := range st.entries {
				if err = txn.Set(e[0], e[1]); err != nil {
					break
				}
			}
			if errors.Is(err, badger.ErrTxnTooBig) {
				tooBig = true
				break
			}
			if err != nil {
				txn.Discard()
				return added, conflicts, err
			}
			n++
			fresh++
		}
		if tooBig {
			// Part of record n is staged: drop the transaction and redo it
			// with only the records that fit whole.
			txn.Discard()
			if n == 0 {
				return added, conflicts, fmt.Errorf("record %s is too large for one archive transaction", short(all[0].id))
			}
			limit = n
			continue
		}
		if testHoldCommit > 0 {
			time.Sleep(testHoldCommit)
		}
		if err := txn.Commit(); err != nil {
			return added, conflicts, s.writeErr(err)
		}
		added += fresh
		all = all[n:]
		if progress != nil {
			progress(len(seen)-len(all), len(seen))
		}
	}
	return added, conflicts, nil
}

// Get returns the record with this full id and its stored bytes.
func (s *Store) Get(id string) (*Record, []byte, error) {
	var raw []byte
	err := s.db.View(func(txn *badger.Txn) error {
		it, err := txn.Get([]byte(pRecord + id))
		if err != nil {
			return err
		}
		raw, err = it.ValueCopy(nil)
		return err
	})
	if errors.Is(err, badger.ErrKeyNotFound) {
		if s.listedOnly(id) {
			return nil, nil, s.damagedRecord(id)
		}
		return nil, nil, fmt.Errorf("no record %s in archive %s", short(id), s.dir)
	}
	if err != nil {
		return nil, nil, fmt.Errorf("record %s: %v", short(id), err)
	}
	r, err := Decode(raw)
	if err != nil {
		return nil, raw, fmt.Errorf("record %s: %v", short(id), err)
	}
	return r, raw, nil
}

// Resolve turns a unique id prefix (at least 4 hex digits) into the full id.
func (s *Store) Resolve(prefix string) (string, error) {
	p := strings.ToLower(strings.TrimSpace(prefix))
	if len(p) < 4 || len(p) > idLen || strings.Trim(p, "0123456789abcdef") != "" {
		return "", fmt.Errorf("record id %q must be 4 to 64 hex digits", prefix)
	}
	var found []string
	err := s.db.View(func(txn *badger.Txn) error {
		o := badger.DefaultIteratorOptions
		o.PrefetchValues = false
		o.Prefix = []byte(pRecord + p)
		it := txn.NewIterator(o)
		defer it.Close()
		for it.Rewind(); it.Valid() && len(found) < 5; it.Next() {
			found = append(found, string(it.Item().Key()[len(pRecord):]))
		}
		return nil
	})
	if err != nil {
		return "", err
	}
	switch len(found) {
	case 0:
		if s.listedOnly(p) {
			return "", s.damagedRecord(p)
		}
		return "", fmt.Errorf("no record id starts with %q in archive %s", p, s.dir)
	case 1:
		return found[0], nil
	}
	for i := range found {
		found[i] = short(found[i])
	}
	return "", fmt.Errorf("record id prefix %q is ambiguous: it matches %s…; give more digits", p, strings.Join(found, "…, "))
}

// Filter selects records for List and Export. Empty fields match all.
type Filter struct {
	Molecule string
	Formula  string
	Method   string
	Basis    string
	Status   string
	Tags     []string // "key=value", all must match
	Since    time.Time
	// Until: only records started before it (zero: no bound).
	Until time.Time
	// Task: "energy" or "optimize" (no index; read from the summaries).
	Task     string
	InputKey string
}

func (f Filter) indexTerms() [][2]string {
	var t [][2]string
	add := func(field, v string) {
		if v != "" {
			t = append(t, [2]string{field, v})
		}
	}
	add(FieldMolecule, f.Molecule)
	add(FieldFormula, f.Formula)
	add(FieldMethod, f.Method)
	add(FieldBasis, f.Basis)
	add(FieldStatus, f.Status)
	for _, tg := range f.Tags {
		add(FieldTag, tg)
	}
	return t
}

// scanIDs collects <ts><id> tails under a prefix, starting at ts ≥ since.
func scanIDs(txn *badger.Txn, prefix []byte, since string) map[string]string {
	out := map[string]string{}
	o := badger.DefaultIteratorOptions
	o.PrefetchValues = false
	o.Prefix = prefix
	it := txn.NewIterator(o)
	defer it.Close()
	start := append(append([]byte{}, prefix...), since...)
	for it.Seek(start); it.Valid(); it.Next() {
		ts, id, ok := tailID(it.Item().Key())
		if ok {
			out[id] = ts
		}
	}
	return out
}

// List returns the summaries of the records matching f, oldest first. Each
// filter term is a prefix scan of its index (keys only); the sets are
// intersected and only the matches' summaries are read.
func (s *Store) List(f Filter) ([]Summary, error) {
	var out []Summary
	err := s.db.View(func(txn *badger.Txn) error {
		ids, err := s.matchIDs(txn, f)
		if err != nil {
			return err
		}
		for _, id := range ids {
			it, err := txn.Get([]byte(pSummary + id))
			if err != nil {
				return s.damagedRecord(id)
			}
			var sm Summary
			if err := it.Value(func(v []byte) error { return json.Unmarshal(v, &sm) }); err != nil {
				return s.damagedRecord(id)
			}
			out = append(out, sm)
		}
		return nil
	})
	return out, err
}

func (s *Store) matchIDs(txn *badger.Txn, f Filter) ([]string, error) {
	since := ""
	if !f.Since.IsZero() {
		since = tsHex(f.Since)
	}
	var sets []map[string]string
	if f.InputKey != "" {
		sets = append(sets, scanIDs(txn, []byte(pInput+strings.ToLower(f.InputKey)+"/"), since))
	}
	for _, t := range f.indexTerms() {
		sets = append(sets, scanIDs(txn, indexPrefix(t[0], t[1]), since))
	}
	if len(sets) == 0 {
		sets = append(sets, scanIDs(txn, []byte(pTime), since))
	}
	sort.Slice(sets, func(i, j int) bool { return len(sets[i]) < len(sets[j]) })
	until := ""
	if !f.Until.IsZero() {
		until = tsHex(f.Until)
	}
	type tid struct{ ts, id string }
	var hits []tid
	for id, ts := range sets[0] {
		ok := until == "" || ts < until
		for _, o := range sets[1:] {
			if _, in := o[id]; !in {
				ok = false
				break
			}
		}
		if ok {
			hits = append(hits, tid{ts, id})
		}
	}
	sort.Slice(hits, func(i, j int) bool {
		if hits[i].ts != hits[j].ts {
			return hits[i].ts < hits[j].ts
		}
		return hits[i].id < hits[j].id
	})
	ids := make([]string, 0, len(hits))
	for _, h := range hits {
		if f.Task != "" {
			// No index: the task is read from the summary.
			it, err := txn.Get([]byte(pSummary + h.id))
			if err != nil {
				return nil, fmt.Errorf("record %s: summary missing: %v", short(h.id), err)
			}
			var sm Summary
			if err := it.Value(func(v []byte) error { return json.Unmarshal(v, &sm) }); err != nil {
				return nil, fmt.Errorf("record %s: summary unreadable: %v", short(h.id), err)
			}
			if sm.Task != f.Task {
				continue
			}
		}
		ids = append(ids, h.id)
	}
	return ids, nil
}

// ByInputKey returns the records stored for one input key, oldest first.
func (s *Store) ByInputKey(key string) ([]Summary, error) {
	return s.List(Filter{InputKey: key})
}

// Count returns the number of records.
func (s *Store) Count() (int, error) {
	n := 0
	err := s.eachID(func(string) { n++ })
	return n, err
}

// eachID calls f with the id of every stored record, in id order.
func (s *Store) eachID(f func(id string)) error {
	return s.db.View(func(txn *badger.Txn) error {
		o := badger.DefaultIteratorOptions
		o.PrefetchValues = false
		o.Prefix = []byte(pRecord)
		it := txn.NewIterator(o)
		defer it.Close()
		for it.Rewind(); it.Valid(); it.Next() {
			f(string(it.Item().Key()[len(pRecord):]))
		}
		return nil
	})
}

// ParseSince reads a --since value: a date (2006-01-02), an RFC 3339 time,
// or a duration before now ("36h", "7d").
func ParseSince(v string, now time.Time) (time.Time, error) { return ParseTimeFlag("since", v, now) }

// ParseTimeFlag reads the value of a time flag (--since, --until): a date
// (2006-01-02, midnight UTC), an RFC 3339 time, or a duration before now
// ("36h", "7d"). The error names the flag.
func ParseTimeFlag(flag, v string, now time.Time) (time.Time, error) {
	t := strings.TrimSpace(v)
	if d, err := time.Parse("2006-01-02", t); err == nil {
		return d, nil
	}
	if d, err := time.Parse(time.RFC3339Nano, t); err == nil {
		return d, nil
	}
	if strings.HasSuffix(t, "d") {
		if n, err := strconv.Atoi(strings.TrimSuffix(t, "d")); err == nil && n >= 0 {
			return now.Add(-time.Duration(n) * 24 * time.Hour), nil
		}
	}
	if d, err := time.ParseDuration(t); err == nil && d >= 0 {
		return now.Add(-d), nil
	}
	return time.Time{}, fmt.Errorf("--%s %q is not a date (2006-01-02), an RFC 3339 time or a duration back from now (36h, 7d)", flag, v)
}

// listedOnly reports whether a listing summary exists for an id (or id
// prefix) whose record body is not found: a sign of a damaged archive.
func (s *Store) listedOnly(prefix string) bool {
	found := false
	s.db.View(func(txn *badger.Txn) error {
		o := badger.DefaultIteratorOptions
		o.PrefetchValues = false
		o.Prefix = []byte(pSummary + prefix)
		it := txn.NewIterator(o)
		defer it.Close()
		it.Rewind()
		found = it.Valid()
		return nil
	})
	return found
}

// damagedRecord is the error for a record that listings name but whose
// body cannot be read.
func (s *Store) damagedRecord(id string) error {
	return &sentinelError{ErrDamaged, fmt.Sprintf("archive %s is damaged: record %s… is listed but its body cannot be read; moltrail verify names everything that is lost", s.dir, short(id))}
}
