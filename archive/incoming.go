package archive

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"time"

	badger "github.com/dgraph-io/badger/v4"

	"moltrail/engine"
)

// ImportPolicy says which records arriving from outside (import, merge)
// an archive takes.
type ImportPolicy struct {
	// TrustedOnly refuses records that are unsigned or signed by a key
	// the archive does not trust. Records with a signature that does not
	// match are refused whatever the policy.
	TrustedOnly bool
	// Partial stores the acceptable records when others are refused.
	// Without it a batch is all or nothing: one refused record and
	// nothing is stored.
	Partial bool
	// Now is the time start dates are checked against (zero: the clock).
	Now time.Time
}

// ErrRefused says that records of a batch were refused and, the batch
// being all or nothing, none was stored.
var ErrRefused = errors.New("records were refused")

// Batch is a set of records arriving together, with where they came from.
type Batch struct {
	// Source names the file or archive the records come from.
	Source string
	// Records, and for each its line in Source (nil: records are named
	// by their position, "record 3").
	Records []*Record
	Lines   []int
	// Elsewhere (may be nil) says whether a record arrives with this
	// batch from another source (a merge of several archives), so that
	// lineage may point at it.
	Elsewhere func(id string) bool
	// notes arriving with the records (an export file's; see Exchange).
	notes []noteEntry
}

// where names record i of the batch in messages.
func (b Batch) where(i int) string {
	if b.Lines != nil {
		return fmt.Sprintf("%s:%d", b.Source, b.Lines[i])
	}
	return fmt.Sprintf("%s record %d", b.Source, i+1)
}

func (b Batch) line(i int) int {
	if b.Lines != nil {
		return b.Lines[i]
	}
	return i + 1
}

// VetRecord checks one record arriving from outside the archive. It
// refuses, with the reason:
//   - a record whose id or input key does not match its content;
//   - a signature that does not match, and, under TrustedOnly, a record
//     that is unsigned or signed by a key trust does not hold;
//   - a job that run would not compute: unknown method, basis not in this
//     build's library or not matching its pinned content, elements the
//     basis lacks, impossible charge or multiplicity, settings out of
//     range (engine.Job.CheckComputable);
//   - tags and names that are not UTF-8 text or are too long;
//   - a status that differs from the results' status;
//   - a start time that does not parse or lies in the future;
//   - a lineage link of an unknown relation, or to a record that known
//     does not hold (known: in the batch or in the archive).
func VetRecord(r *Record, trust *TrustSet, p ImportPolicy, known func(id string) bool) error {
	if err := r.Check(); err != nil {
		return err
	}
	switch c := trust.Check(r); c.State {
	case SigInvalid:
		return fmt.Errorf("signature: %s", c.Problem)
	case SigUnsigned:
		if p.TrustedOnly {
			return fmt.Errorf("it is unsigned, and only records signed by trusted keys are accepted")
		}
	case SigUntrusted:
		if p.TrustedOnly {
			return fmt.Errorf("it is signed by key %s, which this archive does not trust", c.Fingerprint)
		}
	}
	if err := vetInput(r); err != nil {
		return err
	}
	if err := CheckTags(r.Tags); err != nil {
		return err
	}
	if r.Status != r.Results.Status {
		return fmt.Errorf("status %q differs from results.status %q", r.Status, r.Results.Status)
	}
	switch r.Status {
	case engine.StatusConverged, engine.StatusNotConverged, engine.StatusFailed:
	default:
		return fmt.Errorf("status %q is not converged, not_converged or failed", r.Status)
	}
	now := p.Now
	if now.IsZero() {
		now = time.Now()
	}
	for _, f := range []struct{ name, v string }{{"run.start_utc", r.Run.StartUTC}, {"run.end_utc", r.Run.EndUTC}} {
		t, err := time.Parse(time.RFC3339Nano, f.v)
		if err != nil {
			return fmt.Errorf("%s %q is not an RFC 3339 time", f.name, f.v)
		}
		if t.After(now.Add(FutureSlack)) {
			return fmt.Errorf("%s %s lies in the future (this machine's clock says %s)", f.name, f.v, now.UTC().Format(time.RFC3339))
		}
	}
	for _, l := range r.Lineage {
		switch l.Relation {
		case GeometryFrom, Reproduces, Recomputes, DerivedFrom:
		default:
			return fmt.Errorf("lineage relation %q is not known", l.Relation)
		}
		if !known(l.ID) {
			return fmt.Errorf("its lineage (%s) names record %s…, which is neither in the archive nor accepted from the same batch", l.Relation, short(l.ID))
		}
	}
	return nil
}

