package agent

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"benchtender/record"
)

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
	waitFor(t, events, "the first proposal", kind(record.KindProposal))
	noneFor(t, events, 1500*time.Millisecond, "handed off over a setpoint file already in place", func(e record.Entry) bool {
		return e.Kind == record.KindHandoff && e.Run == "R0001"
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
	waitFor(t, events, "R0001 handed off once the file is moved away", func(e record.Entry) bool { return e.Kind == record.KindHandoffOK && e.Run == "R0001" })
}
