package archive

import (
	"bytes"
	"fmt"
	"os"
	"path/filepath"
	"runtime"
	"sort"
	"sync"
	"time"

	badger "github.com/dgraph-io/badger/v4"
)

// MergeSource sums up what a merge took from one source archive.
type MergeSource struct {
	Dir      string `json:"archive"`
	Records  int    `json:"records_read"`
	Added    int    `json:"added"`
	Present  int    `json:"already_present"`
	Refused  int    `json:"refused"`
	Notes    int    `json:"notes_read"`
	NotesNew int    `json:"notes_added"`
	// NotesPresent counts notes the target held already.
	NotesPresent int `json:"notes_already_present"`
}

// MergeReport sums up a merge.
type MergeReport struct {
	Target       string        `json:"target"`
	Sources      []MergeSource `json:"sources"`
	Records      int           `json:"records_read"`
	Added        int           `json:"added"`
	Present      int           `json:"already_present"`
	Refused      []Refusal     `json:"refused"`
	NotesAdded   int           `json:"notes_added"`
	NotesPresent int           `json:"notes_already_present"`
}

// MergeOptions control Merge.
type MergeOptions struct {
	// Wait bounds waiting for a source archive held by another process.
	Wait time.Duration
	// Progress (may be nil) is called after each committed transaction
	// with the source and how many of its records are done.
	Progress func(source string, done, total int)
	// TrustedOnly refuses records that are unsigned or signed by a key
	// the target does not trust (see ImportPolicy).
	TrustedOnly bool
}

// mergeBatch is how many records a merge reads, checks and writes at a
// time (the write itself is split into transactions by size).
const mergeBatch = 4000

// MergeSources expands merge arguments: an archive directory stands for
// itself; a directory that is not an archive but holds archives (a study's
// shard directory) stands for those, in name order. Duplicates are dropped.
func MergeSources(args []string) ([]string, error) {
	var out []string
	seen := map[string]bool{}
	add := func(d string) {
		abs, err := filepath.Abs(d)
		if err != nil {
			abs = d
		}
		if !seen[abs] {
			seen[abs] = true
			out = append(out, d)
		}
	}
	for _, a := range args {
		fi, err := os.Stat(a)
		if err != nil {
			return nil, fmt.Errorf("merge source %s: %v", a, pathErr(err))
		}
		if !fi.IsDir() {
			return nil, &sentinelError{ErrNotArchive, fmt.Sprintf("merge source %s is a file, not an archive directory", a)}
		}
		if isArchiveDir(a) {
			add(a)
			continue
		}
		ents, err := os.ReadDir(a)
		if err != nil {
			return nil, fmt.Errorf("merge source %s: %v", a, pathErr(err))
		}
		var subs []string
		for _, e := range ents {
			if e.IsDir() && isArchiveDir(filepath.Join(a, e.Name())) {
				subs = append(subs, filepath.Join(a, e.Name()))
			}
		}
		if len(subs) == 0 {
			return nil, &sentinelError{ErrNoArchive, fmt.Sprintf("merge source %s is neither an archive nor a directory of archives", a)}
		}
		sort.Strings(subs)
		for _, s := range subs {
			add(s)
		}
	}
	return out, nil
}

func isArchiveDir(d string) bool {
	_, err := os.Stat(filepath.Join(d, "MANIFEST"))
	return err == nil
}

