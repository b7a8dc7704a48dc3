package archive

import (
	"crypto/sha256"
	"encoding/hex"
	"io"
	"os"
	"runtime"
	"runtime/debug"
	"sync"

	"moltrail/engine"
)

// ProgramVersion is moltrail's release version.
const ProgramVersion = "0.1.0"

var (
	codeOnce sync.Once
	codeNow  Code
)

// CurrentCode describes the running build: version, VCS revision and
// modified flag, Go version, OS/arch, the SHA-256 of the executable file
// and the job canonical-encoding version.
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
		codeNow = c
	})
	return codeNow
}

// SameBuild reports whether two code descriptions name the same code
// version for the purpose of reusing a stored result: same program
// version, revision, modified flag, Go version, OS/arch and canonical
// version; and, when the revision does not pin the source (a modified tree
// or no VCS information), the same executable.
func (c Code) SameBuild(o Code) bool {
	if c.Program != o.Program || c.Version != o.Version || c.Revision != o.Revision || c.Modified != o.Modified ||
		c.GoVersion != o.GoVersion || c.OS != o.OS || c.Arch != o.Arch || c.CanonicalVersion != o.CanonicalVersion {
		return false
	}
	if c.Modified || c.Revision == "" {
		return c.ExecutableSHA256 != "" && c.ExecutableSHA256 == o.ExecutableSHA256
	}
	return true
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
	return out
}

func boolStr(b bool) string {
	if b {
		return "true"
	}
	return "false"
}
