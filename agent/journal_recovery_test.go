package agent

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
	last, _ := encodeEntry(entries[len(entries)-1])
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
				line, _ := encodeEntry(e)
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

// A setpoint file already in the handoff folder for a run the journal
// never handed off (a journal restored from an older backup, say) is not
// overwritten and the run not sent: the instrument may have run it. Once
// a person moves the file away, the run is handed off.
func TestUnrecordedSetpointFileIsNotOverwritten(t *testing.T) {
	tc := newTestCampaign(t, "3", passLimits)
	old := filepath.Join(tc.dir, "handoff", "R0001.csv")
	if err := os.WriteFile(old, []byte("run,temp,flow,action\nR0001,50,3,earlier\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	events, stop := tc.start(t)
	defer stop()
	waitFor(t, events, "the first proposal", kind(KindProposal))
	noneFor(t, events, 1500*time.Millisecond, "handed off over a setpoint file already in place", func(e Entry) bool {
		return e.Kind == KindHandoff && e.Run == "R0001"
	})
	if data, _ := os.ReadFile(old); !strings.Contains(string(data), "earlier") {
		t.Fatalf("the file in place was changed: %q", data)
	}
	trail, _ := os.ReadFile(filepath.Join(tc.cfg.Campaign.StateDir, "audit.log"))
	if !strings.Contains(string(trail), "handoff refused") {
		t.Error("the audit trail does not record the refusal")
	}
	if err := os.Rename(old, old+".checked"); err != nil {
		t.Fatal(err)
	}
	waitFor(t, events, "R0001 handed off once the file is moved away", func(e Entry) bool { return e.Kind == KindHandoffOK && e.Run == "R0001" })
}