// vetInput checks what a record was computed from: a calculation's job as
// run would; for a derived record, its recipe and molecule (its job only
// labels the combination and is never computed).
func vetInput(r *Record) error {
	if r.Derivation == nil {
		if err := r.Input.CheckComputable(); err != nil {
			return fmt.Errorf("its input would not run: %v", err)
		}
		return nil
	}
	if _, ok := Recipes[r.Derivation.Recipe]; !ok {
		return fmt.Errorf("derivation recipe %q is not known (known: %s)", r.Derivation.Recipe, recipeNames())
	}
	if err := checkText("molecule name", r.Input.Molecule.Name); err != nil {
		return err
	}
	m, err := r.Input.MoleculeOf()
	if err == nil {
		err = m.Check()
	}
	if err != nil {
		return fmt.Errorf("its molecule: %v", err)
	}
	return nil
}

// sameRecord reports whether two stored forms are the same record: the
// same bytes, or the same content with and without a signature block
// (a copy that lost or never had its signature is the same record; the
// stored one is kept).
func sameRecord(a, b []byte) bool {
	if bytes.Equal(a, b) {
		return true
	}
	ra, err1 := Decode(a)
	rb, err2 := Decode(b)
	if err1 != nil || err2 != nil {
		return false
	}
	ca, err1 := ra.Canonical()
	cb, err2 := rb.Canonical()
	return err1 == nil && err2 == nil && ra.ID == rb.ID && bytes.Equal(ca, cb)
}

// conflict reports whether the archive holds a record under r's id with
// other content.
func (s *Store) conflict(r *Record) (bool, error) {
	enc, err := r.Encode()
	if err != nil {
		return false, err
	}
	other := false
	err = s.db.View(func(txn *badger.Txn) error {
		item, err := txn.Get([]byte(pRecord + r.ID))
		if errors.Is(err, badger.ErrKeyNotFound) {
			return nil
		}
		if err != nil {
			return err
		}
		return item.Value(func(v []byte) error { other = !sameRecord(v, enc); return nil })
	})
	return other, err
}

// Has reports whether the archive holds a record with this full id.
func (s *Store) Has(id string) (bool, error) {
	found := false
	err := s.db.View(func(txn *badger.Txn) error {
		_, err := txn.Get([]byte(pRecord + id))
		if err == nil {
			found = true
			return nil
		}
		if errors.Is(err, badger.ErrKeyNotFound) {
			return nil
		}
		return err
	})
	return found, err
}

