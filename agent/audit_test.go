package agent

import (
	"errors"
	"os"
	"strings"
	"testing"

	"benchtender/record"
)

// keyOf is the key the agent made for a test campaign.
func keyOf(t *testing.T, tc *testCampaign) []byte {
	t.Helper()
	k, err := LoadAuditKey(tc.cfg, false)
	if err != nil {
		t.Fatal(err)
	}
	return k
}

// The daemon refuses to start on a broken trail (its own, with an entry
// deleted), touching neither the trail nor the journal.
func TestAgentRefusesBrokenAudit(t *testing.T) {
	tc := newTestCampaign(t, "3", defaultLimits)
	events, stop := tc.start(t)
	waitFor(t, events, "a handoff", kind(record.KindHandoffOK))
	stop()
	p := record.AuditPath(tc.cfg.Campaign.StateDir)
	data, _ := os.ReadFile(p)
	lines := strings.SplitAfter(string(data), "\n")
	if len(lines) < 4 {
		t.Fatalf("the trail has %d lines", len(lines))
	}
	broken := lines[0] + strings.Join(lines[2:], "")
	os.WriteFile(p, []byte(broken), 0o644)
	journal, _ := os.ReadFile(journalPath(tc.cfg.Campaign.StateDir))
	a, err := New(tc.cfg, Options{})
	if err != nil {
		t.Fatal(err)
	}
	err = a.Run(t.Context())
	if !errors.Is(err, record.ErrAuditBroken) {
		t.Fatalf("Run: %v, want ErrAuditBroken", err)
	}
	if after, _ := os.ReadFile(p); string(after) != broken {
		t.Error("the broken trail was changed")
	}
	if after, _ := os.ReadFile(journalPath(tc.cfg.Campaign.StateDir)); string(after) != string(journal) {
		t.Error("the journal was changed despite the broken trail")
	}
}

// A correction is a new entry pointing at the corrected one; the corrected
// entry stays as it was.
func TestCorrectionIsANewEntry(t *testing.T) {
	tc := newTestCampaign(t, "3", defaultLimits)
	events, stop := tc.start(t)
	waitFor(t, events, "a handoff", kind(record.KindHandoffOK))
	before, _ := os.ReadFile(record.AuditPath(tc.cfg.Campaign.StateDir))
	if _, err := RequestSignoff(tc.cfg, SignoffRequest{Action: ActionCorrect, Corrects: 1, By: "ada", Name: "Ada Tech", Reason: "proposal 1 was discussed at 08:00, not at night"}); err != nil {
		t.Fatal(err)
	}
	waitFor(t, events, "the correction", kind(record.KindCorrection))
	stop()
	after, _ := os.ReadFile(record.AuditPath(tc.cfg.Campaign.StateDir))
	if !strings.HasPrefix(string(after), string(before)) {
		t.Fatal("earlier entries changed")
	}
	if !strings.Contains(string(after[len(before):]), `"action":"correction","subject":"audit entry 1"`) || !strings.Contains(string(after), `"corrects":1`) {
		t.Errorf("correction entry missing:\n%s", after[len(before):])
	}
	if _, err := record.VerifyAudit(record.AuditPath(tc.cfg.Campaign.StateDir), keyOf(t, tc)); err != nil {
		t.Error(err)
	}
}
