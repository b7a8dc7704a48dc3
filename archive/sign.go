package archive

// Signatures.
//
// A record's id is a hash of its content: it shows that the content has not
// changed since the id was computed, but anyone can change a record and
// compute a new id. A signature shows who vouches for the content. Every
// record this build computes is signed with the Ed25519 key of the user who
// ran it; the signature block travels with the record (export, import,
// merge) and lies outside the bytes the id is computed from, so signing
// changes no id and records written before signatures existed keep their
// ids and stay readable (as unsigned records).
//
// The signed message is SignatureFormat, a newline, the record's id (64
// lower-case hex digits) and a newline. The id covers every other field of
// the record, so the signature covers them too.
//
// The private key lives outside the archive: in the file named by
// $MOLTRAIL_KEY, else in <user config dir>/moltrail/signing-key.json
// (os.UserConfigDir: $XDG_CONFIG_HOME or ~/.config on Linux), created with
// owner-only permissions on first use. A test binary that is given no
// $MOLTRAIL_KEY uses a key in the system's temporary directory instead,
// so tests never write into the user's configuration.

import (
	"bytes"
	"crypto/ed25519"
	"crypto/rand"
	"crypto/sha256"
	"encoding/base64"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"
)

// SignatureFormat names the layout of a record's signature block.
const SignatureFormat = "moltrail-signature/1"

// KeyFileFormat names the layout of the private-key file.
const KeyFileFormat = "moltrail-signing-key/1"

// KeyEnv names the environment variable that gives the key file's path.
const KeyEnv = "MOLTRAIL_KEY"

// publicKeyPrefix starts the text form of a public key.
const publicKeyPrefix = "ed25519:"

// Signature is the signature block of a record.
type Signature struct {
	Format string `json:"signature_format"`
	// PublicKey is the signer's public key in text form ("ed25519:" and
	// the standard base64 of the 32 key bytes).
	PublicKey string `json:"public_key"`
	// Value is the standard base64 of the 64-byte Ed25519 signature.
	Value string `json:"value"`
}

// signedMessage is what a signature of the record with this id signs.
func signedMessage(id string) []byte {
	return []byte(SignatureFormat + "\n" + id + "\n")
}

// FormatPublicKey returns the text form of a public key.
func FormatPublicKey(pub ed25519.PublicKey) string {
	return publicKeyPrefix + base64.StdEncoding.EncodeToString(pub)
}

// ParsePublicKey reads the text form of a public key (surrounding space
// allowed).
func ParsePublicKey(s string) (ed25519.PublicKey, error) {
	s = strings.TrimSpace(s)
	rest, ok := strings.CutPrefix(s, publicKeyPrefix)
	if !ok {
		return nil, fmt.Errorf("a public key starts with %q", publicKeyPrefix)
	}
	b, err := base64.StdEncoding.Strict().DecodeString(rest)
	if err != nil || len(b) != ed25519.PublicKeySize {
		return nil, fmt.Errorf("a public key is %q and the base64 of %d bytes", publicKeyPrefix, ed25519.PublicKeySize)
	}
	return ed25519.PublicKey(b), nil
}

// Fingerprint is the short name of a public key: the first 16 hex digits
// of the SHA-256 of its 32 bytes.
func Fingerprint(pub ed25519.PublicKey) string {
	s := sha256.Sum256(pub)
	return hex.EncodeToString(s[:8])
}

// SigningKey is a user's Ed25519 key pair.
type SigningKey struct {
	priv ed25519.PrivateKey
	// Path is the file the key was read from.
	Path string
}

// Public returns the public key.
func (k *SigningKey) Public() ed25519.PublicKey { return k.priv.Public().(ed25519.PublicKey) }

// PublicText returns the public key in text form.
func (k *SigningKey) PublicText() string { return FormatPublicKey(k.Public()) }

// Fingerprint returns the public key's fingerprint.
func (k *SigningKey) Fingerprint() string { return Fingerprint(k.Public()) }

// Sign adds this key's signature block to a sealed record.
func (k *SigningKey) Sign(r *Record) error {
	if len(r.ID) != idLen {
		return fmt.Errorf("record is not sealed; only a sealed record can be signed")
	}
	sig := ed25519.Sign(k.priv, signedMessage(r.ID))
	r.Signature = &Signature{Format: SignatureFormat, PublicKey: k.PublicText(), Value: base64.StdEncoding.EncodeToString(sig)}
	return nil
}

// keyFile is the JSON layout of the private-key file.
type keyFile struct {
	Format     string `json:"format"`
	Seed       string `json:"ed25519_seed_base64"`
	PublicKey  string `json:"public_key"`
	CreatedUTC string `json:"created_utc"`
}

