package agent

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"benchtender/record"
)

// An export folder that cannot be read (misspelt, a share not mounted)
// holds handoffs: the instrument's results could never be seen. The move
// is proposed and kept; once the folder appears, it is handed off. Before
// (issue 20), setpoints went out to an instrument whose results the daemon
// could not see.
func TestLostExportFolderHoldsHandoffs(t *testing.T) {
	tc := newTestCampaign(t, "5", passLimits)
	exports := filepath.Join(tc.dir, "exports")
	if err := os.Remove(exports); err != nil {
		t.Fatal(err)
	}
	if ps := tc.cfg.FolderProblems(); len(ps) != 1 || !strings.Contains(ps[0], "export folder") || !strings.Contains(ps[0], "holds handoffs") {
		t.Errorf("check's folder problems: %q", ps)
	}
	events, stop := tc.start(t)
	defer stop()
	waitFor(t, events, "the first proposal", kind(record.KindProposal))
	noneFor(t, events, 1500*time.Millisecond, "handed off while the export folder is missing", func(e record.Entry) bool {
		return e.Kind == record.KindHandoff || e.Kind == record.KindHandoffOK
	})
	if ns := Notices(tc.cfg); len(ns) == 0 || !strings.Contains(strings.Join(ns, "\n"), "handoffs to instrument bench are held") {
		t.Errorf("status notices: %q", ns)
	}
	if err := os.Mkdir(exports, 0o755); err != nil {
		t.Fatal(err)
	}
	waitFor(t, events, "the handoff once the folder is back", kind(record.KindHandoffOK))
}

// check's folder warnings: none for a campaign whose folders exist and
// can be used; a handoff folder that does not exist is named.
func TestFolderProblems(t *testing.T) {
	tc := newTestCampaign(t, "5", passLimits)
	if ps := tc.cfg.FolderProblems(); len(ps) != 0 {
		t.Errorf("folders in place: %q", ps)
	}
	os.Remove(filepath.Join(tc.dir, "handoff"))
	if ps := tc.cfg.FolderProblems(); len(ps) != 1 || !strings.Contains(ps[0], "handoff folder") {
		t.Errorf("handoff folder missing: %q", ps)
	}
}

// A move the gate passes is handed off in the same step, not at the next
// tick: with a tick of an hour, the first handoff still comes at once,
// and so does the one after a result arrives (issue 21: about 0.6 s of a
// 0.7 s arrival-to-handoff was the wait for a 1 s tick).
func TestHandoffDoesNotWaitForTheTick(t *testing.T) {
	tc := newTestCampaign(t, "3", passLimits)
	events, stop := tc.startWith(t, Options{Proposer: fixedAt, Tick: time.Hour})
	defer stop()
	waitFor(t, events, "R0001 handed off without a tick", func(e record.Entry) bool { return e.Kind == record.KindHandoffOK && e.Run == "R0001" })
	tc.writeResult(t, "res_R0001.csv", resultFile("81,5"))
	waitFor(t, events, "R0002 handed off without a tick", func(e record.Entry) bool { return e.Kind == record.KindHandoffOK && e.Run == "R0002" })
}
