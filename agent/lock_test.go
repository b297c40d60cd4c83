package agent

import (
	"errors"
	"testing"

	"benchtender/record"
)

// A second agent on the same state folder refuses to start while the
// first runs; the lock goes with the first one.
func TestSecondAgentRefusesToStart(t *testing.T) {
	tc := newTestCampaign(t, "3", defaultLimits)
	events, stop := tc.start(t)
	waitFor(t, events, "a handoff", kind(record.KindHandoffOK))
	second, err := New(tc.cfg, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if err := second.Run(t.Context()); !errors.Is(err, record.ErrLocked) {
		t.Fatalf("second agent: %v, want ErrLocked", err)
	}
	stop()
	if err := record.CheckLocalFS(t.TempDir()); err != nil {
		t.Errorf("a local temp folder was taken for a network file system: %v", err)
	}
}
