package main

import (
	"fmt"
	"io"
	"os"
	"strings"
	"time"

	"moltrail/archive"
	"moltrail/internal/readfile"
)

func init() {
	register(Command{Name: "key", Summary: "your signing key: where it is kept and its public half, to give to others", Run: cmdKey})
	register(Command{Name: "trust", Summary: "the keys whose signatures an archive accepts: list, add, remove", Run: cmdTrust})
}

const keyNotes = `
Every record moltrail computes is signed with your Ed25519 key. The private
key is made on first use and kept, readable by you only, in $MOLTRAIL_KEY if
set, else in your configuration directory (on Linux ~/.config/moltrail/).
Give the public key (this command's output) to whoever should trust your
records; they add it with: moltrail trust add KEY --label "your name".`

func cmdKey(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("key", stderr, "[--out FILE] [--json]")
	asJSON := fs.Bool("json", false, "print the key's description as JSON")
	out := fs.String("out", "", "also write the public key to `FILE` (refused if the file exists)")
	addHelpNotes(fs, keyNotes)
	pos, code, ok := parseFlags(fs, args)
	if !ok {
		return code
	}
	if len(pos) > 0 {
		fmt.Fprintf(stderr, "moltrail key: unexpected argument %q\n", pos[0])
		return exitUsage
	}
	k, err := archive.UserKey()
	if err != nil {
		return fail(stderr, exitFailed, "key", err)
	}
	if *out != "" {
		if err := writeNewFile(*out, []byte(k.PublicText()+"\n")); err != nil {
			return fail(stderr, exitUsage, "key", fmt.Errorf("--out %s: %v", *out, err))
		}
	}
	if *asJSON {
		printJSON(stdout, map[string]string{"public_key": k.PublicText(), "key_fingerprint": k.Fingerprint(), "private_key_file": k.Path})
		return exitOK
	}
	fmt.Fprintf(stdout, "%s\n", k.PublicText())
	fmt.Fprintf(stderr, "moltrail key: fingerprint %s; private key in %s (keep it to yourself)\n", k.Fingerprint(), k.Path)
	return exitOK
}

const trustNotes = `
moltrail trust list                         the archive's trust list
moltrail trust add TEXT|FILE --label NAME   trust a public key: its text (ed25519:…,
                                            as moltrail key prints it) or a file holding it
moltrail trust remove TEXT                  take a key off the list: its text or its
                                            fingerprint (at least 8 hex digits)

Verify reports records signed by keys that are not trusted, import and
merge can refuse them (--trusted-only), and run and study never reuse them.
Your own key is always trusted by you and need not be on the list. The list
is kept in the archive and changes only through this command.`

func cmdTrust(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("trust", stderr, "list | add TEXT|FILE --label NAME | remove TEXT")
	af := addArchiveFlags(fs)
	asJSON := fs.Bool("json", false, "print the result as JSON")
	label := fs.String("label", "", "add: whose key it is (a `NAME` shown by verify)")
	addHelpNotes(fs, trustNotes)
	pos, code, ok := parseFlags(fs, args)
	if !ok {
		return code
	}
	if len(pos) == 0 {
		fmt.Fprintln(stderr, "moltrail trust: give list, add PUBLIC-KEY --label NAME, or remove FINGERPRINT")
		return exitUsage
	}
	switch verb := pos[0]; {
	case verb == "list" && len(pos) == 1:
		st, code, err := af.open(true, stderr)
		if err != nil {
			return fail(stderr, code, "trust", err)
		}
		defer st.Close()
		list, err := st.TrustList()
		if err != nil {
			return fail(stderr, exitFailed, "trust", err)
		}
		if *asJSON {
			printJSON(stdout, list)
			return exitOK
		}
		if len(list) == 0 {
			fmt.Fprintf(stdout, "the trust list of %s is empty (your own key is trusted all the same)\n", af.path())
			return exitOK
		}
		t := &table{head: []string{"fingerprint", "label", "added UTC", "public key"}}
		for _, e := range list {
			t.add(e.Fingerprint, e.Label, utc(e.AddedUTC), e.PublicKey)
		}
		t.write(stdout)
		return exitOK
	case verb == "add" && len(pos) == 2:
		key, err := publicKeyArg(pos[1])
		if err != nil {
			return fail(stderr, exitUsage, "trust", err)
		}
		if strings.TrimSpace(*label) == "" {
			fmt.Fprintln(stderr, "moltrail trust add: give --label NAME: whose key it is")
			return exitUsage
		}
		if _, err := archive.ParsePublicKey(key); err != nil {
			return fail(stderr, exitUsage, "trust", fmt.Errorf("%s: %v", pos[1], err))
		}
		st, code, err := af.open(false, stderr)
		if err != nil {
			return fail(stderr, code, "trust", err)
		}
		defer st.Close()
		e, err := st.AddTrust(key, *label, time.Now())
		if err != nil {
			return fail(stderr, archiveErrCode(err), "trust", err)
		}
		if *asJSON {
			printJSON(stdout, e)
		} else {
			fmt.Fprintf(stdout, "key %s (%s) is now trusted by %s\n", e.Fingerprint, e.Label, af.path())
		}
		return exitOK
	case verb == "remove" && len(pos) == 2:
		st, code, err := af.open(false, stderr)
		if err != nil {
			return fail(stderr, code, "trust", err)
		}
		defer st.Close()
		e, err := st.RemoveTrust(pos[1])
		if err != nil {
			return fail(stderr, exitUsage, "trust", err)
		}
		if *asJSON {
			printJSON(stdout, e)
		} else {
			fmt.Fprintf(stdout, "key %s (%s) is no longer trusted by %s; records it signed stay and verify names them\n", e.Fingerprint, e.Label, af.path())
		}
		return exitOK
	}
	fmt.Fprintf(stderr, "moltrail trust: %q is not list, add PUBLIC-KEY --label NAME, or remove FINGERPRINT\n", strings.Join(pos, " "))
	return exitUsage
}

// publicKeyArg returns a public key given as text or as the name of a
// file holding it (as `moltrail key --out` writes).
func publicKeyArg(arg string) (string, error) {
	if strings.HasPrefix(strings.TrimSpace(arg), "ed25519:") {
		return arg, nil
	}
	b, err := readfile.Read(arg, 4096)
	if err != nil {
		return "", fmt.Errorf("%q is neither a public key (ed25519:…) nor a readable file: %v", arg, pathErr(err))
	}
	return strings.TrimSpace(string(b)), nil
}

// writeNewFile writes a file that must not exist yet.
func writeNewFile(path string, b []byte) error {
	if err := checkOutPath(path); err != nil {
		return err
	}
	f, err := os.OpenFile(path, os.O_WRONLY|os.O_CREATE|os.O_EXCL, 0o666)
	if err != nil {
		return pathErr(err)
	}
	if _, err := f.Write(b); err != nil {
		f.Close()
		return pathErr(err)
	}
	return f.Close()
}
