package agent

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"testing"
	"time"

	"benchtender/campaign"
	"benchtender/planner"
	"benchtender/record"
)

// fixedAt proposes the same setpoint for every run.
var fixedAt = fakeProposer{func(ctx context.Context, req planner.Request) (planner.Result, error) {
	return planner.Result{Proposal: campaign.Proposal{Setpoint: campaign.Setpoint{RunID: req.RunID, Point: campaign.Point{50, 3}}}}, nil
}}

func sha(b []byte) string { s := sha256.Sum256(b); return hex.EncodeToString(s[:]) }

// An instrument re-exports a corrected result under the same name: it
// becomes revision 2 of the run, the model takes the latest value, and
// the archive keeps a true copy of both versions, named by content.
func TestRevisionsAreKeptAndArchived(t *testing.T) {
	tc := newTestCampaign(t, "3", passLimits)
	events, stop := tc.startWith(t, Options{Proposer: fixedAt})
	defer stop()
	waitFor(t, events, "R0001 handed off", func(e record.Entry) bool { return e.Kind == record.KindHandoffOK && e.Run == "R0001" })
	first := resultFile("81,5")
	path := tc.writeResult(t, "res_R0001.csv", first)
	in1 := waitFor(t, events, "the first result", kind(record.KindIngest))
	time.Sleep(50 * time.Millisecond) // a later modification time
	second := resultFile("84,0")
	tc.writeResult(t, "res_R0001.csv", second)
	in2 := waitFor(t, events, "the corrected result", kind(record.KindIngest))
	stop()
	if in1.Revision != 0 || in2.Revision != 2 || in2.Run != "R0001" || in2.File != path {
		t.Fatalf("revisions %d and %d of %s (%s)", in1.Revision, in2.Revision, in2.Run, in2.File)
	}
	st := record.Replay(readJournalT(t, tc))
	r := st.Runs["R0001"]
	if r.Value != 84 || len(r.Files) != 2 || len(st.Trials()) != 1 || st.Trials()[0].Value != 84 {
		t.Fatalf("run %+v; trials %v", r, st.Trials())
	}
	for _, c := range []struct {
		e    record.Entry
		data string
	}{{in1, first}, {in2, second}} {
		got, err := os.ReadFile(c.e.Copy)
		if err != nil || string(got) != c.data || filepath.Base(c.e.Copy) != sha([]byte(c.data)) {
			t.Errorf("archive copy %s: %q, %v", c.e.Copy, got, err)
		}
		if !strings.HasPrefix(c.e.Copy, filepath.Join(tc.cfg.Campaign.StateDir, "archive")) {
			t.Errorf("archive copy outside the state folder: %s", c.e.Copy)
		}
	}
	// The export folder is as the instrument left it.
	if b, _ := os.ReadFile(path); string(b) != second {
		t.Errorf("export file changed: %q", b)
	}
}

// A result written while the agent is down (a restart between its
// arrival and its ingest) is ingested once at the next start, and not
// again at the one after.
func TestResultArrivingWhileDown(t *testing.T) {
	tc := newTestCampaign(t, "3", passLimits)
	events, stop := tc.startWith(t, Options{Proposer: fixedAt})
	waitFor(t, events, "R0001 handed off", func(e record.Entry) bool { return e.Kind == record.KindHandoffOK && e.Run == "R0001" })
	stop()
	tc.writeResult(t, "res_R0001.csv", resultFile("77,0"))
	for i := 0; i < 2; i++ {
		events, stop = tc.startWith(t, Options{Proposer: fixedAt})
		if i == 0 {
			waitFor(t, events, "the result", kind(record.KindIngest))
		} else {
			time.Sleep(500 * time.Millisecond) // several scans
		}
		stop()
	}
	n := 0
	for _, e := range readJournalT(t, tc) {
		if e.Kind == record.KindIngest {
			n++
		}
	}
	if n != 1 {
		t.Errorf("%d ingests, want 1", n)
	}
}

