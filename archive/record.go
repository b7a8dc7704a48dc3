// Package archive keeps moltrail's calculation records: append-only,
// content-addressed, with full provenance, in a badger key-value store.
//
// # Canonical record encoding (RecordFormat "moltrail-record/1")
//
// A record's canonical bytes are the encoding/json encoding of the Record
// struct as declared here: fields in declaration order, no indentation,
// floats in Go's shortest round-trip form, map keys sorted, lineage always
// an array and tags always an object (never null). The record id is the
// lower-case hex SHA-256 of those bytes with ID set to the empty string; the
// archive stores, exports and imports the same bytes with the id filled in.
// Because "id" is the first key, the stored bytes differ from the hashed
// bytes only inside the first string and by the signature block (below).
// Any change to any other field changes the id. When a field is added
// inside the hashed bytes or the encoding changes, RecordFormat changes.
//
// The signature block ("signature", last) lies outside the hashed bytes:
// the canonical bytes are those of the record without it, so a record
// keeps its id whether it is signed or not, and records written before
// signatures existed (no block) read and verify as unsigned records. See
// sign.go.
package archive

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"sort"

	"moltrail/engine"
)

// RecordFormat names the canonical-encoding layout of Record.
const RecordFormat = "moltrail-record/1"

// Lineage relations.
const (
	GeometryFrom = "geometry-from"
	Reproduces   = "reproduces"
	Recomputes   = "recomputes"
)

// Code identifies the build that produced a record.
type Code struct {
	Program          string `json:"program"`
	Version          string `json:"version"`
	Revision         string `json:"vcs_revision"`
	Modified         bool   `json:"vcs_modified"`
	GoVersion        string `json:"go_version"`
	OS               string `json:"os"`
	Arch             string `json:"arch"`
	ExecutableSHA256 string `json:"executable_sha256"`
	CanonicalVersion string `json:"canonical_version"`
	// SourceSHA256 is the hash of the module source the build was made
	// from (see moltrail.SourceSHA256); empty in records of builds that
	// did not record it.
	SourceSHA256 string `json:"source_sha256,omitempty"`
}

// Run describes the process that computed a record.
type Run struct {
	StartUTC     string  `json:"start_utc"`
	EndUTC       string  `json:"end_utc"`
	WallSeconds  float64 `json:"wall_seconds"`
	Host         string  `json:"host"`
	Threads      int     `json:"threads"`
	PeakMemoryMB float64 `json:"peak_memory_mib"`
	// Batch is the batch-scheduler job the record was computed in (absent
	// outside one). It is provenance only: it is not part of the input.
	Batch *BatchJob `json:"batch_job,omitempty"`
}

// BatchJob identifies a batch-scheduler job (today: Slurm).
type BatchJob struct {
	// Scheduler is "slurm".
	Scheduler string `json:"scheduler"`
	JobID     string `json:"job_id"`
	// ArrayJobID and ArrayTaskID are set for a task of an array job.
	ArrayJobID  string `json:"array_job_id,omitempty"`
	ArrayTaskID string `json:"array_task_id,omitempty"`
	// Node is the scheduler's name for the compute node.
	Node string `json:"node,omitempty"`
}

// Link ties a record to one it derives from.
type Link struct {
	// Relation: "geometry-from", "reproduces" or "recomputes".
	Relation string `json:"relation"`
	ID       string `json:"id"`
}

// Record is one stored calculation. ID is the SHA-256 of the record's
// canonical bytes with ID empty.
type Record struct {
	ID       string            `json:"id"`
	InputKey string            `json:"input_key"`
	Status   string            `json:"status"`
	Input    engine.Job        `json:"input"`
	Code     Code              `json:"code"`
	Run      Run               `json:"run"`
	Lineage  []Link            `json:"lineage"`
	Tags     map[string]string `json:"tags"`
	Results  engine.Result     `json:"results"`
	// Derivation is set on derived records only (derive.go): how Results
	// follow from the records named there.
	Derivation *Derivation `json:"derivation,omitempty"`
	// Format is RecordFormat for records written by this package.
	Format string `json:"record_format"`
	// Signature vouches for the record's id (not part of the hashed bytes).
	Signature *Signature `json:"signature,omitempty"`
}