// KeyPath returns where the signing key is kept: $MOLTRAIL_KEY, else the
// user's configuration directory (see the package notes on signatures).
func KeyPath() (string, error) {
	if p := os.Getenv(KeyEnv); p != "" {
		return p, nil
	}
	if testing.Testing() {
		return filepath.Join(os.TempDir(), fmt.Sprintf("moltrail-test-key-%d", os.Getuid()), "signing-key.json"), nil
	}
	dir, err := os.UserConfigDir()
	if err != nil {
		return "", fmt.Errorf("no place for the signing key: %v; set $%s to a file path", err, KeyEnv)
	}
	return filepath.Join(dir, "moltrail", "signing-key.json"), nil
}

var (
	keyMu    sync.Mutex
	keyCache = map[string]*SigningKey{}
)

// UserKey returns the user's signing key, creating it (with owner-only
// permissions) on first use.
func UserKey() (*SigningKey, error) { return loadKey(true) }

// ExistingUserKey returns the user's signing key without creating one; nil
// (and no error) when there is none yet.
func ExistingUserKey() (*SigningKey, error) { return loadKey(false) }

func loadKey(create bool) (*SigningKey, error) {
	path, err := KeyPath()
	if err != nil {
		if create {
			return nil, err
		}
		return nil, nil
	}
	keyMu.Lock()
	defer keyMu.Unlock()
	if k, ok := keyCache[path]; ok {
		return k, nil
	}
	k, err := readKey(path)
	if errors.Is(err, fs.ErrNotExist) {
		if !create {
			return nil, nil
		}
		k, err = createKey(path)
	}
	if err != nil {
		return nil, err
	}
	keyCache[path] = k
	return k, nil
}

// maxKeyFile bounds the key file read.
const maxKeyFile = 4096

func readKey(path string) (*SigningKey, error) {
	f, err := os.Open(path)
	if err != nil {
		if errors.Is(err, fs.ErrNotExist) {
			return nil, err
		}
		return nil, fmt.Errorf("signing key %s cannot be read: %v", path, pathErr(err))
	}
	defer f.Close()
	fi, err := f.Stat()
	if err != nil {
		return nil, fmt.Errorf("signing key %s cannot be read: %v", path, pathErr(err))
	}
	if !fi.Mode().IsRegular() {
		return nil, fmt.Errorf("signing key %s is not a regular file", path)
	}
	if fi.Mode().Perm()&0o077 != 0 {
		return nil, fmt.Errorf("signing key %s can be read or changed by other users (mode %04o); make it private with chmod 600 %s", path, fi.Mode().Perm(), path)
	}
	b := make([]byte, maxKeyFile+1)
	n, _ := f.Read(b)
	if n > maxKeyFile {
		return nil, fmt.Errorf("signing key %s is larger than a key file (%d bytes at most)", path, maxKeyFile)
	}
	var kf keyFile
	dec := json.NewDecoder(bytes.NewReader(b[:n]))
	dec.DisallowUnknownFields()
	if err := dec.Decode(&kf); err != nil || kf.Format != KeyFileFormat {
		return nil, fmt.Errorf("signing key %s is not a %s file", path, KeyFileFormat)
	}
	seed, err := base64.StdEncoding.Strict().DecodeString(kf.Seed)
	if err != nil || len(seed) != ed25519.SeedSize {
		return nil, fmt.Errorf("signing key %s: ed25519_seed_base64 is not the base64 of %d bytes", path, ed25519.SeedSize)
	}
	k := &SigningKey{priv: ed25519.NewKeyFromSeed(seed), Path: path}
	if kf.PublicKey != k.PublicText() {
		return nil, fmt.Errorf("signing key %s: public_key does not belong to the private key in the file", path)
	}
	return k, nil
}

