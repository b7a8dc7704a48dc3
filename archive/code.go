package archive

import (
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"io"
	"os"
	"runtime"
	"runtime/debug"
	"sync"

	"moltrail"
	"moltrail/engine"
)

// ProgramVersion is moltrail's release version.
const ProgramVersion = "0.1.0"

var (
	codeOnce sync.Once
	codeNow  Code
)

// CurrentCode describes the running build: version, VCS revision and
// modified flag, Go version, OS/arch, the SHA-256 of the executable file,
// the job canonical-encoding version and the hash of the module source
// (moltrail.SourceSHA256), the identity that reuse matches on.
func CurrentCode() Code {
	codeOnce.Do(func() {
		c := Code{Program: "moltrail", Version: ProgramVersion, GoVersion: runtime.Version(),
			OS: runtime.GOOS, Arch: runtime.GOARCH, CanonicalVersion: engine.CanonicalVersion}
		if bi, ok := debug.ReadBuildInfo(); ok {
			c.GoVersion = bi.GoVersion
			for _, s := range bi.Settings {
				switch s.Key {
				case "vcs.revision":
					c.Revision = s.Value
				case "vcs.modified":
					c.Modified = s.Value == "true"
				}
			}
		}
		if p, err := os.Executable(); err == nil {
			if f, err := os.Open(p); err == nil {
				h := sha256.New()
				if _, err := io.Copy(h, f); err == nil {
					c.ExecutableSHA256 = hex.EncodeToString(h.Sum(nil))
				}
				f.Close()
			}
		}
		c.SourceSHA256 = moltrail.SourceSHA256()
		codeNow = c
	})
	return codeNow
}

// SameBuild reports whether a stored record's code c may stand for the
// build o when a result is reused (see Match).
func (c Code) SameBuild(o Code) bool {
	ok, _ := c.Match(o)
	return ok
}

// Match decides whether a stored record's code c is the same code as o for
// the purpose of reusing a result, and says why in a phrase. Program
// version, job encoding, Go version and OS/arch must agree. Then, when
// both builds recorded their source identity, it alone decides: the same
// source gives the same identity however it was built (go run, go build,
// go install), with or without version-control information. A record
// without a source identity never matches a build with one. Between two
// builds without it the older rule holds: same VCS revision and modified
// flag, and, when the revision does not pin the source (a modified tree or
// no VCS information), the same executable.
func (c Code) Match(o Code) (bool, string) {
	for _, f := range []struct{ what, a, b string }{
		{"program", c.Program, o.Program},
		{"program version", c.Version, o.Version},
		{"job encoding", c.CanonicalVersion, o.CanonicalVersion},
		{"Go version", c.GoVersion, o.GoVersion},
		{"platform", c.OS + "/" + c.Arch, o.OS + "/" + o.Arch},
	} {
		if f.a != f.b {
			return false, fmt.Sprintf("its %s is %s, this build's %s", f.what, orNone(f.a), orNone(f.b))
		}
	}
	switch {
	case c.SourceSHA256 != "" && o.SourceSHA256 != "":
		if c.SourceSHA256 != o.SourceSHA256 {
			return false, fmt.Sprintf("it was made from other source (source sha256 %s…, this build's %s…)", short(c.SourceSHA256), short(o.SourceSHA256))
		}
		return true, fmt.Sprintf("the same source (sha256 %s…), %s, %s/%s", short(c.SourceSHA256), c.GoVersion, c.OS, c.Arch)
	case c.SourceSHA256 != "" || o.SourceSHA256 != "":
		return false, "its build did not record a source identity, so it cannot be shown to be this source"
	}
	if c.Revision != o.Revision || c.Modified != o.Modified {
		return false, fmt.Sprintf("its revision is %s, this build's %s", revLabel(c), revLabel(o))
	}
	if c.Modified || c.Revision == "" {
		if c.ExecutableSHA256 == "" || c.ExecutableSHA256 != o.ExecutableSHA256 {
			return false, "the revision does not pin its source and its executable differs from this one"
		}
		return true, "the same executable (sha256 " + short(c.ExecutableSHA256) + "…)"
	}
	return true, "the same revision " + short(c.Revision)
}

func orNone(s string) string {
	if s == "" || s == "/" {
		return "(none)"
	}
	return s
}

func revLabel(c Code) string {
	r := short(c.Revision)
	if r == "" {
		r = "(none)"
	}
	if c.Modified {
		r += " modified"
	}
	return r
}

// CodeDiff is one field that differs between two code descriptions.
type CodeDiff struct {
	Field string `json:"field"`
	A     string `json:"a"`
	B     string `json:"b"`
}

// DiffCode lists the fields in which two code descriptions differ.
func DiffCode(a, b Code) []CodeDiff {
	var out []CodeDiff
	add := func(f, x, y string) {
		if x != y {
			out = append(out, CodeDiff{f, x, y})
		}
	}
	add("program", a.Program, b.Program)
	add("version", a.Version, b.Version)
	add("vcs_revision", a.Revision, b.Revision)
	add("vcs_modified", boolStr(a.Modified), boolStr(b.Modified))
	add("go_version", a.GoVersion, b.GoVersion)
	add("os", a.OS, b.OS)
	add("arch", a.Arch, b.Arch)
	add("executable_sha256", a.ExecutableSHA256, b.ExecutableSHA256)
	add("canonical_version", a.CanonicalVersion, b.CanonicalVersion)
	add("source_sha256", a.SourceSHA256, b.SourceSHA256)
	return out
}

func boolStr(b bool) string {
	if b {
		return "true"
	}
	return "false"
}