// Vet checks every record of a batch for the archive s (nil: for a new,
// empty archive, trusting only the user's own key) and returns the
// refusals, in batch order. Lineage may point at records of the same
// batch or of the archive.
func Vet(s *Store, b Batch, p ImportPolicy) ([]Refusal, error) {
	var trust *TrustSet
	if s != nil {
		t, err := s.Trust()
		if err != nil {
			return nil, err
		}
		trust = t
	} else {
		own, err := ExistingUserKey()
		if err != nil {
			return nil, err
		}
		trust = NewTrustSet(nil, own)
	}
	inBatch := map[string]bool{}
	for _, r := range b.Records {
		inBatch[r.ID] = true
	}
	var lookErr error
	known := func(id string) bool {
		if inBatch[id] || (b.Elsewhere != nil && b.Elsewhere(id)) {
			return true
		}
		if _, ok := inBatch[id]; ok || s == nil {
			return false // refused in this batch, or no archive to look in
		}
		ok, err := s.Has(id)
		if err != nil && lookErr == nil {
			lookErr = err
		}
		return ok
	}
	// A record refused takes the records whose lineage needs it along:
	// repeat until no more are refused.
	why := make([]string, len(b.Records))
	for again := true; again; {
		again = false
		for i, r := range b.Records {
			if why[i] != "" {
				continue
			}
			err := VetRecord(r, trust, p, known)
			if err == nil && s != nil {
				if other, cerr := s.conflict(r); cerr != nil {
					return nil, cerr
				} else if other {
					err = errors.New(conflictReason)
				}
			}
			if err != nil {
				why[i] = err.Error()
				inBatch[r.ID] = false
				again = true
			}
			if lookErr != nil {
				return nil, lookErr
			}
		}
	}
	refused := []Refusal{}
	for i, r := range b.Records {
		if why[i] != "" {
			refused = append(refused, Refusal{Line: b.line(i), ID: r.ID, Reason: fmt.Sprintf("%s: record %s… refused: %s", b.where(i), short(r.ID), why[i])})
		}
	}
	return refused, nil
}

// ImportRecords vets a batch for this archive (see Vet and ImportPolicy)
// and stores what it may: nothing when a record is refused (an error
// wrapping ErrRefused) unless p.Partial, else the acceptable records;
// records already present are skipped, never overwritten. progress (may
// be nil) is called after each committed transaction. Import and merge
// both come through here.
func (s *Store) ImportRecords(b Batch, p ImportPolicy, progress func(done, total int)) (ImportReport, error) {
	rep, good, notes, err := vetBatch(s, b, p)
	if err != nil {
		return rep, err
	}
	n, conflicts, err := s.putMany(good, progress)
	rep.Imported = n
	rep.Skipped = len(good) - n - len(conflicts)
	for _, id := range conflicts {
		for i, r := range b.Records {
			if r.ID == id {
				rep.Refused = append(rep.Refused, Refusal{Line: b.line(i), ID: id, Reason: fmt.Sprintf("%s: record %s… refused: %s", b.where(i), short(id), conflictReason)})
				break
			}
		}
	}
	if err != nil || len(notes) == 0 {
		return rep, err
	}
	added, present, nref, err := s.putNotes(notes)
	rep.NotesAdded, rep.NotesPresent = added, present
	rep.Refused = append(rep.Refused, nref...)
	return rep, err
}

// vetBatch vets a batch for the archive s (nil: a new archive) and returns
// the report so far and the records and notes to store; under all or
// nothing a refusal is an error wrapping ErrRefused.
func vetBatch(s *Store, b Batch, p ImportPolicy) (ImportReport, []*Record, []noteEntry, error) {
	rep := ImportReport{Source: b.Source, Lines: len(b.Records), Refused: []Refusal{}, Notes: len(b.notes)}
	refused, err := Vet(s, b, p)
	if err != nil {
		return rep, nil, nil, err
	}
	rep.Refused = refused
	if len(refused) > 0 && !p.Partial {
		return rep, nil, nil, refusedError(len(refused), len(b.Records))
	}
	good := acceptable(b.Records, refused)
	notes, nref, err := vetNotes(s, b.notes, good)
	if err != nil {
		return rep, nil, nil, err
	}
	rep.Refused = append(rep.Refused, nref...)
	if len(nref) > 0 && !p.Partial {
		return rep, nil, nil, &sentinelError{ErrRefused, fmt.Sprintf("%d of %d note(s) refused, so nothing was imported (the import is all or nothing unless the acceptable records are asked for)", len(nref), len(b.notes))}
	}
	return rep, good, notes, nil
}

