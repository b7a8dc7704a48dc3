package archive

import (
	"bytes"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

// signed signs a record with the user's key (a test binary's own key in
// the temporary directory, see KeyPath).
func signed(t testing.TB, r *Record) *Record {
	t.Helper()
	k, err := UserKey()
	if err != nil {
		t.Fatal(err)
	}
	if err := k.Sign(r); err != nil {
		t.Fatal(err)
	}
	return r
}

// strangerKey is a key of someone else (a new one per test).
func strangerKey(t testing.TB) *SigningKey {
	t.Helper()
	k, err := createKey(filepath.Join(t.TempDir(), "keys", "stranger.json"))
	if err != nil {
		t.Fatal(err)
	}
	return k
}

func TestKeyFile(t *testing.T) {
	path := filepath.Join(t.TempDir(), "cfg", "moltrail", "signing-key.json")
	t.Setenv(KeyEnv, path)
	if k, err := ExistingUserKey(); k != nil || err != nil {
		t.Fatalf("a key exists before first use: %v %v", k, err)
	}
	k, err := UserKey()
	if err != nil {
		t.Fatal(err)
	}
	fi, err := os.Stat(path)
	if err != nil || fi.Mode().Perm() != 0o600 {
		t.Fatalf("key file mode %v (want 0600): %v", fi.Mode(), err)
	}
	if di, _ := os.Stat(filepath.Dir(path)); di.Mode().Perm() != 0o700 {
		t.Fatalf("key directory mode %v, want 0700", di.Mode())
	}
	again, err := readKey(path)
	if err != nil || again.PublicText() != k.PublicText() {
		t.Fatalf("the key read back differs: %v", err)
	}
	if pub, err := ParsePublicKey(" " + k.PublicText() + "\n"); err != nil || Fingerprint(pub) != k.Fingerprint() {
		t.Fatalf("public key text does not parse back: %v", err)
	}
	for _, bad := range []string{"", "ed25519:", "ed25519:AAAA", "rsa:" + k.PublicText()[8:], k.PublicText() + "AA"} {
		if _, err := ParsePublicKey(bad); err == nil {
			t.Errorf("public key %q accepted", bad)
		}
	}
	// A key file others can read is refused, naming the fix.
	os.Chmod(path, 0o644)
	if _, err := readKey(path); err == nil || !strings.Contains(err.Error(), "chmod 600") {
		t.Fatalf("a group-readable key was used: %v", err)
	}
	os.Chmod(path, 0o600)
	os.WriteFile(path, []byte(`{"format":"something else"}`), 0o600)
	if _, err := readKey(path); err == nil || !strings.Contains(err.Error(), KeyFileFormat) {
		t.Fatalf("a file that is not a key was used: %v", err)
	}
	// Two processes creating the key at once end with one key: the second
	// link fails and reads the first one's file.
	p2 := filepath.Join(t.TempDir(), "k.json")
	a, err1 := createKey(p2)
	b, err2 := createKey(p2)
	if err1 != nil || err2 != nil || a.PublicText() != b.PublicText() {
		t.Fatalf("racing creations gave two keys: %v %v", err1, err2)
	}
}

func TestSignatureLeavesIDAlone(t *testing.T) {
	r := fixture(t, 1, "hf", "sto-3g", nil, t0)
	id := r.ID
	plain, _ := r.Encode()
	signed(t, r)
	if err := r.Check(); err != nil || r.ID != id {
		t.Fatalf("signing changed the id or broke the hashes: %v", err)
	}
	enc, _ := r.Encode()
	if !bytes.HasPrefix(enc, plain[:len(plain)-1]) || !bytes.Contains(enc, []byte(`"signature":{"signature_format":"moltrail-signature/1"`)) {
		t.Fatalf("the signature block is not a trailing addition to the unsigned bytes:\n%s", enc)
	}
	if err := ValidateRecordJSON(enc); err != nil {
		t.Fatalf("signed record fails the schema: %v", err)
	}
	back, err := Decode(enc)
	if err != nil || back.VerifySignature().State != SigUntrusted {
		t.Fatalf("decoded signature does not verify: %v %+v", err, back.VerifySignature())
	}
	if c := NewTrustSet(nil, nil).Check(fixture(t, 2, "hf", "sto-3g", nil, t0)); c.State != SigUnsigned {
		t.Fatalf("unsigned record: %+v", c)
	}
	// Every damaged part of a block is named as an invalid signature.
	for name, edit := range map[string]func(g *Signature){
		"format": func(g *Signature) { g.Format = "moltrail-signature/9" },
		"key":    func(g *Signature) { g.PublicKey = "ed25519:xyz" },
		"value":  func(g *Signature) { g.Value = g.Value[:20] },
		"other":  func(g *Signature) { g.PublicKey = strangerKey(t).PublicText() },
	} {
		c := *r
		g := *r.Signature
		edit(&g)
		c.Signature = &g
		if s := c.VerifySignature(); s.State != SigInvalid || s.Problem == "" {
			t.Errorf("%s: damaged signature block gives %+v", name, s)
		}
	}
}

// reseal edits a stored record's results the way a forger would: the
// hashes are computed again, so the record is self-consistent.
func reseal(t *testing.T, r *Record) *Record {
	t.Helper()
	f := *r
	f.Results.EnergyHartree -= 0.001
	if err := f.Seal(); err != nil {
		t.Fatal(err)
	}
	return &f
}

// TestForgedRecord: a record edited and re-sealed keeps its old signature
// (which no longer matches) or carries the forger's (an untrusted key):
// verify names it, import refuses it (the untrusted one under
// TrustedOnly), and run never reuses it. Against a real badger archive.
func TestForgedRecord(t *testing.T) {
	dir := t.TempDir()
	s := openRW(t, dir)
	orig := signed(t, fixture(t, 1, "hf", "sto-3g", nil, t0))
	if _, err := s.Put(orig); err != nil {
		t.Fatal(err)
	}
	kept := reseal(t, orig)
	kept.Run.StartUTC = t0.Add(time.Hour).Format(time.RFC3339Nano)
	kept.Seal()
	if kept.Signature != nil {
		t.Fatal("Seal kept a signature of another id")
	}
	kept.Signature = orig.Signature // the old signature over the old id
	forger := strangerKey(t)
	resigned := reseal(t, orig)
	resigned.Run.StartUTC = t0.Add(2 * time.Hour).Format(time.RFC3339Nano)
	resigned.Seal()
	forger.Sign(resigned)
	if kept.Check() != nil || resigned.Check() != nil {
		t.Fatal("the forgeries should pass the hash checks")
	}

	rep, err := s.ImportRecords(Batch{Source: "forged.jsonl", Records: []*Record{kept}}, ImportPolicy{Partial: true}, nil)
	if err != nil || len(rep.Refused) != 1 || !strings.Contains(rep.Refused[0].Reason, "does not match the record's content") {
		t.Fatalf("a record with a signature that does not match was not refused: %+v %v", rep, err)
	}
	rep, err = s.ImportRecords(Batch{Source: "forged.jsonl", Records: []*Record{resigned}}, ImportPolicy{TrustedOnly: true}, nil)
	if !errors.Is(err, ErrRefused) || len(rep.Refused) != 1 || !strings.Contains(rep.Refused[0].Reason, forger.Fingerprint()) {
		t.Fatalf("a record signed by an untrusted key was taken under TrustedOnly: %+v %v", rep, err)
	}
	// Without TrustedOnly it comes in, and verify names it.
	if rep, err = s.ImportRecords(Batch{Source: "forged.jsonl", Records: []*Record{resigned}}, ImportPolicy{}, nil); err != nil || rep.Imported != 1 {
		t.Fatalf("import: %+v %v", rep, err)
	}
	// The other forgery goes around import, straight into the store.
	if _, err := s.Put(kept); err != nil {
		t.Fatal(err)
	}
	if found, _ := s.FindSameBuild(orig.InputKey, orig.Code); found == nil || found.ID != orig.ID {
		t.Fatalf("reuse picked a forgery: %v", found)
	}
	v, err := s.Verify()
	if err != nil {
		t.Fatal(err)
	}
	kinds := map[string]string{}
	for _, p := range v.Problems {
		if p.ID == kept.ID || p.ID == resigned.ID {
			kinds[p.ID] += p.Kind + " "
		}
	}
	if !strings.Contains(kinds[kept.ID], ProblemSignature) || !strings.Contains(kinds[resigned.ID], ProblemUntrusted) || v.Trusted != 1 || v.Untrusted != 1 {
		t.Fatalf("verify did not name both forgeries: %+v %+v", kinds, v)
	}
	// Trusting the forger's key is an explicit act; then only the broken
	// signature remains a finding.
	s.Close()
	s = openRW(t, dir)
	defer s.Close()
	if _, err := s.AddTrust(forger.PublicText(), "the forger", time.Now()); err != nil {
		t.Fatal(err)
	}
	v, _ = s.Verify()
	if v.Untrusted != 0 || v.Trusted != 2 || len(v.TrustList) != 1 || v.TrustList[0].Label != "the forger" {
		t.Fatalf("after trusting the key: %+v", v)
	}
	if _, err := s.RemoveTrust(forger.Fingerprint()[:8]); err != nil {
		t.Fatal(err)
	}
	if _, err := s.RemoveTrust(forger.Fingerprint()); err == nil {
		t.Fatal("a key removed twice")
	}
	if l, _ := s.TrustList(); len(l) != 0 {
		t.Fatalf("trust list after removal: %+v", l)
	}
}
