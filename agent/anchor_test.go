package agent

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"benchtender/record"
)

// runUntilHandoffs runs a test campaign until n setpoints are handed off
// and returns it stopped, with its journal and trail on disk.
func runUntilHandoffs(t *testing.T, n int) *testCampaign {
	t.Helper()
	tc := newTestCampaign(t, "6", passLimits)
	events, stop := tc.startWith(t, Options{Proposer: fixedAt})
	for i := 1; i <= n; i++ {
		run := "R000" + string(rune('0'+i))
		waitFor(t, events, run+" handed off", func(e record.Entry) bool { return e.Kind == record.KindHandoffOK && e.Run == run })
		if i < n {
			tc.writeResult(t, "res_"+run+".csv", resultFile("8"+string(rune('0'+i))+",5"))
		}
	}
	stop()
	return tc
}

func trailLines(t *testing.T, tc *testCampaign) []string {
	t.Helper()
	data, err := os.ReadFile(record.AuditPath(tc.cfg.Campaign.StateDir))
	if err != nil {
		t.Fatal(err)
	}
	return strings.SplitAfter(strings.TrimSuffix(string(data), "\n"), "\n")
}

func startErr(t *testing.T, tc *testCampaign) error {
	t.Helper()
	a, err := New(tc.cfg, Options{Proposer: fixedAt})
	if err != nil {
		return err
	}
	// Long enough to start and settle; a daemon that started is then
	// stopped, and that is no error.
	ctx, cancel := context.WithTimeout(t.Context(), 1500*time.Millisecond)
	defer cancel()
	if err := a.Run(ctx); err != nil && !errors.Is(err, context.DeadlineExceeded) {
		return err
	}
	return nil
}

// Issue 19, as the hostile tester did it. Cutting the trail's last
// entries (two, or ten) is found by the journal, whose entries carry the
// trail's head: the daemon refuses to start and rebuilds nothing (before,
// it rebuilt the cut entries with new times and lost the audit-only
// ones). audit verify says the same. Cutting the last line alone looks
// like a crash between the two writes: verify reports it, and the daemon
// puts back exactly the line that was cut (same time, same hash) and says
// so. Cutting the journal's end is found by the trail.
func TestCutRecordIsFound(t *testing.T) {
	tc := runUntilHandoffs(t, 3)
	lines := trailLines(t, tc)
	os.WriteFile(record.AuditPath(tc.cfg.Campaign.StateDir), []byte(strings.Join(lines[:len(lines)-1], "")), 0o644)
	if _, err := CheckRecord(tc.cfg); !errors.Is(err, record.ErrRecordMismatch) || !strings.Contains(err.Error(), "lacks the journal's last entry") {
		t.Errorf("last line cut: audit verify says %v", err)
	}
	if err := startErr(t, tc); err != nil {
		t.Fatalf("last line cut: %v", err)
	}
	after := trailLines(t, tc)
	if len(after) <= len(lines) || strings.TrimSpace(strings.Join(after[:len(lines)], "")) != strings.TrimSpace(strings.Join(lines, "")) || !strings.Contains(after[len(lines)], "audit trail completed") {
		t.Fatalf("last line cut: the trail after the restart does not hold the cut line as it was, then a note")
	}
	for _, cut := range []int{2, 10} {
		tc := runUntilHandoffs(t, 3)
		lines := trailLines(t, tc)
		kept := strings.Join(lines[:len(lines)-cut], "")
		os.WriteFile(record.AuditPath(tc.cfg.Campaign.StateDir), []byte(kept), 0o644)
		if err := startErr(t, tc); !errors.Is(err, record.ErrRecordMismatch) {
			t.Fatalf("trail cut by %d: start gave %v, want ErrRecordMismatch", cut, err)
		}
		if after := strings.Join(trailLines(t, tc), ""); strings.TrimSpace(after) != strings.TrimSpace(kept) {
			t.Fatalf("trail cut by %d: the daemon wrote to it", cut)
		}
		if _, err := CheckRecord(tc.cfg); !errors.Is(err, record.ErrRecordMismatch) {
			t.Errorf("trail cut by %d: audit verify says %v", cut, err)
		}
	}
	tc = runUntilHandoffs(t, 3)
	es := readJournalT(t, tc)
	var n int
	for _, e := range es[:len(es)-2] {
		line, _ := record.EncodeEntry(e)
		n += len(line)
	}
	os.Truncate(journalPath(tc.cfg.Campaign.StateDir), int64(n))
	if err := startErr(t, tc); !errors.Is(err, record.ErrRecordMismatch) || !strings.Contains(err.Error(), "journal was cut") {
		t.Fatalf("journal cut: start gave %v", err)
	}
}

// An entry edited and the chain computed again with plain SHA-256 (what
// verified before, issue 19) does not verify: the chain is keyed.
func TestForgedTrailDoesNotVerify(t *testing.T) {
	tc := runUntilHandoffs(t, 2)
	lines := trailLines(t, tc)
	prev := ""
	var forged []string
	for i, l := range lines {
		var e record.AuditEntry
		if err := json.Unmarshal([]byte(l), &e); err != nil {
			t.Fatal(err)
		}
		if i == 2 {
			e.Reason = "approved by the night shift"
		}
		e.Prev, e.Hash = prev, ""
		b, _ := json.Marshal(e)
		h := sha256.Sum256(append([]byte(prev), b...))
		e.Hash = hex.EncodeToString(h[:])
		prev = e.Hash
		out, _ := json.Marshal(e)
		forged = append(forged, string(out)+"\n")
	}
	os.WriteFile(record.AuditPath(tc.cfg.Campaign.StateDir), []byte(strings.Join(forged, "")), 0o644)
	if _, err := CheckRecord(tc.cfg); !errors.Is(err, record.ErrAuditBroken) {
		t.Fatalf("forged trail: %v, want ErrAuditBroken", err)
	}
	// The key is not made anew for a trail that has entries.
	os.Remove(tc.cfg.Audit.KeyFile)
	if err := startErr(t, tc); !errors.Is(err, ErrAuditKey) {
		t.Fatalf("key removed: start gave %v, want ErrAuditKey", err)
	}
	if _, err := os.Stat(tc.cfg.Audit.KeyFile); !os.IsNotExist(err) {
		t.Error("a new key was made for an existing trail")
	}
}

