// Package archive keeps moltrail's calculation records: append-only,
// content-addressed, with full provenance, in a badger key-value store.
package archive

import "moltrail/engine"

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
}

// Run describes the process that computed a record.
type Run struct {
	StartUTC     string  `json:"start_utc"`
	EndUTC       string  `json:"end_utc"`
	WallSeconds  float64 `json:"wall_seconds"`
	Host         string  `json:"host"`
	Threads      int     `json:"threads"`
	PeakMemoryMB float64 `json:"peak_memory_mib"`
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
}
