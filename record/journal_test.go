package record

import (
	"errors"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"
	"time"

	"benchtender/campaign"
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
	line, _ := EncodeEntry(entries[2])
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
	first, _ := EncodeEntry(entries[0])
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

// recoveryJournal writes a journal ending in a handoff (intent, then in
// place) and returns its bytes and entries.
func recoveryJournal(t testing.TB, dir string) ([]byte, []Entry) {
	t.Helper()
	path := filepath.Join(dir, "orig.log")
	j, _, _, err := OpenJournal(path)
	if err != nil {
		t.Fatal(err)
	}
	at := time.Date(2026, 12, 4, 8, 0, 0, 0, time.UTC)
	for _, e := range []Entry{
		{Kind: KindProposal, Run: "R0001", Point: campaign.Point{41.5, 12}, Method: "initial design"},
		{Kind: KindHandoff, Run: "R0001", ActionID: "h-R0001-1a2b", Point: campaign.Point{41.5, 12}},
		{Kind: KindHandoffOK, Run: "R0001", ActionID: "h-R0001-1a2b", File: "handoff/R0001.csv"},
	} {
		e.Time = at
		if _, err := j.Append(e); err != nil {
			t.Fatal(err)
		}
	}
	j.Close()
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	entries, err := ReadJournal(path)
	if err != nil {
		t.Fatal(err)
	}
	return data, entries
}

// A complete last record damaged by one flipped byte is corruption, not
// a torn write: open refuses with a message naming the line, and leaves
// the file as it was. Before (issue 19) it was cut as torn, and when it
// was a handoff the instrument had taken, the same setpoint was written
// again. Checked at every byte of the last record, its line end included.
func TestJournalDamagedLastRecordRefuses(t *testing.T) {
	dir := t.TempDir()
	data, entries := recoveryJournal(t, dir)
	last, _ := EncodeEntry(entries[len(entries)-1])
	start := len(data) - len(last)
	for i := start; i < len(data); i++ {
		bad := append([]byte(nil), data...)
		bad[i] ^= 0x01
		path := filepath.Join(dir, "j.log")
		os.WriteFile(path, bad, 0o644)
		_, got, _, err := OpenJournal(path)
		if err == nil {
			// Only a change the record cannot tell (a checksum digit's
			// case) may pass, and then every entry is as written.
			if !sameEntries(got, entries) {
				t.Fatalf("byte %d flipped: opened with %d entries, want ErrCorrupt or all %d unchanged", i, len(got), len(entries))
			}
			continue
		}
		if !errors.Is(err, ErrCorrupt) || !strings.Contains(err.Error(), "line 3") {
			t.Fatalf("byte %d flipped: %v; want ErrCorrupt naming line 3", i, err)
		}
		if after, _ := os.ReadFile(path); string(after) != string(bad) {
			t.Fatalf("byte %d flipped: the damaged journal was changed", i)
		}
	}
}

// FuzzJournalRecovery damages a journal ending in a handoff, by cutting
// it at any byte (what a crash leaves) or flipping any byte (what a
// failing disk leaves), and reads it as a restart would. Never a silent
// loss: a cut gives exactly the records wholly before it (a record whole
// but for its line end counts as whole; a part of one is dropped, nothing
// else), a flipped byte gives ErrCorrupt or every record unchanged. So a handoff on record is never forgotten and sent twice.
func FuzzJournalRecovery(f *testing.F) {
	for _, seed := range []struct {
		at   uint
		flip byte
	}{{0, 0}, {10, 0}, {150, 0}, {299, 0}, {5, 1}, {120, 0x20}, {300, 0x40}, {999, 0x0a}} {
		f.Add(seed.at, seed.flip)
	}
	f.Fuzz(func(t *testing.T, at uint, flip byte) {
		dir := t.TempDir()
		data, entries := recoveryJournal(t, dir)
		at %= uint(len(data))
		var damaged []byte
		if flip == 0 {
			damaged = data[:at]
		} else {
			damaged = append([]byte(nil), data...)
			damaged[at] ^= flip
		}
		path := filepath.Join(dir, "j.log")
		os.WriteFile(path, damaged, 0o644)
		got, good, _, err := readJournal(path)
		if flip == 0 {
			if err != nil {
				t.Fatalf("cut at %d: %v", at, err)
			}
			whole := 0
			var off int
			for _, e := range entries {
				line, _ := EncodeEntry(e)
				if off+len(line)-1 > int(at) {
					break
				}
				// A record whole but for its line end is kept.
				off += min(len(line), int(at)-off)
				whole++
			}
			if !sameEntries(got, entries[:whole]) || good != int64(off) {
				t.Fatalf("cut at %d: %d entries ending at byte %d; want the %d records wholly before the cut, ending at %d", at, len(got), good, whole, off)
			}
			return
		}
		if err != nil {
			if !errors.Is(err, ErrCorrupt) {
				t.Fatalf("byte %d flipped by %#x: %v, want ErrCorrupt", at, flip, err)
			}
			return
		}
		if !sameEntries(got, entries) {
			t.Fatalf("byte %d flipped by %#x: %d entries; want ErrCorrupt or all %d unchanged", at, flip, len(got), len(entries))
		}
	})
}

func sameEntries(a, b []Entry) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if !reflect.DeepEqual(a[i], b[i]) {
			return false
		}
	}
	return true
}