// The one gap a crash leaves (the journal's last entry written, its audit
// entry not) is closed at start with the entry's own time; a person can
// accept any other mismatch, audited, and the daemon starts again.
func TestCrashGapAndAcceptance(t *testing.T) {
	tc := runUntilHandoffs(t, 2)
	lines := trailLines(t, tc)
	es := readJournalT(t, tc)
	last := es[len(es)-1]
	var ae record.AuditEntry
	json.Unmarshal([]byte(lines[len(lines)-1]), &ae)
	if record.DetailSeq(ae) != last.Seq {
		t.Fatalf("the trail's last entry is not the journal's last (%d, %d)", record.DetailSeq(ae), last.Seq)
	}
	os.WriteFile(record.AuditPath(tc.cfg.Campaign.StateDir), []byte(strings.Join(lines[:len(lines)-1], "")), 0o644)
	if err := startErr(t, tc); err != nil {
		t.Fatalf("crash gap: %v", err)
	}
	trail, _ := record.ReadAudit(record.AuditPath(tc.cfg.Campaign.StateDir))
	var redone *record.AuditEntry
	for i := range trail {
		if record.DetailSeq(trail[i]) == last.Seq {
			redone = &trail[i]
		}
	}
	if redone == nil || redone.Time != last.Time.UTC().Format(time.RFC3339Nano) {
		t.Fatalf("the gap's entry was audited as %+v; want the journal entry's own time %v", redone, last.Time)
	}
	if _, err := CheckRecord(tc.cfg); err != nil {
		t.Fatalf("after the gap was closed: %v", err)
	}

	// Cut two entries: refused; accepted by a person; starts.
	lines = trailLines(t, tc)
	os.WriteFile(record.AuditPath(tc.cfg.Campaign.StateDir), []byte(strings.Join(lines[:len(lines)-4], "")), 0o644)
	if err := startErr(t, tc); !errors.Is(err, record.ErrRecordMismatch) {
		t.Fatalf("cut trail: %v", err)
	}
	if _, err := AcceptMismatch(tc.cfg, "", "Ada Tech", "x", time.Now()); err == nil {
		t.Error("an acceptance without an id was recorded")
	}
	what, err := AcceptMismatch(tc.cfg, "ada", "Ada Tech", "restored from the night's backup; runs R0001-R0002 checked on the instrument", time.Now())
	if err != nil || !strings.Contains(what, "disagree") {
		t.Fatalf("accept: %q, %v", what, err)
	}
	if _, err := CheckRecord(tc.cfg); err != nil {
		t.Fatalf("after the acceptance: %v", err)
	}
	trail, _ = record.ReadAudit(record.AuditPath(tc.cfg.Campaign.StateDir))
	if a := trail[len(trail)-1]; a.Action != record.ActionAccept || a.Name != "Ada Tech" || a.Meaning == "" {
		t.Errorf("the acceptance is recorded as %+v", a)
	}
	if err := startErr(t, tc); err != nil {
		t.Fatalf("after the acceptance the daemon does not start: %v", err)
	}
	if _, err := AcceptMismatch(tc.cfg, "ada", "Ada Tech", "again", time.Now()); err == nil {
		t.Error("an acceptance with nothing to accept was recorded")
	}
}

// With a witness folder, the head copied there after every entry finds
// what the journal cannot: the trail and the journal cut together at
// matching points. Without the witness the same cut passes.
func TestWitnessFindsAMatchingCut(t *testing.T) {
	tc := newTestCampaign(t, "6", passLimits)
	tc.cfg.Audit.WitnessDir = filepath.Join(t.TempDir(), "other-disk")
	os.MkdirAll(tc.cfg.Audit.WitnessDir, 0o755)
	events, stop := tc.startWith(t, Options{Proposer: fixedAt})
	waitFor(t, events, "R0001 handed off", func(e record.Entry) bool { return e.Kind == record.KindHandoffOK && e.Run == "R0001" })
	tc.writeResult(t, "res_R0001.csv", resultFile("81,5"))
	waitFor(t, events, "R0002 handed off", func(e record.Entry) bool { return e.Kind == record.KindHandoffOK && e.Run == "R0002" })
	stop()
	sd := tc.cfg.Campaign.StateDir
	if _, err := CheckRecord(tc.cfg); err != nil {
		t.Fatalf("intact record with its witness: %v", err)
	}
	// Cut both at the first handoff's confirmation.
	for _, e := range readJournalT(t, tc) {
		if e.Kind == record.KindHandoffOK {
			cutRecordAfter(t, sd, readJournalT(t, tc), e.Seq)
			break
		}
	}
	if _, err := CheckRecord(tc.cfg); !errors.Is(err, record.ErrRecordMismatch) || !strings.Contains(err.Error(), "witness") {
		t.Fatalf("cut at matching points, with a witness: %v", err)
	}
	if err := startErr(t, tc); !errors.Is(err, record.ErrRecordMismatch) {
		t.Fatalf("start: %v", err)
	}
	blind := tc.cfg
	blind.Audit.WitnessDir = ""
	if _, err := CheckRecord(blind); err != nil {
		t.Fatalf("without the witness the matching cut is not found (as the README says), but got %v", err)
	}
}
