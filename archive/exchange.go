package archive

import (
	"bufio"
	"bytes"
	"encoding/json"
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
// oldest first, each followed by the stored bytes of its notes (oldest
// first), and returns how many records it wrote.
func (s *Store) Export(w io.Writer, f Filter) (int, error) {
	n, _, err := s.ExportNotes(w, f)
	return n, err
}

// ExportNotes is Export, also returning how many notes it wrote.
func (s *Store) ExportNotes(w io.Writer, f Filter) (records, notes int, err error) {
	bw := bufio.NewWriter(w)
	line := func(v []byte) error {
		if _, err := bw.Write(v); err != nil {
			return err
		}
		return bw.WriteByte('\n')
	}
	err = s.db.View(func(txn *badger.Txn) error {
		ids, err := s.matchIDs(txn, f)
		if err != nil {
			return err
		}
		for _, id := range ids {
			it, err := txn.Get([]byte(pRecord + id))
			if err != nil {
				return s.damagedRecord(id)
			}
			if err := it.Value(line); err != nil {
				return err
			}
			records++
			o := badger.DefaultIteratorOptions
			o.Prefix = []byte(pNote + id + "/")
			nt := txn.NewIterator(o)
			for nt.Rewind(); nt.Valid(); nt.Next() {
				if err := nt.Item().Value(line); err != nil {
					nt.Close()
					return err
				}
				notes++
			}
			nt.Close()
		}
		return nil
	})
	if err != nil {
		return records, notes, err
	}
	return records, notes, bw.Flush()
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
	// Notes read, stored and already present (a refused note is in Refused).
	Notes        int `json:"notes_read"`
	NotesAdded   int `json:"notes_imported"`
	NotesPresent int `json:"notes_already_present"`
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

// ReadRecords parses a JSON-lines record file (see ReadExchange) and
// returns its records with their line numbers; note lines are read and
// checked but not returned.
func ReadRecords(r io.Reader, source string) ([]*Record, []int, error) {
	ex, err := ReadExchange(r, source)
	if err != nil {
		return nil, nil, err
	}
	return ex.Records, ex.Lines, nil
}

// Exchange is the content of a JSON-lines export file: records and the
// notes that follow them, each with its line number.
type Exchange struct {
	Source    string
	Records   []*Record
	Lines     []int
	Notes     []*Note
	NoteLines []int
}

// Batch is the exchange's records and notes as a batch to import.
func (ex *Exchange) Batch() Batch {
	b := Batch{Source: ex.Source, Records: ex.Records, Lines: ex.Lines}
	for i, n := range ex.Notes {
		// Stored as the note's own encoding, as AddNote stores it.
		v, _ := json.Marshal(n)
		b.notes = append(b.notes, noteEntry{v: v, id: n.ID, record: n.RecordID, where: fmt.Sprintf("%s:%d", ex.Source, ex.NoteLines[i]), line: ex.NoteLines[i], note: n})
	}
	return b
}

// isNoteLine tells a note line from a record line by its second key
// (record_id after id; a record has input_key), without decoding the rest.
func isNoteLine(line []byte) bool {
	dec := json.NewDecoder(bytes.NewReader(line))
	for i := 0; i < 4; i++ {
		tok, err := dec.Token()
		if err != nil {
			return false
		}
		if i == 3 {
			return tok == "record_id"
		}
	}
	return false
}

// ReadExchange parses a JSON-lines export file: every non-empty line must
// be one JSON document, either a record (valid against the record schema
// and decodable as a Record) or a note (decodable as a Note, in the note
// format). Any such failure (including a truncated last line) is an error
// wrapping ErrBadFile that names source and line; hashes are not checked
// here.
func ReadExchange(r io.Reader, source string) (*Exchange, error) {
	br := bufio.NewReaderSize(r, 1<<20)
	ex := &Exchange{Source: source}
	ln := 0
	for {
		line, err := readLine(br, MaxLineBytes)
		if errors.Is(err, errLineTooLong) {
			return nil, fmt.Errorf("%w: %s:%d: the line is longer than %s, more than any record needs", ErrBadFile, source, ln+1, readfile.Size(MaxLineBytes))
		}
		if len(line) > 0 {
			ln++
			complete := line[len(line)-1] == '\n'
			line = bytes.TrimSpace(line)
			switch {
			case len(line) == 0:
			case isNoteLine(line):
				n, nerr := decodeNote(line)
				if nerr == nil && n.Format != NoteFormat {
					nerr = fmt.Errorf("note_format is %q; this build reads %q", n.Format, NoteFormat)
				}
				if nerr != nil {
					return nil, fmt.Errorf("%w: %s:%d: %v", ErrBadFile, source, ln, nerr)
				}
				ex.Notes = append(ex.Notes, n)
				ex.NoteLines = append(ex.NoteLines, ln)
			default:
				if verr := ValidateRecordJSON(line); verr != nil {
					if !complete {
						return nil, fmt.Errorf("%w: %s:%d: the last line is incomplete (file truncated?): %v", ErrBadFile, source, ln, verr)
					}
					return nil, fmt.Errorf("%w: %s:%d: %v", ErrBadFile, source, ln, verr)
				}
				rec, derr := Decode(line)
				if derr != nil {
					return nil, fmt.Errorf("%w: %s:%d: %v", ErrBadFile, source, ln, derr)
				}
				ex.Records = append(ex.Records, rec)
				ex.Lines = append(ex.Lines, ln)
			}
		}
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, fmt.Errorf("%s:%d: read error: %v", source, ln+1, err)
		}
	}
	return ex, nil
}