// createKey makes a new key file at path. The file is written under a
// temporary name and linked into place, so two processes starting at once
// end up with the same key (the second one reads the first one's file).
func createKey(path string) (*SigningKey, error) {
	dir := filepath.Dir(path)
	if err := os.MkdirAll(dir, 0o700); err != nil {
		return nil, fmt.Errorf("signing key %s cannot be created: %v", path, pathErr(err))
	}
	seed := make([]byte, ed25519.SeedSize)
	if _, err := rand.Read(seed); err != nil {
		return nil, fmt.Errorf("signing key %s cannot be created: no random numbers: %v", path, err)
	}
	k := &SigningKey{priv: ed25519.NewKeyFromSeed(seed), Path: path}
	b, err := json.MarshalIndent(keyFile{Format: KeyFileFormat, Seed: base64.StdEncoding.EncodeToString(seed),
		PublicKey: k.PublicText(), CreatedUTC: time.Now().UTC().Format(time.RFC3339)}, "", "  ")
	if err != nil {
		return nil, err
	}
	tmp, err := os.CreateTemp(dir, ".signing-key-*")
	if err != nil {
		return nil, fmt.Errorf("signing key %s cannot be created: %v", path, pathErr(err))
	}
	defer os.Remove(tmp.Name())
	if err := tmp.Chmod(0o600); err == nil {
		_, err = tmp.Write(append(b, '\n'))
		if err == nil {
			err = tmp.Sync()
		}
		if cerr := tmp.Close(); err == nil {
			err = cerr
		}
		if err == nil {
			err = os.Link(tmp.Name(), path)
		}
		if errors.Is(err, fs.ErrExist) {
			return readKey(path)
		}
		if err == nil {
			return k, nil
		}
	}
	tmp.Close()
	return nil, fmt.Errorf("signing key %s cannot be created: %v", path, pathErr(err))
}

// Signature states of a record.
const (
	SigTrusted   = "trusted"
	SigUntrusted = "untrusted"
	SigUnsigned  = "unsigned"
	SigInvalid   = "invalid"
)

// SignatureCheck is what a record's signature block shows.
type SignatureCheck struct {
	// State is SigTrusted, SigUntrusted, SigUnsigned or SigInvalid.
	State string `json:"state"`
	// Fingerprint of the signer's key ("" when unsigned or unreadable).
	Fingerprint string `json:"key_fingerprint,omitempty"`
	// Signer is the trust list's label of the key, or "you" for the user's own key.
	Signer string `json:"signer,omitempty"`
	// Problem says why an invalid signature is invalid.
	Problem string `json:"problem,omitempty"`
}

// VerifySignature checks a record's signature block against its id (the
// id itself is checked by Record.Check). It does not look at trust: State
// is SigUntrusted for every valid signature; see TrustSet.Check.
func (r *Record) VerifySignature() SignatureCheck {
	g := r.Signature
	if g == nil {
		return SignatureCheck{State: SigUnsigned}
	}
	if g.Format != SignatureFormat {
		return SignatureCheck{State: SigInvalid, Problem: fmt.Sprintf("signature_format is %q; this build reads %q", g.Format, SignatureFormat)}
	}
	pub, err := ParsePublicKey(g.PublicKey)
	if err != nil {
		return SignatureCheck{State: SigInvalid, Problem: "public_key: " + err.Error()}
	}
	fp := Fingerprint(pub)
	sig, err := base64.StdEncoding.Strict().DecodeString(g.Value)
	if err != nil || len(sig) != ed25519.SignatureSize {
		return SignatureCheck{State: SigInvalid, Fingerprint: fp, Problem: fmt.Sprintf("the signature value is not the base64 of %d bytes", ed25519.SignatureSize)}
	}
	if !ed25519.Verify(pub, signedMessage(r.ID), sig) {
		return SignatureCheck{State: SigInvalid, Fingerprint: fp, Problem: fmt.Sprintf("the signature by key %s does not match the record's content (changed after signing, or a forgery)", fp)}
	}
	return SignatureCheck{State: SigUntrusted, Fingerprint: fp}
}

// TrustEntry is one public key on an archive's trust list.
type TrustEntry struct {
	PublicKey   string `json:"public_key"`
	Fingerprint string `json:"key_fingerprint"`
	Label       string `json:"label"`
	AddedUTC    string `json:"added_utc"`
}

// TrustSet is the set of keys whose signatures an archive accepts: the
// archive's trust list and the key of the user reading it.
type TrustSet struct {
	keys map[string]string // fingerprint → label
	own  string            // fingerprint of the user's own key, "" if none
}

// NewTrustSet builds a trust set from trust-list entries and the user's
// own key (nil: none).
func NewTrustSet(entries []TrustEntry, own *SigningKey) *TrustSet {
	t := &TrustSet{keys: map[string]string{}}
	for _, e := range entries {
		t.keys[e.Fingerprint] = e.Label
	}
	if own != nil {
		t.own = own.Fingerprint()
	}
	return t
}

// Check verifies a record's signature and says whether its key is trusted.
func (t *TrustSet) Check(r *Record) SignatureCheck {
	c := r.VerifySignature()
	if c.State != SigUntrusted {
		return c
	}
	if t == nil {
		return c
	}
	if label, ok := t.keys[c.Fingerprint]; ok {
		c.State, c.Signer = SigTrusted, label
		if c.Signer == "" {
			c.Signer = "key " + c.Fingerprint
		}
	} else if c.Fingerprint == t.own {
		c.State, c.Signer = SigTrusted, "you"
	}
	return c
}
