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

	"moltrail/internal/readfile"
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
				return s.damagedRecord(id)
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

// MaxLineBytes bounds one line of a record file (a record carrying a
// basis file of the largest size accepted stays well below it).
const MaxLineBytes = 64 << 20

var errLineTooLong = errors.New("line too long")

// readLine reads up to and including the next newline, refusing lines
// longer than max; at the end of the input it returns what is left and
// io.EOF.
func readLine(br *bufio.Reader, max int) ([]byte, error) {
	var line []byte
	for {
		frag, err := br.ReadSlice('\n')
		if len(line)+len(frag) > max {
			return nil, errLineTooLong
		}
		line = append(line, frag...)
		if err != bufio.ErrBufferFull {
			return line, err
		}
	}
}

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
		line, err := readLine(br, MaxLineBytes)
		if errors.Is(err, errLineTooLong) {
			return nil, nil, fmt.Errorf("%w: %s:%d: the line is longer than %s, more than any record needs", ErrBadFile, source, ln+1, readfile.Size(MaxLineBytes))
		}
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