// Merge copies into s every record and note of the source archives that
// s lacks. Each record goes through the same checks as Import (schema,
// strict decoding, then Vet: id and input key against the content, the
// signature, the job as run would check it, lineage targets in s or in a
// source; see ImportPolicy, with Partial set); a record whose
// id s already holds with the same bytes counts as present, with other
// bytes it is refused and named, and s keeps its own. Records are never
// overwritten, so merging again adds nothing. Lineage travels inside the
// records; notes are copied after their records, each checked against its
// own id, and only for records s holds.
//
// Records are written in dependency-friendly order (oldest first) in
// batches of several records per transaction: a merge stopped at any
// point, even by SIGKILL, leaves s holding whole records only, and the
// same merge run again completes it.
func (s *Store) Merge(sources []string, o MergeOptions) (MergeReport, error) {
	rep := MergeReport{Target: s.dir, Sources: []MergeSource{}, Refused: []Refusal{}}
	if s.readOnly {
		return rep, fmt.Errorf("archive %s is open read-only", s.dir)
	}
	for _, src := range sources {
		if same, _ := sameDir(src, s.dir); same {
			return rep, fmt.Errorf("merge source %s is the target archive itself", src)
		}
	}
	// Lineage may point at a record of another source of the same merge.
	incoming := map[string]bool{}
	for _, src := range sources {
		st, err := Open(src, OpenOptions{ReadOnly: true, Wait: o.Wait})
		if err != nil {
			return rep, fmt.Errorf("merge source: %w", err)
		}
		st.eachID(func(id string) { incoming[id] = true })
		st.Close()
	}
	for _, src := range sources {
		ms, refused, err := s.mergeOne(src, o, incoming)
		rep.Sources = append(rep.Sources, ms)
		rep.Records += ms.Records
		rep.Added += ms.Added
		rep.Present += ms.Present
		rep.NotesAdded += ms.NotesNew
		rep.NotesPresent += ms.NotesPresent
		rep.Refused = append(rep.Refused, refused...)
		if err != nil {
			return rep, err
		}
	}
	return rep, nil
}

func sameDir(a, b string) (bool, error) {
	fa, err := os.Stat(a)
	if err != nil {
		return false, err
	}
	fb, err := os.Stat(b)
	if err != nil {
		return false, err
	}
	return os.SameFile(fa, fb), nil
}

func (s *Store) mergeOne(dir string, o MergeOptions, incoming map[string]bool) (MergeSource, []Refusal, error) {
	ms := MergeSource{Dir: dir}
	var refused []Refusal
	src, err := Open(dir, OpenOptions{ReadOnly: true, Wait: o.Wait})
	if err != nil {
		return ms, nil, fmt.Errorf("merge source: %w", err)
	}
	defer src.Close()
	var ids []string
	if err := src.db.View(func(txn *badger.Txn) error {
		var err error
		ids, err = src.matchIDs(txn, Filter{})
		return err
	}); err != nil {
		return ms, nil, fmt.Errorf("merge source %s: %v", dir, err)
	}
	// Records that no index lists (an archive damaged in its indexes) are
	// merged too, after the listed ones.
	ids = append(ids, src.unlistedIDs(ids)...)
	ms.Records = len(ids)
	for start := 0; start < len(ids); start += mergeBatch {
		end := min(start+mergeBatch, len(ids))
		raws := make([][]byte, end-start)
		err := src.db.View(func(txn *badger.Txn) error {
			for i := start; i < end; i++ {
				item, err := txn.Get([]byte(pRecord + ids[i]))
				if err == nil {
					raws[i-start], err = item.ValueCopy(nil)
				}
				if err == nil && raws[i-start] == nil {
					raws[i-start] = []byte{} // refused below: not a record
				}
				if err != nil {
					refused = append(refused, Refusal{Line: i + 1, ID: ids[i], Reason: fmt.Sprintf("%s: record %s… cannot be read: %v", dir, short(ids[i]), err)})
				}
			}
			return nil
		})
		if err != nil {
			return ms, refused, fmt.Errorf("merge source %s: %v", dir, err)
		}
		decoded, errs := decodeStored(raws, ids[start:end])
		var recs []*Record
		var pos []int
		for j, rec := range decoded {
			i := start + j
			switch {
			case raws[j] == nil: // unreadable, refused above
			case errs[j] != nil:
				refused = append(refused, Refusal{Line: i + 1, ID: ids[i], Reason: fmt.Sprintf("%s:%d: record %s… refused: %v", dir, i+1, short(ids[i]), errs[j])})
			default:
				recs = append(recs, rec)
				pos = append(pos, i+1)
			}
		}
		before := start
		b := Batch{Source: dir, Records: recs, Lines: pos, Elsewhere: func(id string) bool { return incoming[id] }}
		ir, err := s.ImportRecords(b, ImportPolicy{Partial: true, TrustedOnly: o.TrustedOnly}, func(done, total int) {
			if o.Progress != nil {
				o.Progress(dir, before+done, len(ids))
			}
		})
		ms.Added += ir.Imported
		ms.Present += ir.Skipped
		refused = append(refused, ir.Refused...)
		if err != nil {
			ms.Refused = len(refused)
			return ms, refused, err
		}
	}
	nr, err := s.mergeNotes(src, &ms)
	refused = append(refused, nr...)
	ms.Refused = len(refused)
	return ms, refused, err
}