// Hostile names and a link out of the export folder are quarantined by
// name, with the reason, without a byte of them read or copied; once,
// also across a restart.
func TestHostileFilesAreRefusedUnread(t *testing.T) {
	if runtime.GOOS == "windows" {
		t.Skip("these names cannot be made on Windows")
	}
	tc := newTestCampaign(t, "3", passLimits)
	exports := filepath.Join(tc.dir, "exports")
	secret := filepath.Join(t.TempDir(), "secret.csv")
	os.WriteFile(secret, []byte(resultFile("99,9")), 0o644)
	os.Symlink(secret, filepath.Join(exports, "R0001_link.csv"))
	os.WriteFile(filepath.Join(exports, "CON.csv"), []byte(resultFile("50,0")), 0o644)
	os.WriteFile(filepath.Join(exports, "R0001\x1b[2J.csv"), []byte(resultFile("51,0")), 0o644)
	for round := 0; round < 2; round++ {
		events, stop := tc.startWith(t, Options{Proposer: fixedAt})
		if round == 0 {
			for i := 0; i < 3; i++ {
				waitFor(t, events, "a refusal", kind(record.KindQuarantine))
			}
		} else {
			time.Sleep(500 * time.Millisecond)
		}
		stop()
	}
	var qs []record.Entry
	for _, e := range readJournalT(t, tc) {
		switch e.Kind {
		case record.KindQuarantine:
			qs = append(qs, e)
		case record.KindIngest:
			t.Errorf("ingested %s", e.File)
		}
	}
	if len(qs) != 3 {
		t.Fatalf("%d quarantine entries, want 3 (once each, across the restart)", len(qs))
	}
	for _, q := range qs {
		note, err := os.ReadFile(q.Copy)
		if err != nil || q.SHA256 != "" || !strings.Contains(string(note), "was not read") {
			t.Errorf("%q: note %q, sha %q, %v", q.File, note, q.SHA256, err)
		}
		if strings.ContainsRune(string(note), 0x1b) {
			t.Errorf("the note carries the raw escape sequence: %q", note)
		}
	}
	des, _ := os.ReadDir(filepath.Join(tc.cfg.Campaign.StateDir, "quarantine"))
	for _, d := range des {
		if !strings.HasSuffix(d.Name(), ".reason.txt") {
			t.Errorf("quarantine holds a copy %s of a file never to be read", d.Name())
		}
	}
	if _, err := os.Stat(filepath.Join(tc.cfg.Campaign.StateDir, "archive")); err == nil {
		t.Error("something was archived")
	}
}

// A folder holding old exports: files older than max_age are left out;
// the same agent told to include old files takes them.
func TestOldFilesOnlyOnRequest(t *testing.T) {
	tc := newTestCampaign(t, "3", passLimits)
	tc.cfg.Instrument.Watch.MaxAge = 24 * time.Hour
	old := tc.writeResult(t, "R0900_2019.csv", "Instrument: test bench\r\nDate: 01.12.2019\r\nSample;Purity;Unit;temp;flow\r\nx;70,0;%;40;2\r\n")
	long := time.Now().Add(-30 * 24 * time.Hour)
	os.Chtimes(old, long, long)
	events, stop := tc.startWith(t, Options{Proposer: fixedAt})
	waitFor(t, events, "R0001 handed off", func(e record.Entry) bool { return e.Kind == record.KindHandoffOK && e.Run == "R0001" })
	time.Sleep(500 * time.Millisecond)
	stop()
	for _, e := range readJournalT(t, tc) {
		if e.File == old {
			t.Fatalf("an old file was taken without asking: %s %s", e.Kind, e.Reason)
		}
	}
	events, stop = tc.startWith(t, Options{Proposer: fixedAt, IncludeOld: true})
	e := waitFor(t, events, "the old file", func(e record.Entry) bool { return e.File == old })
	stop()
	if e.Kind != record.KindIngest && e.Kind != record.KindQuarantine {
		t.Errorf("old file recorded as %s", e.Kind)
	}
}