func (r *Record) normalise() {
	if r.Lineage == nil {
		r.Lineage = []Link{}
	}
	if r.Tags == nil {
		r.Tags = map[string]string{}
	}
}

// Canonical returns the bytes the id is computed from (ID empty, no
// signature block).
func (r *Record) Canonical() ([]byte, error) {
	c := *r
	c.ID = ""
	c.Signature = nil
	c.normalise()
	b, err := json.Marshal(&c)
	if err != nil {
		return nil, fmt.Errorf("record cannot be encoded: %v", err)
	}
	return b, nil
}

// ComputeID returns the hex SHA-256 of the canonical bytes.
func (r *Record) ComputeID() (string, error) {
	b, err := r.Canonical()
	if err != nil {
		return "", err
	}
	s := sha256.Sum256(b)
	return hex.EncodeToString(s[:]), nil
}

// Seal fills Format, InputKey and ID from the record's content. A
// signature block of another id is dropped (it could only fail).
func (r *Record) Seal() error {
	r.normalise()
	if r.Format == "" {
		r.Format = RecordFormat
	}
	k, err := r.inputKey()
	if err != nil {
		return err
	}
	r.InputKey = k
	id, err := r.ComputeID()
	if err != nil {
		return err
	}
	if id != r.ID {
		r.Signature = nil
	}
	r.ID = id
	return nil
}

// Encode returns the stored form: the canonical bytes with the id filled in.
func (r *Record) Encode() ([]byte, error) {
	c := *r
	c.normalise()
	b, err := json.Marshal(&c)
	if err != nil {
		return nil, fmt.Errorf("record %s cannot be encoded: %v", short(r.ID), err)
	}
	return b, nil
}

// Check recomputes the input key and the id and reports the first mismatch.
func (r *Record) Check() error {
	if r.Format != RecordFormat {
		return fmt.Errorf("record_format is %q; this build reads %q", r.Format, RecordFormat)
	}
	k, err := r.inputKey()
	if err != nil {
		return fmt.Errorf("input: %v", err)
	}
	if k != r.InputKey {
		return fmt.Errorf("input_key %s… does not match the input, which hashes to %s…", short(r.InputKey), short(k))
	}
	id, err := r.ComputeID()
	if err != nil {
		return err
	}
	if id != r.ID {
		return fmt.Errorf("id %s… does not match the content, which hashes to %s…", short(r.ID), short(id))
	}
	return nil
}

// Decode parses a record strictly: unknown fields and trailing data are
// errors. It does not check the hashes (see Check).
func Decode(b []byte) (*Record, error) {
	dec := json.NewDecoder(bytes.NewReader(b))
	dec.DisallowUnknownFields()
	var r Record
	if err := dec.Decode(&r); err != nil {
		return nil, fmt.Errorf("not a moltrail record: %v", err)
	}
	if len(bytes.TrimSpace(b[dec.InputOffset():])) > 0 {
		return nil, fmt.Errorf("not a moltrail record: data after the closing brace")
	}
	return &r, nil
}

// TagList returns the tags as sorted "key=value" strings.
func (r *Record) TagList() []string {
	var out []string
	for k, v := range r.Tags {
		out = append(out, k+"="+v)
	}
	sort.Strings(out)
	return out
}

// Formula is the Hill formula of the input molecule ("" if it cannot be built).
func (r *Record) Formula() string {
	m, err := r.Input.MoleculeOf()
	if err != nil {
		return ""
	}
	return m.Formula()
}

// FitSet names the auxiliary set the record's two-electron integrals were
// fitted with, or "" for exact integrals.
func (r *Record) FitSet() string {
	if r.Input.Fitting == nil {
		return ""
	}
	return r.Input.Fitting.SCFSet.Name
}

func short(h string) string {
	if len(h) > 12 {
		return h[:12]
	}
	return h
}