// decodeStored schema-checks and decodes stored record bytes (nil entries
// are skipped), each against the id it is stored under, on all cores; the
// results keep the order of the input.
func decodeStored(raws [][]byte, ids []string) ([]*Record, []error) {
	recs := make([]*Record, len(raws))
	errs := make([]error, len(raws))
	workers := min(runtime.GOMAXPROCS(0), max(1, len(raws)/64))
	var wg sync.WaitGroup
	for w := 0; w < workers; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for j := w; j < len(raws); j += workers {
				if raws[j] == nil {
					continue
				}
				err := ValidateRecordJSON(raws[j])
				var rec *Record
				if err == nil {
					rec, err = Decode(raws[j])
				}
				if err == nil && rec.ID != ids[j] {
					err = fmt.Errorf("it is stored under the id %s… but names itself %s…", short(ids[j]), short(rec.ID))
				}
				recs[j], errs[j] = rec, err
			}
		}()
	}
	wg.Wait()
	return recs, errs
}

// unlistedIDs returns the ids of records stored under r/ that listed
// (the time index) does not contain.
func (s *Store) unlistedIDs(listed []string) []string {
	in := make(map[string]bool, len(listed))
	for _, id := range listed {
		in[id] = true
	}
	var out []string
	s.eachID(func(id string) {
		if !in[id] {
			out = append(out, id)
		}
	})
	return out
}

// mergeNotes copies the source's notes that s lacks, for records s holds.
// A note already stored under its key with other bytes is refused.
func (s *Store) mergeNotes(src *Store, ms *MergeSource) ([]Refusal, error) {
	var notes []noteEntry
	var refused []Refusal
	err := src.db.View(func(txn *badger.Txn) error {
		o := badger.DefaultIteratorOptions
		o.Prefix = []byte(pNote)
		it := txn.NewIterator(o)
		defer it.Close()
		for it.Rewind(); it.Valid(); it.Next() {
			k := it.Item().KeyCopy(nil)
			v, err := it.Item().ValueCopy(nil)
			ms.Notes++
			rid, _, _ := bytes.Cut(k[len(pNote):], []byte("/"))
			_, nid, _ := tailID(k)
			var n *Note
			if err == nil {
				n, err = decodeNote(v)
			}
			if err == nil {
				err = n.check()
			}
			if err == nil && (n.ID != nid || n.RecordID != string(rid)) {
				err = fmt.Errorf("it is stored under another record or id than its content names")
			}
			if err != nil {
				refused = append(refused, Refusal{ID: nid, Reason: fmt.Sprintf("%s: note %s… refused: %v", src.dir, short(nid), err)})
				continue
			}
			notes = append(notes, noteEntry{k: k, v: v, id: nid, record: string(rid), where: src.dir})
		}
		return nil
	})
	if err != nil {
		return refused, fmt.Errorf("merge source %s: notes: %v", src.dir, err)
	}
	added, present, nr, err := s.putNotes(notes)
	ms.NotesNew += added
	ms.NotesPresent += present
	return append(refused, nr...), err
}
