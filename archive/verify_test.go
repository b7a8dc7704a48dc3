package archive

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

// copyArchive copies an archive directory (flat: badger keeps no
// subdirectories).
func copyArchive(t *testing.T, src, dst string) {
	t.Helper()
	if err := os.MkdirAll(dst, 0o755); err != nil {
		t.Fatal(err)
	}
	ents, _ := os.ReadDir(src)
	for _, e := range ents {
		b, err := os.ReadFile(filepath.Join(src, e.Name()))
		if err != nil {
			t.Fatal(err)
		}
		os.WriteFile(filepath.Join(dst, e.Name()), b, 0o644)
	}
}

// TestVerifyFindsDamage damages the table file of a real archive — a
// 4 KiB block zeroed, single bytes flipped, at offsets spread over the
// file — and checks that verify never says all is well: it names the
// damaged table ("archive is damaged: …"), and names as lost every
// record that listings still show but whose body cannot be read. The
// other commands' reads either work or fail with the same sentence; none
// panics.
func TestVerifyFindsDamage(t *testing.T) {
	root := t.TempDir()
	good := filepath.Join(root, "good")
	s := openRW(t, good)
	var recs []*Record
	for i := 0; i < 300; i++ {
		recs = append(recs, fixture(t, i, "hf", "sto-3g", map[string]string{"k": fmt.Sprint(i % 3)}, t0.Add(time.Duration(i)*time.Second)))
	}
	if _, err := s.PutMany(recs); err != nil {
		t.Fatal(err)
	}
	s.Close()
	ssts, _ := filepath.Glob(filepath.Join(good, "*.sst"))
	if len(ssts) != 1 {
		t.Fatalf("want one table file, found %d", len(ssts))
	}
	fi, _ := os.Stat(ssts[0])
	size := fi.Size()
	type trial struct {
		name string
		edit func(b []byte)
	}
	var trials []trial
	for k := int64(0); k < 8; k++ {
		off := (size - 8192) * k / 8 &^ 4095
		trials = append(trials, trial{fmt.Sprintf("zeroed block at %d", off), func(b []byte) { copy(b[off:off+4096], make([]byte, 4096)) }})
	}
	for k := int64(1); k <= 8; k++ {
		off := (size - 4096) * k / 9
		trials = append(trials, trial{fmt.Sprintf("byte flipped at %d", off), func(b []byte) { b[off] ^= 0x10 }})
	}
	lostSeen := 0
	for i, tr := range trials {
		dir := filepath.Join(root, fmt.Sprint(i))
		copyArchive(t, good, dir)
		p := filepath.Join(dir, filepath.Base(ssts[0]))
		b, _ := os.ReadFile(p)
		tr.edit(b)
		os.WriteFile(p, b, 0o644)
		st, err := Open(dir, OpenOptions{ReadOnly: true, Wait: -1})
		if err != nil {
			if !errors.Is(err, ErrDamaged) || !strings.Contains(err.Error(), "is damaged: table file") {
				t.Errorf("%s: open: %v", tr.name, err)
			}
			continue
		}
		rep, err := st.Verify()
		if err != nil {
			t.Errorf("%s: verify failed outright: %v", tr.name, err)
		}
		damaged := false
		lost := map[string]bool{}
		for _, p := range rep.Problems {
			damaged = damaged || (p.Kind == ProblemDamaged && strings.Contains(p.Problem, "is damaged: table file"))
			if p.Kind == ProblemLost {
				lost[p.ID] = true
			}
		}
		if !damaged {
			t.Errorf("%s: verify did not say the archive is damaged: %+v", tr.name, rep.Problems)
		}
		// Every record a listing shows but that cannot be read is named.
		sums, lerr := st.List(Filter{})
		for _, sm := range sums {
			if _, _, err := st.Get(sm.ID); err != nil && !lost[sm.ID] {
				t.Errorf("%s: record %s is listed, unreadable (%v), and not named as lost", tr.name, sm.ID[:12], err)
			}
		}
		lostSeen += len(lost)
		_, xerr := st.Export(io.Discard, Filter{})
		for _, err := range []error{lerr, xerr} {
			if err != nil && !errors.Is(err, ErrDamaged) {
				t.Errorf("%s: a read failed without the damage sentence: %v", tr.name, err)
			}
		}
		st.Close()
	}
	if lostSeen == 0 {
		t.Error("no trial lost a record body: the trials do not reach the records")
	}
	// The undamaged archive verifies clean.
	st, err := Open(good, OpenOptions{ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	if rep, _ := st.Verify(); len(rep.Problems) != 0 || rep.Records != 300 || rep.Unsigned != 300 {
		t.Fatalf("clean archive: %+v", rep)
	}
}

// TestVerifyCrossChecksIndex removes and adds entries behind the store's
// back: a record body deleted (its summary and index entries remain), an
// index entry that does not belong to its record, a note whose record is
// gone. Each is named.
func TestVerifyCrossChecksIndex(t *testing.T) {
	s := openRW(t, t.TempDir())
	defer s.Close()
	a := fixture(t, 1, "hf", "sto-3g", map[string]string{"set": "a"}, t0)
	b := fixture(t, 2, "hf", "sto-3g", nil, t0.Add(time.Second))
	s.PutMany([]*Record{a, b})
	if _, err := s.AddNote(a.ID, "a remark", t0); err != nil {
		t.Fatal(err)
	}
	txn := s.db.NewTransaction(true)
	txn.Delete([]byte(pRecord + a.ID))
	wrong := append(indexPrefix(FieldMethod, "mp2"), recordTS(b)+b.ID...)
	txn.Set(wrong, nil)
	if err := txn.Commit(); err != nil {
		t.Fatal(err)
	}
	rep, err := s.Verify()
	if err != nil {
		t.Fatal(err)
	}
	var got []string
	for _, p := range rep.Problems {
		got = append(got, p.Kind+" "+short(p.ID)+" "+p.Problem)
	}
	all := strings.Join(got, "\n")
	if !strings.Contains(all, "lost "+short(a.ID)) || !strings.Contains(all, "index "+short(b.ID)+` index entry "x/method|mp2|`) {
		t.Fatalf("verify missed what was removed or added:\n%s", all)
	}
	if strings.Contains(all, "note about record") {
		t.Fatalf("the note of a lost record is named twice:\n%s", all)
	}
	// list still shows the lost record; show and export say the archive is damaged.
	if _, _, err := s.Get(a.ID); !errors.Is(err, ErrDamaged) {
		t.Fatalf("get of a lost record: %v", err)
	}
	if _, err := s.Resolve(a.ID[:8]); !errors.Is(err, ErrDamaged) {
		t.Fatalf("resolve of a lost record: %v", err)
	}
	if _, err := s.Export(&bytes.Buffer{}, Filter{}); !errors.Is(err, ErrDamaged) {
		t.Fatalf("export over a lost record: %v", err)
	}
}
