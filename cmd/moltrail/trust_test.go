package main

import (
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"moltrail/archive"
)

// TestSignedRecordsAndTrust follows two users with their own keys: a
// record of the other user is imported, verify names it as signed by an
// untrusted key (exit 1), import --trusted-only refuses it, compare leaves
// it out, and an explicit trust add makes verify pass. A record edited
// and re-sealed, signed by the other user's key, is named the same way
// and is never reused by run.
func TestSignedRecordsAndTrust(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	alice := []string{archive.KeyEnv + "=" + filepath.Join(dir, "alice", "key.json")}
	bob := []string{archive.KeyEnv + "=" + filepath.Join(dir, "bob", "key.json")}
	xyz := writeFile(t, dir, "h2.xyz", h2XYZ)
	mine := filepath.Join(dir, "mine")
	theirs := filepath.Join(dir, "theirs")
	if r := moltrail(t, alice, "run", "--archive", mine, "--basis", "sto-3g", xyz); r.code != 0 {
		t.Fatalf("alice run: %s", r.stderr)
	}
	if fi, err := os.Stat(filepath.Join(dir, "alice", "key.json")); err != nil || fi.Mode().Perm() != 0o600 {
		t.Fatalf("alice's key file: %v %v", fi, err)
	}
	rb := moltrail(t, bob, "run", "--archive", theirs, "--basis", "sto-3g", "--method", "uhf", "--json", xyz)
	if rb.code != 0 {
		t.Fatalf("bob run: %s", rb.stderr)
	}
	bobRec := decodeRecord(t, rb.stdout)
	k := moltrail(t, bob, "key", "--json")
	var bobKey struct {
		Public string `json:"public_key"`
		FP     string `json:"key_fingerprint"`
	}
	if err := json.Unmarshal([]byte(k.stdout), &bobKey); err != nil || k.code != 0 || bobRec.Signature == nil || bobRec.Signature.PublicKey != bobKey.Public {
		t.Fatalf("bob's key: %v %+v %s", err, bobKey, k.stderr)
	}
	if v := moltrail(t, alice, "verify", "--archive", mine); v.code != 0 || !strings.Contains(v.stdout, "1 signed by trusted keys") {
		t.Fatalf("alice's own archive: exit %d %s", v.code, v.stdout)
	}

	exp := filepath.Join(dir, "bob.jsonl")
	if r := moltrail(t, bob, "export", "--archive", theirs, "--out", exp); r.code != 0 {
		t.Fatalf("export: %s", r.stderr)
	}
	if r := moltrail(t, alice, "import", "--archive", mine, "--trusted-only", exp); r.code != 2 || !strings.Contains(r.stderr, bobKey.FP) {
		t.Fatalf("--trusted-only took bob's record: exit %d %s", r.code, r.stderr)
	}
	if r := moltrail(t, alice, "import", "--archive", mine, exp); r.code != 0 {
		t.Fatalf("import: exit %d %s", r.code, r.stderr)
	}
	v := moltrail(t, alice, "verify", "--archive", mine)
	if v.code != 1 || !strings.Contains(v.stdout, "UNTRUSTED") || !strings.Contains(v.stdout, bobRec.ID) || !strings.Contains(v.stdout, bobKey.FP) {
		t.Fatalf("verify did not name bob's record as untrusted: exit %d\n%s", v.code, v.stdout)
	}
	c := moltrail(t, alice, "compare", "--archive", mine, "--refs", "builtin")
	if !strings.Contains(c.stderr, "1 signed by keys this archive does not trust") {
		t.Fatalf("compare did not leave bob's record out: %s", c.stderr)
	}

	// A forgery of alice's record: an energy changed and the hashes
	// recomputed, alice's signature kept (a forgery signed with another
	// key is the untrusted case above; see also archive's TestForgedRecord).
	line := strings.TrimSpace(moltrail(t, alice, "export", "--archive", mine, "--method", "hf", "--out", "-").stdout)
	orig := decodeRecord(t, line)
	forged := *orig
	forged.Results.EnergyHartree += 0.01
	if err := forged.Seal(); err != nil {
		t.Fatal(err)
	}
	stale := forged
	stale.Signature = orig.Signature
	enc, _ := stale.Encode()
	f1 := writeFile(t, dir, "stale.jsonl", string(enc)+"\n")
	if r := moltrail(t, alice, "import", "--archive", mine, "--partial", f1); r.code != 1 || !strings.Contains(r.stderr, "does not match the record's content") {
		t.Fatalf("a stale signature was accepted: exit %d %s", r.code, r.stderr)
	}
	if r := moltrail(t, alice, "run", "--archive", mine, "--basis", "sto-3g", xyz); r.code != 0 || !strings.Contains(r.stderr, "reused, nothing was computed") {
		t.Fatalf("run no longer reuses alice's own record: %s", r.stderr)
	}

	// Trusting bob's key is an explicit act, by the key's text or file.
	keyFile := filepath.Join(dir, "bob.pub")
	if r := moltrail(t, bob, "key", "--out", keyFile); r.code != 0 || strings.TrimSpace(r.stdout) != bobKey.Public {
		t.Fatalf("key --out: %s %s", r.stdout, r.stderr)
	}
	if r := moltrail(t, bob, "key", "--out", keyFile); r.code != 2 {
		t.Fatalf("key --out overwrote a file: exit %d", r.code)
	}
	if r := moltrail(t, alice, "trust", "add", "--archive", mine, keyFile); r.code != 2 || !strings.Contains(r.stderr, "--label") {
		t.Fatalf("trust add without a label: exit %d %s", r.code, r.stderr)
	}
	if r := moltrail(t, alice, "trust", "add", "--archive", mine, keyFile, "--label", "Bob"); r.code != 0 || !strings.Contains(r.stdout, bobKey.FP) {
		t.Fatalf("trust add: exit %d %s %s", r.code, r.stdout, r.stderr)
	}
	if r := moltrail(t, alice, "trust", "list", "--archive", mine); !strings.Contains(r.stdout, "Bob") {
		t.Fatalf("trust list: %s", r.stdout)
	}
	if v := moltrail(t, alice, "verify", "--archive", mine); v.code != 0 || !strings.Contains(v.stdout, "2 signed by trusted keys") {
		t.Fatalf("verify after trusting bob: exit %d %s", v.code, v.stdout)
	}
	if r := moltrail(t, alice, "trust", "remove", "--archive", mine, bobKey.FP[:8]); r.code != 0 {
		t.Fatalf("trust remove: %s", r.stderr)
	}
	if v := moltrail(t, alice, "verify", "--archive", mine); v.code != 1 {
		t.Fatalf("verify after removing bob's key: exit %d", v.code)
	}
	if r := moltrail(t, alice, "trust", "add", "--archive", mine, "/etc/hostname", "--label", "x"); r.code != 2 {
		t.Fatalf("trust add of a file that is not a key: exit %d", r.code)
	}
}