// vetNotes checks notes arriving with records: each must hash to its id,
// carry a readable time, and belong to a record of the archive s (may be
// nil) or of good. It returns the notes to store, with their keys.
func vetNotes(s *Store, notes []noteEntry, good []*Record) ([]noteEntry, []Refusal, error) {
	in := map[string]bool{}
	for _, r := range good {
		in[r.ID] = true
	}
	var ok []noteEntry
	var refused []Refusal
	for _, nk := range notes {
		k, err := noteKey(nk.note)
		if err == nil {
			err = nk.note.check()
		}
		if err == nil && !in[nk.record] {
			held := false
			if s != nil {
				if held, err = s.Has(nk.record); err != nil {
					return nil, nil, err
				}
			}
			if !held {
				err = fmt.Errorf("its record %s… is neither in the archive nor accepted from the same file", short(nk.record))
			}
		}
		if err != nil {
			refused = append(refused, Refusal{Line: nk.line, ID: nk.id, Reason: fmt.Sprintf("%s: note %s… refused: %v", nk.where, short(nk.id), err)})
			continue
		}
		nk.k = k
		ok = append(ok, nk)
	}
	return ok, refused, nil
}

func refusedError(n, of int) error {
	return &sentinelError{ErrRefused, fmt.Sprintf("%d of %d record(s) refused, so nothing was imported (the import is all or nothing unless the acceptable records are asked for)", n, of)}
}

// acceptable returns the records of recs not named in refused.
func acceptable(recs []*Record, refused []Refusal) []*Record {
	bad := map[string]bool{}
	for _, r := range refused {
		bad[r.ID] = true
	}
	var good []*Record
	for _, r := range recs {
		if !bad[r.ID] {
			good = append(good, r)
		}
	}
	return good
}

// ImportInto imports a batch into the archive at dir: the batch is vetted
// against the archive opened for reading first, so that a batch refused
// whole, or one with nothing to store, creates and changes nothing; then
// the acceptable records are written (see ImportRecords).
func ImportInto(dir string, b Batch, p ImportPolicy, o OpenOptions, progress func(done, total int)) (ImportReport, error) {
	ro := o
	ro.ReadOnly = true
	st, err := Open(dir, ro)
	switch {
	case errors.Is(err, ErrNoArchive):
		st = nil
	case err != nil:
		return ImportReport{Source: b.Source, Lines: len(b.Records), Refused: []Refusal{}}, err
	}
	rep, good, notes, err := vetBatch(st, b, p)
	if st != nil {
		st.Close()
	}
	if err != nil {
		return rep, err
	}
	if len(good) == 0 && len(notes) == 0 {
		return rep, nil
	}
	o.ReadOnly = false
	w, err := Open(dir, o)
	if err != nil {
		return rep, err
	}
	defer w.Close()
	// Vetted again for writing: another process may have changed the
	// archive's trust list in between (lineage targets never go away).
	wrep, err := w.ImportRecords(Batch{Source: b.Source, Records: good, Lines: linesOf(b, good), notes: notes}, p, progress)
	wrep.Lines, wrep.Notes = rep.Lines, rep.Notes
	wrep.Refused = append(rep.Refused, wrep.Refused...)
	if err != nil {
		return wrep, err
	}
	if err := w.Close(); err != nil {
		return wrep, fmt.Errorf("archive %s: closing after the import: %v", dir, err)
	}
	return wrep, nil
}

// linesOf returns the lines of the records sub (a subsequence of b's).
func linesOf(b Batch, sub []*Record) []int {
	if b.Lines == nil {
		return nil
	}
	at := map[*Record]int{}
	for i, r := range b.Records {
		at[r] = b.Lines[i]
	}
	out := make([]int, len(sub))
	for i, r := range sub {
		out[i] = at[r]
	}
	return out
}

// Import reads a JSON-lines export file (see ReadExchange) into the
// archive, records and notes, under policy p. A file that is not valid
// changes nothing.
func (s *Store) Import(r io.Reader, source string, p ImportPolicy) (ImportReport, error) {
	ex, err := ReadExchange(r, source)
	if err != nil {
		return ImportReport{Source: source, Refused: []Refusal{}}, err
	}
	return s.ImportRecords(ex.Batch(), p, nil)
}
