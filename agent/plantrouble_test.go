package agent

import (
	"context"
	"errors"
	"os"
	"strings"
	"sync/atomic"
	"testing"
	"time"

	"benchtender/planner"
	"benchtender/record"
)

// A planner that fails keeps the campaign from proposing: status and the
// console must say so (Notices), not only the log, and say it no longer
// once a proposal succeeds. A trouble file an earlier agent left is
// cleared when the next one starts.
func TestFailingPlannerIsANotice(t *testing.T) {
	tc := newTestCampaign(t, "3", passLimits)
	stale := PlanTrouble{Problem: "left by an earlier agent", Since: time.Now().Add(-time.Hour), Attempts: 9, Next: time.Now()}
	if err := os.MkdirAll(tc.cfg.Campaign.StateDir, 0o755); err != nil {
		t.Fatal(err)
	}
	if err := writePlanTrouble(tc.cfg.Campaign.StateDir, stale); err != nil {
		t.Fatal(err)
	}
	var failing atomic.Bool
	flaky := fakeProposer{func(ctx context.Context, req planner.Request) (planner.Result, error) {
		if failing.Load() {
			return planner.Result{}, errors.New("injected: the model cannot be fitted")
		}
		return fixedAt.propose(ctx, req)
	}}
	events, stop := tc.startWith(t, Options{Proposer: flaky})
	defer stop()

	notice := func() string {
		for _, n := range Notices(tc.cfg) {
			if strings.Contains(n, "PROPOSALS FAILING") {
				return n
			}
		}
		return ""
	}
	h := waitFor(t, events, "the first handoff", kind(record.KindHandoffOK))
	if n := notice(); n != "" {
		t.Errorf("the planner works, but a notice from an earlier agent stays: %q", n)
	}
	failing.Store(true)
	tc.writeResult(t, "res_"+h.Run+".csv", resultFile("81,5"))
	deadline := time.Now().Add(10 * time.Second)
	for n := notice(); !strings.Contains(n, "injected: the model cannot be fitted"); n = notice() {
		if time.Now().After(deadline) {
			t.Fatalf("no notice of the failing planner; notices %q", Notices(tc.cfg))
		}
		time.Sleep(50 * time.Millisecond)
	}
	if n := notice(); !strings.Contains(n, "no setpoint is written") {
		t.Errorf("notice %q", n)
	}
	failing.Store(false)
	waitFor(t, events, "a handoff once the planner works", kind(record.KindHandoffOK))
	if n := notice(); n != "" {
		t.Errorf("the planner works again, but the notice stays: %q", n)
	}
	if _, err := os.Stat(planTroublePath(tc.cfg.Campaign.StateDir)); !os.IsNotExist(err) {
		t.Errorf("planning.json after a successful proposal: %v", err)
	}
}
