package archive

import (
	"bufio"
	"bytes"
	"errors"
	"fmt"
	"io"
	"sync"

	badger "github.com/dgraph-io/badger/v4"
	"github.com/santhosh-tekuri/jsonschema/v6"

	"moltrail/schemas"
)

var (
	schemaOnce sync.Once
	recSchema  *jsonschema.Schema
	schemaErr  error
)

// RecordSchema returns the compiled record schema.
func RecordSchema() (*jsonschema.Schema, error) {
	schemaOnce.Do(func() { recSchema, schemaErr = schemas.Compile("record.schema.json") })
	return recSchema, schemaErr
}

// ValidateRecordJSON checks one record document against the record schema.
func ValidateRecordJSON(b []byte) error {
	s, err := RecordSchema()
	if err != nil {
		return err
	}
	return schemas.ValidateBytes(s, b)
}

// Export writes the stored bytes of every record matching f, one per line,
// oldest first, and returns how many it wrote.
func (s *Store) Export(w io.Writer, f Filter) (int, error) {
	n := 0
	bw := bufio.NewWriter(w)
	err := s.db.View(func(txn *badger.Txn) error {
		ids, err := s.matchIDs(txn, f)
		if err != nil {
			return err
		}
		for _, id := range ids {
			it, err := txn.Get([]byte(pRecord + id))
			if err != nil {
				return fmt.Errorf("record %s: %v", short(id), err)
			}
			if err := it.Value(func(v []byte) error {
				if _, err := bw.Write(v); err != nil {
					return err
				}
				return bw.WriteByte('\n')
			}); err != nil {
				return err
			}
			n++
		}
		return nil
	})
	if err != nil {
		return n, err
	}
	return n, bw.Flush()
}

// Refusal is one record Import would not take.
type Refusal struct {
	Line   int    `json:"line"`
	ID     string `json:"id"`
	Reason string `json:"reason"`
}

// ImportReport sums up Import.
type ImportReport struct {
	Source   string    `json:"source"`
	Lines    int       `json:"records_read"`
	Imported int       `json:"imported"`
	Skipped  int       `json:"skipped_already_present"`
	Refused  []Refusal `json:"refused"`
}

// ErrBadFile marks an import file that is not valid JSON lines of records.
var ErrBadFile = errors.New("import file is not a valid record file")

// ReadRecords parses a JSON-lines record file: every non-empty line must be
// one JSON document valid against the record schema and decodable as a
// Record. Any such failure (including a truncated last line) is an error
// wrapping ErrBadFile that names source and line; hashes are not checked
// here. It returns the records with their line numbers.
func ReadRecords(r io.Reader, source string) ([]*Record, []int, error) {
	br := bufio.NewReaderSize(r, 1<<20)
	var recs []*Record
	var lines []int
	ln := 0
	for {
		line, err := br.ReadBytes('\n')
		if len(line) > 0 {
			ln++
			complete := line[len(line)-1] == '\n'
			line = bytes.TrimSpace(line)
			if len(line) > 0 {
				if verr := ValidateRecordJSON(line); verr != nil {
					if !complete {
						return nil, nil, fmt.Errorf("%w: %s:%d: the last line is incomplete (file truncated?): %v", ErrBadFile, source, ln, verr)
					}
					return nil, nil, fmt.Errorf("%w: %s:%d: %v", ErrBadFile, source, ln, verr)
				}
				rec, derr := Decode(line)
				if derr != nil {
					return nil, nil, fmt.Errorf("%w: %s:%d: %v", ErrBadFile, source, ln, derr)
				}
				recs = append(recs, rec)
				lines = append(lines, ln)
			}
		}
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, nil, fmt.Errorf("%s:%d: read error: %v", source, ln+1, err)
		}
	}
	return recs, lines, nil
}

// Import reads a JSON-lines record file into the archive. A file that is
// not valid (see ReadRecords) changes nothing. Records whose id or input
// key does not match their content are refused, each named with its line;
// records already present are skipped (never overwritten); the rest are
// stored.
func (s *Store) Import(r io.Reader, source string) (ImportReport, error) {
	recs, lines, err := ReadRecords(r, source)
	if err != nil {
		return ImportReport{Source: source, Refused: []Refusal{}}, err
	}
	return s.ImportRecords(recs, lines, source, nil)
}

// ImportRecords stores records read by ReadRecords (lines are their line
// numbers in source): hash mismatches are refused, present ids skipped.
// progress (may be nil) is called after each committed transaction.
func (s *Store) ImportRecords(recs []*Record, lines []int, source string, progress func(done, total int)) (ImportReport, error) {
	rep := ImportReport{Source: source, Refused: []Refusal{}, Lines: len(recs)}
	var good []*Record
	for i, rec := range recs {
		if err := rec.Check(); err != nil {
			rep.Refused = append(rep.Refused, Refusal{Line: lines[i], ID: rec.ID, Reason: fmt.Sprintf("%s:%d: record %s… refused: %v", source, lines[i], short(rec.ID), err)})
			continue
		}
		good = append(good, rec)
	}
	n, conflicts, err := s.putMany(good, progress)
	rep.Imported = n
	rep.Skipped = len(good) - n - len(conflicts)
	for _, id := range conflicts {
		for i, rec := range recs {
			if rec.ID == id {
				rep.Refused = append(rep.Refused, Refusal{Line: lines[i], ID: id, Reason: fmt.Sprintf("%s:%d: record %s… refused: %s", source, lines[i], short(id), conflictReason)})
				break
			}
		}
	}
	return rep, err
}
