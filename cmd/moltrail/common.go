package main

import (
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"regexp"
	"strconv"
	"strings"
	"time"

	"moltrail/archive"
)

// stream is the stderr that dispatch hands to a command: it writes to the
// real stderr and remembers stdout, where help that was asked for goes.
type stream struct {
	io.Writer
	out io.Writer
}

// helpWriter is where a command's --help goes: stdout when the command was
// started through dispatch, else stderr.
func helpWriter(stderr io.Writer) io.Writer {
	if s, ok := stderr.(*stream); ok {
		return s.out
	}
	return stderr
}

// newFlags makes a flag set that never exits and never prints on its own:
// parseFlags reports a bad flag in one sentence, and --help prints the
// synopsis and flags (writeFlagHelp) on stdout.
func newFlags(name string, stderr io.Writer, synopsis string) *flag.FlagSet {
	fs := flag.NewFlagSet(name, flag.ContinueOnError)
	fs.SetOutput(stderr)
	fs.Usage = func() {
		w := helpWriter(stderr)
		if c, ok := commands[name]; ok {
			fmt.Fprintf(w, "moltrail %s — %s\n\n", name, c.Summary)
		}
		fmt.Fprintf(w, "usage: moltrail %s %s\n\n", name, synopsis)
		writeFlagHelp(w, fs)
	}
	return fs
}

// addHelpNotes appends paragraphs to a command's --help, after its flags.
func addHelpNotes(fs *flag.FlagSet, notes string) {
	usage := fs.Usage
	fs.Usage = func() {
		usage()
		w := helpWriter(fs.Output())
		fmt.Fprintf(w, "\n%s\n", strings.TrimSpace(notes))
	}
}

// writeFlagHelp lists a command's flags: --name VALUE, what it does, and
// its default when that is not empty or zero. A word in back quotes in the
// usage text names the value (as with the flag package); otherwise the
// value is named after its type.
func writeFlagHelp(w io.Writer, fs *flag.FlagSet) {
	type row struct{ left, text string }
	var rows []row
	width := 0
	fs.VisitAll(func(f *flag.Flag) {
		name, text := flag.UnquoteUsage(f)
		if pre, rest, ok := strings.Cut(f.Usage, "`"); ok {
			// The back-quoted placeholder reads as a word in the text.
			if word, post, ok := strings.Cut(rest, "`"); ok && strings.Trim(word, "ABCDEFGHIJKLMNOPQRSTUVWXYZ") == "" {
				text = pre + strings.ToLower(word) + post
			}
		}
		left := "--" + f.Name
		if !isBoolFlag(f) {
			left += " " + valueName(name)
		}
		switch f.DefValue {
		case "", "0", "false", "0s", "[]":
		default:
			text += " (default " + f.DefValue + ")"
		}
		if n := runeLen(left); n > width && n <= 24 {
			width = n
		}
		rows = append(rows, row{left, text})
	})
	for _, r := range rows {
		if runeLen(r.left) > width {
			fmt.Fprintf(w, "  %s\n  %s  %s\n", r.left, strings.Repeat(" ", width), r.text)
			continue
		}
		fmt.Fprintf(w, "  %s%s  %s\n", r.left, strings.Repeat(" ", width-runeLen(r.left)), r.text)
	}
}

// valueName turns the flag package's type names into value placeholders.
func valueName(n string) string {
	switch n {
	case "string":
		return "TEXT"
	case "int", "uint":
		return "N"
	case "float":
		return "X"
	case "duration":
		return "TIME"
	case "value":
		return "VALUE"
	}
	return n
}

func isBoolFlag(f *flag.Flag) bool {
	b, ok := f.Value.(interface{ IsBoolFlag() bool })
	return ok && b.IsBoolFlag()
}

// parseFlags parses flags that may stand before, between or after the
// positional arguments, and returns the positional arguments. A negative
// number (trace -76.0268) is an argument, not a flag; "--" ends the flags.
// ok is false after --help (code exitOK; the help is printed) or a bad
// flag (code exitUsage; one sentence on stderr).
func parseFlags(fs *flag.FlagSet, args []string) (pos []string, code int, ok bool) {
	var flags []string
	for i := 0; i < len(args); i++ {
		a := args[i]
		if a == "--" {
			pos = append(pos, args[i+1:]...)
			break
		}
		if len(a) < 2 || a[0] != '-' || isNumber(a) {
			pos = append(pos, a)
			continue
		}
		flags = append(flags, a)
		name, _, hasValue := strings.Cut(strings.TrimLeft(a, "-"), "=")
		if f := fs.Lookup(name); f != nil && !hasValue && !isBoolFlag(f) && i+1 < len(args) {
			i++
			flags = append(flags, args[i])
		}
	}
	// The flag package prints its own error and calls Usage on any
	// error; both are silenced while it parses.
	usage, stderr := fs.Usage, fs.Output()
	fs.Usage = func() {}
	fs.SetOutput(io.Discard)
	err := fs.Parse(flags)
	fs.Usage = usage
	fs.SetOutput(stderr)
	switch {
	case errors.Is(err, flag.ErrHelp):
		usage()
		return nil, exitOK, false
	case err != nil:
		fmt.Fprintf(stderr, "moltrail %s: %s (`moltrail help %s` lists the flags)\n", fs.Name(), flagError(fs, err), fs.Name())
		return nil, exitUsage, false
	}
	return append(pos, fs.Args()...), 0, true
}

