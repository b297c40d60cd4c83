package agent

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"benchtender/record"
)

// A result flagged over range is kept in the journal as a failed run with
// its reason, never as a number, and the campaign goes on.
func TestFlaggedResultIsAFailedRun(t *testing.T) {
	tc := newTestCampaign(t, "3", defaultLimits)
	events, stop := tc.start(t)
	h := waitFor(t, events, "a handoff", kind(record.KindHandoffOK))
	tc.writeResult(t, "res_"+h.Run+".csv", resultFile("OVER"))
	in := waitFor(t, events, "an ingest", kind(record.KindIngest))
	if in.Failed == "" || !strings.Contains(in.Failed, "over range") || in.Run != h.Run {
		t.Fatalf("ingest %+v, want a failed run with the over-range reason", in)
	}
	waitFor(t, events, "the next handoff", kind(record.KindHandoffOK))
	stop()
	st := record.Replay(readJournalT(t, tc))
	if st.Runs[h.Run].Status != record.StatusFailed || len(st.Trials()) != 0 || len(st.FailedPoints()) != 1 {
		t.Errorf("run %s is %s; %d trials, %d failed", h.Run, st.Runs[h.Run].Status, len(st.Trials()), len(st.FailedPoints()))
	}
}

// An incomplete file (no trailer yet) waits; completed, it is ingested.
// One left incomplete is quarantined after the timeout.
func TestIncompleteFileWaitsThenTimesOut(t *testing.T) {
	tc := newTestCampaign(t, "4", defaultLimits)
	spec := tc.cfg.Formats["bench_csv"]
	spec.Trailer = "^END"
	spec.IncompleteTimeout = 700 * time.Millisecond
	tc.cfg.Formats["bench_csv"] = spec
	tc.positions(2)
	events, stop := tc.start(t)
	h1 := waitFor(t, events, "a handoff", kind(record.KindHandoffOK))
	h2 := waitFor(t, events, "a second handoff", kind(record.KindHandoffOK))
	p1 := tc.writeResult(t, "res_"+h1.Run+".csv", resultFile("50,0"))
	tc.writeResult(t, "res_"+h2.Run+".csv", resultFile("51,0"))
	time.Sleep(300 * time.Millisecond) // settled, parsed, waiting
	if err := os.WriteFile(p1, []byte(resultFile("50,0")+"END\r\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	in := waitFor(t, events, "the completed file's ingest", kind(record.KindIngest))
	if in.Run != h1.Run || in.Value != 50 {
		t.Fatalf("ingest %+v", in)
	}
	q := waitFor(t, events, "the abandoned file's quarantine", kind(record.KindQuarantine))
	stop()
	if !strings.Contains(q.Reason, "still incomplete") || filepath.Base(q.File) != "res_"+h2.Run+".csv" {
		t.Errorf("quarantine %+v", q)
	}
}

// For an instrument that writes no run id, a result answers the oldest
// setpoint handed off and still unanswered.
func TestResultMatchedToOldestHandoff(t *testing.T) {
	tc := newTestCampaign(t, "4", defaultLimits)
	spec := tc.cfg.Formats["bench_csv"]
	spec.RunIDSource = "oldest_handoff"
	tc.cfg.Formats["bench_csv"] = spec
	tc.positions(2)
	events, stop := tc.start(t)
	h1 := waitFor(t, events, "a handoff", kind(record.KindHandoffOK))
	h2 := waitFor(t, events, "a second handoff", kind(record.KindHandoffOK))
	tc.writeResult(t, "result_a.csv", resultFile("60,0"))
	in1 := waitFor(t, events, "an ingest", kind(record.KindIngest))
	tc.writeResult(t, "result_b.csv", resultFile("61,0"))
	in2 := waitFor(t, events, "a second ingest", kind(record.KindIngest))
	stop()
	if in1.Run != h1.Run || in2.Run != h2.Run {
		t.Errorf("results went to %s and %s, want %s then %s", in1.Run, in2.Run, h1.Run, h2.Run)
	}
}

// A failed run once the model's hyperparameters are held: the next
// proposal has the same completed runs as the last one, so the held model
// is conditioned on no new run. That panicked in the planner (gp.Condition
// sliced an empty block) and took the daemon down; the campaign must go
// on to the next handoff.
func TestFailedRunWhileTheModelIsHeld(t *testing.T) {
	tc := newTestCampaign(t, "9", defaultLimits)
	tc.cfg.Planner.HoldFitFrom = 4
	events, stop := tc.start(t)
	defer stop()
	purities := []string{"81,5", "84,25", "79,0", "88,75", "90,5"}
	for i := range purities {
		h := waitFor(t, events, "a handoff", kind(record.KindHandoffOK))
		tc.writeResult(t, "res_"+h.Run+".csv", resultFile(purities[i]))
		waitFor(t, events, "an ingest", kind(record.KindIngest))
	}
	// Five runs: the last proposal was made on a held model.
	h := waitFor(t, events, "a handoff", kind(record.KindHandoffOK))
	tc.writeResult(t, "res_"+h.Run+".csv", resultFile("OVER"))
	if in := waitFor(t, events, "an ingest", kind(record.KindIngest)); in.Failed == "" {
		t.Fatalf("ingest %+v, want a failed run", in)
	}
	next := waitFor(t, events, "the handoff after the failed run", kind(record.KindHandoffOK))
	if next.Run == h.Run {
		t.Fatalf("handoff %+v repeats the failed run", next)
	}
}
