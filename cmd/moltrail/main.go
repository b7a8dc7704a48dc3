// Command moltrail runs quantum-chemistry calculations, keeps every one of
// them in an append-only archive keyed by a hash of the full input, and
// answers questions about the stored records.
//
// # Adding a command
//
// Each subcommand lives in its own file (cmd_NAME.go) and registers itself
// from an init function; main.go need not change:
//
//	func init() {
//		register(Command{Name: "compare", Summary: "deviations from a reference set", Run: cmdCompare})
//	}
//
//	// cmdCompare gets the arguments after the command name and returns
//	// the exit status: exitOK, exitFailed (the work found a problem) or
//	// exitUsage (bad usage or bad input).
//	func cmdCompare(args []string, stdout, stderr io.Writer) int { ... }
//
// Helpers shared by commands: newFlags/parseFlags (flags may follow
// positional arguments), addArchiveFlags + openArchive (the --archive /
// $MOLTRAIL_ARCHIVE / ./moltrail-archive rule and the bounded wait),
// printJSON (exactly one JSON value on stdout) and fail (one-sentence
// error on stderr with the right exit status).
package main

import (
	"fmt"
	"io"
	"os"
	"sort"
	"strings"
)

// Exit statuses (the outside contract).
const (
	exitOK     = 0
	exitFailed = 1
	exitUsage  = 2
)

// Command is one subcommand of moltrail.
type Command struct {
	Name    string
	Summary string
	Run     func(args []string, stdout, stderr io.Writer) int
}

var commands = map[string]Command{}

// register adds a command; it panics on a duplicate name (a programming
// error caught by any test run).
func register(c Command) {
	if _, dup := commands[c.Name]; dup {
		panic("moltrail: command " + c.Name + " registered twice")
	}
	commands[c.Name] = c
}

func main() {
	os.Exit(dispatch(os.Args[1:], os.Stdout, os.Stderr))
}

func dispatch(args []string, stdout, stderr io.Writer) (code int) {
	defer func() {
		if r := recover(); r != nil {
			fmt.Fprintf(stderr, "moltrail: internal error (please report it): %v\n", r)
			code = exitFailed
		}
	}()
	if len(args) == 0 {
		usage(stderr)
		return exitUsage
	}
	args, err := hoistGlobalFlags(args)
	if err != nil {
		fmt.Fprintf(stderr, "moltrail: %v\n", err)
		return exitUsage
	}
	errs := &stream{Writer: stderr, out: stdout}
	switch args[0] {
	case "help", "-h", "-help", "--help":
		if len(args) == 1 {
			usage(stdout)
			return exitOK
		}
		c, ok := commands[args[1]]
		if !ok || len(args) > 2 {
			fmt.Fprintf(stderr, "moltrail help: %q is not a command; `moltrail help` lists them\n", strings.Join(args[1:], " "))
			return exitUsage
		}
		return c.Run([]string{"--help"}, stdout, errs)
	case "--version":
		return cmdVersion(args[1:], stdout, errs)
	}
	c, ok := commands[args[0]]
	if !ok {
		fmt.Fprintf(stderr, "moltrail: %q is not a command; `moltrail help` lists them\n", args[0])
		return exitUsage
	}
	return c.Run(args[1:], stdout, errs)
}

// globalFlags may stand before the command name; the value says whether
// the flag takes one.
var globalFlags = map[string]bool{"archive": true, "wait": true, "json": false}

// hoistGlobalFlags moves the flags given before the command name
// (moltrail --archive DIR list) to just after it, where the command reads
// them as its own.
func hoistGlobalFlags(args []string) ([]string, error) {
	var lead []string
	i := 0
	for ; i < len(args); i++ {
		a := args[i]
		if len(a) < 2 || a[0] != '-' || a == "--" {
			break
		}
		switch a {
		case "-h", "-help", "--help", "--version":
			if len(lead) == 0 {
				return args, nil
			}
			return nil, fmt.Errorf("%s cannot follow %s; give the command first (moltrail help lists them)", a, lead[0])
		}
		name, _, hasValue := strings.Cut(strings.TrimLeft(a, "-"), "=")
		takes, ok := globalFlags[name]
		if !ok {
			return nil, fmt.Errorf("%s before the command: only --archive, --wait and --json may come before it; give the command first (moltrail COMMAND %s)", a, a)
		}
		lead = append(lead, a)
		if takes && !hasValue {
			if i+1 >= len(args) {
				return nil, fmt.Errorf("--%s needs a value", name)
			}
			i++
			lead = append(lead, args[i])
		}
	}
	if len(lead) == 0 {
		return args, nil
	}
	if i >= len(args) || args[i] == "--" {
		return nil, fmt.Errorf("give a command after %s (moltrail help lists them)", strings.Join(lead, " "))
	}
	if args[i] == "help" {
		return args[i:], nil // help takes no flags; the ones before it change nothing
	}
	out := append([]string{args[i]}, lead...)
	return append(out, args[i+1:]...), nil
}

func usage(w io.Writer) {
	fmt.Fprintln(w, "moltrail — calculations with a memory")
	fmt.Fprintln(w, "")
	fmt.Fprintln(w, "usage: moltrail COMMAND [flags] [arguments]   (moltrail help COMMAND for its flags)")
	fmt.Fprintln(w, "       --archive DIRECTORY, --wait TIME and --json may also come before the command")
	fmt.Fprintln(w, "")
	var names []string
	for n := range commands {
		names = append(names, n)
	}
	sort.Strings(names)
	for _, n := range names {
		fmt.Fprintf(w, "  %-10s %s\n", n, commands[n].Summary)
	}
	fmt.Fprintln(w, "")
	fmt.Fprintln(w, "archive: --archive DIRECTORY, else $MOLTRAIL_ARCHIVE, else ./moltrail-archive")
	fmt.Fprintln(w, "exit status: 0 done, 1 the work failed or found a problem, 2 bad usage or input")
}

// fail prints one sentence on stderr and returns code.
func fail(stderr io.Writer, code int, cmd string, err error) int {
	msg := strings.TrimSpace(err.Error())
	fmt.Fprintf(stderr, "moltrail %s: %s\n", cmd, msg)
	return code
}
