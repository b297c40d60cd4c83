package agent

import (
	"context"
	"fmt"
	"strings"
	"sync"
	"testing"

	"benchtender/planner"
	"benchtender/record"
)

// previousRecorder passes requests to the campaign's planner and notes,
// for each, whether the last model came with it.
type previousRecorder struct {
	inner Proposer
	mu    sync.Mutex
	held  []bool
}

func (p *previousRecorder) Propose(ctx context.Context, req planner.Request) (planner.Result, error) {
	p.mu.Lock()
	p.held = append(p.held, req.Previous != nil)
	p.mu.Unlock()
	return p.inner.Propose(ctx, req)
}

// A refit request (benchtender refit) is judged, journalled and audited
// like a sign-off, and the next proposal is asked without the last model,
// so it fits afresh; the one after holds the new fit again.
func TestRefitRequest(t *testing.T) {
	tc := newTestCampaign(t, "7", passLimits)
	rec := &previousRecorder{inner: planner.New(tc.cfg.Campaign, tc.cfg.Planner)}
	events, stop := tc.startWith(t, Options{Proposer: rec})
	defer stop()
	n := 0
	respond := func(h record.Entry) {
		n++
		tc.writeResult(t, "res_"+h.Run+".csv", resultFile(fmt.Sprintf("%d,5", 70+3*n)))
		waitFor(t, events, "an ingest", kind(record.KindIngest))
	}
	for range 5 {
		respond(waitFor(t, events, "a handoff", kind(record.KindHandoffOK)))
	}
	// R0006 is proposed and handed off; then the refit is asked for.
	h := waitFor(t, events, "a handoff", kind(record.KindHandoffOK))
	if _, err := RequestSignoff(tc.cfg, SignoffRequest{Action: ActionRefit, By: "ada", Name: "Ada Tech", Reason: "leave-one-out looked poor"}); err != nil {
		t.Fatal(err)
	}
	e := waitFor(t, events, "the refit recorded", kind(record.KindRefit))
	if e.By != "ada" || e.Run != "model" {
		t.Errorf("refit entry %+v", e)
	}
	respond(h)
	waitFor(t, events, "the proposal after the refit", func(e record.Entry) bool { return e.Kind == record.KindProposal && e.Run == "R0007" })
	rec.mu.Lock()
	held := append([]bool(nil), rec.held...)
	rec.mu.Unlock()
	// Proposals 1-4: the design and the first fit, no model yet; 5 and 6
	// hold the last model; 7 comes after the refit.
	if len(held) < 7 || !held[4] || !held[5] || held[6] {
		t.Fatalf("last model passed at proposals 1-%d: %v; want it at 5 and 6, not at 7", len(held), held)
	}
	trail := readAuditText(t, tc)
	if !strings.Contains(trail, "model refit requested") || !strings.Contains(trail, "leave-one-out looked poor") {
		t.Error("the audit trail does not record the refit request with its reason")
	}
}

func readAuditText(t *testing.T, tc *testCampaign) string {
	t.Helper()
	entries, err := record.ReadAudit(record.AuditPath(tc.cfg.Campaign.StateDir))
	if err != nil {
		t.Fatal(err)
	}
	var b strings.Builder
	for _, e := range entries {
		b.WriteString(e.Action + " " + e.Reason + "\n")
	}
	return b.String()
}
