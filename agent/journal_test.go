package agent

import (
	"errors"
	"os"
	"path/filepath"
	"testing"
)

func writeEntries(t *testing.T, path string, n int) []Entry {
	t.Helper()
	j, _, _, err := OpenJournal(path)
	if err != nil {
		t.Fatal(err)
	}
	var out []Entry
	for i := 0; i < n; i++ {
		e, err := j.Append(Entry{Kind: KindIngest, Run: "R0001", SHA256: string(rune('a' + i)), Value: float64(i) + 0.5})
		if err != nil {
			t.Fatal(err)
		}
		out = append(out, e)
	}
	if err := j.Close(); err != nil {
		t.Fatal(err)
	}
	return out
}

func TestJournalRoundTrip(t *testing.T) {
	path := filepath.Join(t.TempDir(), "journal.log")
	want := writeEntries(t, path, 3)
	j, got, cut, err := OpenJournal(path)
	if err != nil || cut != 0 {
		t.Fatalf("reopen: %v, cut %d", err, cut)
	}
	defer j.Close()
	if len(got) != 3 || got[2].Seq != 3 || got[2].Value != want[2].Value {
		t.Fatalf("got %+v", got)
	}
	e, err := j.Append(Entry{Kind: KindHandoff, Run: "R0002"})
	if err != nil || e.Seq != 4 {
		t.Fatalf("append after reopen: seq %d, %v", e.Seq, err)
	}
}

// A record torn by a crash, cut at any byte of the last record, is cut off
// on open and the records before it are kept; a record whole but for its
// line end is kept and ended.
func TestJournalTornTailAtEveryOffset(t *testing.T) {
	dir := t.TempDir()
	full := filepath.Join(dir, "full.log")
	writeEntries(t, full, 3)
	data, err := os.ReadFile(full)
	if err != nil {
		t.Fatal(err)
	}
	entries, _ := ReadJournal(full)
	line, _ := encodeEntry(entries[2])
	start := len(data) - len(line)
	for cut := start; cut < len(data); cut++ {
		path := filepath.Join(dir, "j.log")
		if err := os.WriteFile(path, data[:cut], 0o644); err != nil {
			t.Fatal(err)
		}
		j, got, removed, err := OpenJournal(path)
		if err != nil {
			t.Fatalf("cut at %d: %v", cut, err)
		}
		j.Close()
		if cut == len(data)-1 {
			// Whole but for its line end: kept, and the line end written.
			if after, _ := os.ReadFile(path); len(got) != 3 || string(after) != string(data) {
				t.Fatalf("cut before the last line end: %d entries, file %q", len(got), after[start:])
			}
			continue
		}
		if len(got) != 2 || removed != int64(cut-start) {
			t.Fatalf("cut at %d: %d entries, %d bytes removed; want 2 and %d", cut, len(got), removed, cut-start)
		}
		if fi, _ := os.Stat(path); fi.Size() != int64(start) {
			t.Fatalf("cut at %d: file is %d bytes, want %d", cut, fi.Size(), start)
		}
	}
}

// Damage before the last record means the journal cannot be trusted: open
// refuses, and the file is left exactly as it was.
func TestJournalCorruptionInTheMiddleRefusesToOpen(t *testing.T) {
	path := filepath.Join(t.TempDir(), "journal.log")
	writeEntries(t, path, 3)
	data, _ := os.ReadFile(path)
	entries, _ := ReadJournal(path)
	first, _ := encodeEntry(entries[0])
	bad := append([]byte(nil), data...)
	bad[len(first)+30] ^= 0x20 // flip a bit inside the second record
	if err := os.WriteFile(path, bad, 0o644); err != nil {
		t.Fatal(err)
	}
	_, _, _, err := OpenJournal(path)
	if !errors.Is(err, ErrCorrupt) {
		t.Fatalf("err %v, want ErrCorrupt", err)
	}
	after, _ := os.ReadFile(path)
	if string(after) != string(bad) {
		t.Error("a corrupt journal was changed")
	}
}

// A second agent on the same state folder refuses to start while the
// first runs; the lock goes with the first one.
func TestSecondAgentRefusesToStart(t *testing.T) {
	tc := newTestCampaign(t, "3", defaultLimits)
	events, stop := tc.start(t)
	waitFor(t, events, "a handoff", kind(KindHandoffOK))
	second, err := New(tc.cfg, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if err := second.Run(t.Context()); !errors.Is(err, ErrLocked) {
		t.Fatalf("second agent: %v, want ErrLocked", err)
	}
	stop()
	if err := checkLocalFS(t.TempDir()); err != nil {
		t.Errorf("a local temp folder was taken for a network file system: %v", err)
	}
}
