package main

import (
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"strings"
	"time"

	"moltrail/archive"
)

// newFlags makes a flag set that reports to stderr and never exits.
func newFlags(name string, stderr io.Writer, synopsis string) *flag.FlagSet {
	fs := flag.NewFlagSet(name, flag.ContinueOnError)
	fs.SetOutput(stderr)
	fs.Usage = func() {
		fmt.Fprintf(stderr, "usage: moltrail %s %s\n", name, synopsis)
		fs.PrintDefaults()
	}
	return fs
}

// parseFlags parses flags that may stand before, between or after the
// positional arguments, and returns the positional arguments. ok is false
// after --help (code exitOK) or a bad flag (code exitUsage).
func parseFlags(fs *flag.FlagSet, args []string) (pos []string, code int, ok bool) {
	for {
		if err := fs.Parse(args); err != nil {
			if errors.Is(err, flag.ErrHelp) {
				return nil, exitOK, false
			}
			return nil, exitUsage, false
		}
		rest := fs.Args()
		if len(rest) == 0 {
			return pos, 0, true
		}
		if rest[0] == "--" {
			return append(pos, rest[1:]...), 0, true
		}
		pos = append(pos, rest[0])
		args = rest[1:]
	}
}

// archiveFlags are the flags every archive-touching command takes.
type archiveFlags struct {
	dir  string
	wait time.Duration
}

func addArchiveFlags(fs *flag.FlagSet) *archiveFlags {
	a := &archiveFlags{}
	fs.StringVar(&a.dir, "archive", "", "archive directory (default $MOLTRAIL_ARCHIVE, else ./moltrail-archive)")
	fs.DurationVar(&a.wait, "wait", archive.DefaultWait, "how long to wait while another process holds the archive")
	return a
}

// path applies the archive location rule.
func (a *archiveFlags) path() string {
	if a.dir != "" {
		return a.dir
	}
	if e := os.Getenv("MOLTRAIL_ARCHIVE"); e != "" {
		return e
	}
	return "moltrail-archive"
}

func (a *archiveFlags) waitOrNone() time.Duration {
	if a.wait <= 0 {
		return -1
	}
	return a.wait
}

// openArchive opens the archive; the returned code is the exit status to
// use when err is not nil.
func (a *archiveFlags) open(readOnly bool, stderr io.Writer) (*archive.Store, int, error) {
	s, err := archive.Open(a.path(), archive.OpenOptions{ReadOnly: readOnly, Wait: a.waitOrNone(), Log: stderr})
	if err == nil {
		return s, 0, nil
	}
	if errors.Is(err, archive.ErrNoArchive) {
		return nil, exitUsage, err
	}
	return nil, exitFailed, err
}

// printJSON writes exactly one JSON value and a newline.
func printJSON(w io.Writer, v any) error {
	b, err := json.MarshalIndent(v, "", "  ")
	if err != nil {
		return err
	}
	_, err = fmt.Fprintf(w, "%s\n", b)
	return err
}

// multiFlag is a repeatable string flag.
type multiFlag []string

func (m *multiFlag) String() string     { return strings.Join(*m, ",") }
func (m *multiFlag) Set(v string) error { *m = append(*m, v); return nil }

// parseTags turns KEY=VALUE strings into a map.
func parseTags(list []string) (map[string]string, error) {
	out := map[string]string{}
	for _, t := range list {
		k, v, ok := strings.Cut(t, "=")
		k = strings.TrimSpace(k)
		if !ok || k == "" {
			return nil, fmt.Errorf("--tag %q must be KEY=VALUE", t)
		}
		out[k] = v
	}
	return out, nil
}

// utc formats a stored RFC 3339 time as UTC ISO 8601 to the second.
func utc(s string) string {
	t, err := time.Parse(time.RFC3339Nano, s)
	if err != nil {
		return s
	}
	return t.UTC().Format("2006-01-02T15:04:05Z")
}

// table renders rows under headers: each column as wide as its widest
// cell, two spaces apart, headers underlined with dots.
type table struct {
	head  []string
	right []bool
	rows  [][]string
}

func (t *table) add(cells ...string) { t.rows = append(t.rows, cells) }

func (t *table) write(w io.Writer) {
	width := make([]int, len(t.head))
	for i, h := range t.head {
		width[i] = runeLen(h)
	}
	for _, r := range t.rows {
		for i, c := range r {
			if i < len(width) && runeLen(c) > width[i] {
				width[i] = runeLen(c)
			}
		}
	}
	line := func(cells []string) {
		var b strings.Builder
		for i := range width {
			c := ""
			if i < len(cells) {
				c = cells[i]
			}
			pad := strings.Repeat(" ", width[i]-runeLen(c))
			if i > 0 {
				b.WriteString("  ")
			}
			if i < len(t.right) && t.right[i] {
				b.WriteString(pad + c)
			} else {
				b.WriteString(c + pad)
			}
		}
		fmt.Fprintln(w, strings.TrimRight(b.String(), " "))
	}
	line(t.head)
	under := make([]string, len(width))
	for i := range width {
		under[i] = strings.Repeat("·", width[i])
	}
	line(under)
	for _, r := range t.rows {
		line(r)
	}
}

func runeLen(s string) int { return len([]rune(s)) }

func cmdVersion(args []string, stdout, stderr io.Writer) int {
	c := archive.CurrentCode()
	rev := c.Revision
	if rev == "" {
		rev = "unknown revision"
	}
	if c.Modified {
		rev += " (modified tree)"
	}
	fmt.Fprintf(stdout, "moltrail %s, %s, %s %s/%s, job encoding %s, record format %s\n", c.Version, rev, c.GoVersion, c.OS, c.Arch, c.CanonicalVersion, archive.RecordFormat)
	return exitOK
}