// isNumber reports whether a is a number, such as a negative figure given
// to trace.
func isNumber(a string) bool {
	_, err := strconv.ParseFloat(a, 64)
	return err == nil && len(a) > 1 && (a[1] == '.' || (a[1] >= '0' && a[1] <= '9'))
}

var (
	reUndefined = regexp.MustCompile(`^flag provided but not defined: -+(.*)$`)
	reBadValue  = regexp.MustCompile(`^invalid (?:boolean )?value "(.*)" for (?:flag )?-+([^:]+): (.*)$`)
	reNoValue   = regexp.MustCompile(`^flag needs an argument: -+(.*)$`)
	reSyntax    = regexp.MustCompile(`^bad flag syntax: (.*)$`)
)

// flagError words a flag-package error in moltrail's terms.
func flagError(fs *flag.FlagSet, err error) string {
	msg := err.Error()
	if m := reUndefined.FindStringSubmatch(msg); m != nil {
		return fmt.Sprintf("there is no flag --%s", m[1])
	}
	if m := reNoValue.FindStringSubmatch(msg); m != nil {
		return fmt.Sprintf("--%s needs a value", m[1])
	}
	if m := reSyntax.FindStringSubmatch(msg); m != nil {
		return fmt.Sprintf("cannot read %q as a flag", m[1])
	}
	if m := reBadValue.FindStringSubmatch(msg); m != nil {
		want := m[3]
		if f := fs.Lookup(m[2]); f != nil {
			switch {
			case isBoolFlag(f):
				want = "it takes no value (or =true, =false)"
			default:
				switch name, _ := flag.UnquoteUsage(f); name {
				case "int":
					want = "a whole number is needed"
				case "uint":
					want = "a whole number, 0 or more, is needed"
				case "float":
					want = "a number is needed"
				case "duration":
					want = "a duration such as 500ms, 30s or 2m is needed"
				}
			}
		}
		return fmt.Sprintf("--%s %q: %s", m[2], m[1], want)
	}
	return msg
}

// archiveFlags are the flags every archive-touching command takes.
type archiveFlags struct {
	dir  string
	wait time.Duration
}

func addArchiveFlags(fs *flag.FlagSet) *archiveFlags {
	a := &archiveFlags{}
	fs.StringVar(&a.dir, "archive", "", "archive `DIRECTORY` (default $MOLTRAIL_ARCHIVE, else ./moltrail-archive)")
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
	return nil, archiveErrCode(err), err
}

// archiveErrCode is the exit status for an error from the archive: a path
// that holds no archive or cannot hold one is bad input; anything else
// (in use, damaged, a failed write) is work that failed.
func archiveErrCode(err error) int {
	if errors.Is(err, archive.ErrNoArchive) || errors.Is(err, archive.ErrNotArchive) {
		return exitUsage
	}
	return exitFailed
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

func init() {
	register(Command{Name: "version", Summary: "this build: program version, revision, Go version, formats", Run: cmdVersion})
}

func cmdVersion(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("version", stderr, "[--json]")
	asJSON := fs.Bool("json", false, "print the build description as JSON")
	pos, code, ok := parseFlags(fs, args)
	if !ok {
		return code
	}
	if len(pos) > 0 {
		fmt.Fprintf(stderr, "moltrail version: unexpected argument %q\n", pos[0])
		return exitUsage
	}
	c := archive.CurrentCode()
	if *asJSON {
		printJSON(stdout, map[string]any{"code": c, "record_format": archive.RecordFormat})
		return exitOK
	}
	rev := c.Revision
	if rev == "" {
		rev = "unknown revision"
	}
	if c.Modified {
		rev += " (modified tree)"
	}
	fmt.Fprintf(stdout, "moltrail %s, source sha256 %s, %s, %s %s/%s, job encoding %s, record format %s\n", c.Version, c.SourceSHA256, rev, c.GoVersion, c.OS, c.Arch, c.CanonicalVersion, archive.RecordFormat)
	return exitOK
}
