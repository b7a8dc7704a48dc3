package archive

import (
	"encoding/hex"
	"strings"
	"time"
)

// Key layout (LayoutVersion "moltrail-archive/1"). ts is the record's
// run.start_utc as 16 lower-case hex digits of Unix nanoseconds, so keys
// sort by time; id and input keys are 64 hex digits; 0x00 separates a
// free-text index value from what follows it.
//
//	m/layout                                  → LayoutVersion
//	m/trust/<key fingerprint>                 → a TrustEntry (JSON): a key
//	                                                the archive trusts
//	r/<id>                                    → the record's stored bytes
//	s/<id>                                    → its Summary (JSON), for listings
//	k/<input_key>/<ts><id>                    → ∅   look-up by input key
//	t/<ts><id>                                → ∅   listing by time
//	x/<field>\x00<value>\x00<ts><id>          → ∅   listing by molecule, formula,
//	                                                method, basis, tag, status
//	n/<record id>/<ts><note id>               → a Note (JSON)
//
// Every entry of one record is written in the same transaction. Index
// values: molecule name, method and basis lower-cased; formula as the Hill
// formula; tag as "key=value"; status as stored.
var keyLayout = []byte("m/layout")

const pTrust = "m/trust/"

const (
	pRecord  = "r/"
	pSummary = "s/"
	pInput   = "k/"
	pTime    = "t/"
	pIndex   = "x/"
	pNote    = "n/"
)

const tsLen = 16
const idLen = 64

// Index fields usable in a Filter.
const (
	FieldMolecule = "molecule"
	FieldFormula  = "formula"
	FieldMethod   = "method"
	FieldBasis    = "basis"
	FieldTag      = "tag"
	FieldStatus   = "status"
)

func tsHex(t time.Time) string {
	var b [8]byte
	n := uint64(t.UnixNano())
	if t.Before(time.Unix(0, 0)) {
		n = 0
	}
	for i := 7; i >= 0; i-- {
		b[i] = byte(n)
		n >>= 8
	}
	return hex.EncodeToString(b[:])
}

func recordTS(r *Record) string {
	t, err := time.Parse(time.RFC3339Nano, r.Run.StartUTC)
	if err != nil {
		return strings.Repeat("0", tsLen)
	}
	return tsHex(t)
}

func indexValue(field, v string) string {
	v = strings.ReplaceAll(v, "\x00", "")
	switch field {
	case FieldMolecule, FieldMethod, FieldBasis:
		return strings.ToLower(strings.TrimSpace(v))
	}
	return v
}

func indexPrefix(field, value string) []byte {
	return []byte(pIndex + field + "\x00" + indexValue(field, value) + "\x00")
}

// indexEntries lists the index values of a record per field.
func indexEntries(r *Record) map[string][]string {
	m := map[string][]string{
		FieldMolecule: {r.Input.Molecule.Name},
		FieldFormula:  {r.Formula()},
		FieldMethod:   {r.Input.Method},
		FieldBasis:    {r.Input.Basis.Name},
		FieldStatus:   {r.Status},
	}
	m[FieldTag] = r.TagList()
	return m
}

// recordKeys returns every key a record owns except r/ and s/.
func recordKeys(r *Record) [][]byte {
	ts := recordTS(r)
	keys := [][]byte{
		[]byte(pInput + r.InputKey + "/" + ts + r.ID),
		[]byte(pTime + ts + r.ID),
	}
	for field, vals := range indexEntries(r) {
		for _, v := range vals {
			k := append(indexPrefix(field, v), ts+r.ID...)
			keys = append(keys, k)
		}
	}
	return keys
}

// tailID splits the trailing <ts><id> of an index key.
func tailID(key []byte) (ts, id string, ok bool) {
	if len(key) < tsLen+idLen {
		return "", "", false
	}
	t := key[len(key)-tsLen-idLen:]
	return string(t[:tsLen]), string(t[tsLen:]), true
}
