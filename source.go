// Package moltrail carries the program's own source, embedded when the
// program is built, so that a build can name the source it was made from.
//
// SourceSHA256 is the code identity moltrail stores in every record
// (code.source_sha256) and matches on before it reuses a stored result.
// It covers everything that can change a number and that the module
// itself holds: go.mod and go.sum (which pin every dependency), every
// non-test Go file of every package, and every data file a package
// embeds (basis sets, schemas, reference sets, the demo scenario). It
// leaves out test files, testdata directories and documentation. Because
// the bytes are fixed when the binary is linked, `go run`, `go build` and
// `go install` of the same source give the same identity, with or
// without version-control information.
//
// Go files up to three directories deep are covered by the patterns
// below; a package deeper down, or a new embedded data file, must be
// added to them (TestSourceCoversModule fails until it is).
package moltrail

import (
	"crypto/sha256"
	"embed"
	"encoding/hex"
	"io/fs"
	"sort"
	"strconv"
	"strings"
	"sync"
)

//go:embed go.mod go.sum *.go */*.go */*/*.go */*/*/*.go
//go:embed cmd/moltrail/demo compare/refsets/*.json engine/basis/data/*.json schemas/*.json
var source embed.FS

var (
	sourceOnce  sync.Once
	sourceFiles []string
	sourceHash  string
)

// covered reports whether an embedded file belongs to the identity: Go
// test files and anything under a testdata directory match the patterns
// but are left out.
func covered(path string) bool {
	return !strings.HasSuffix(path, "_test.go") && !strings.HasPrefix(path, "testdata/") && !strings.Contains(path, "/testdata/")
}

func hashSource() {
	fs.WalkDir(source, ".", func(p string, d fs.DirEntry, err error) error {
		if err == nil && !d.IsDir() && covered(p) {
			sourceFiles = append(sourceFiles, p)
		}
		return nil
	})
	sort.Strings(sourceFiles)
	h := sha256.New()
	for _, p := range sourceFiles {
		b, err := source.ReadFile(p)
		if err != nil {
			// Cannot happen for a path the walk found; an identity that
			// hid it would be wrong, so it goes into the hash as a marker.
			b = []byte("unreadable: " + err.Error())
		}
		// path NUL length NUL bytes: no two file sets hash alike.
		h.Write([]byte(p))
		h.Write([]byte{0})
		h.Write([]byte(strconv.Itoa(len(b))))
		h.Write([]byte{0})
		h.Write(b)
	}
	sourceHash = hex.EncodeToString(h.Sum(nil))
}

// SourceSHA256 is the lower-case hex SHA-256 of the module source this
// binary was built from: over the covered files in byte order of their
// slash-separated paths, each as path, NUL, decimal length, NUL, content.
func SourceSHA256() string {
	sourceOnce.Do(hashSource)
	return sourceHash
}

// SourceFiles lists the files SourceSHA256 covers, in hashing order.
func SourceFiles() []string {
	sourceOnce.Do(hashSource)
	return append([]string(nil), sourceFiles...)
}
