package agent

import (
	"bytes"
	"encoding/csv"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"benchtender/campaign"
	"benchtender/planner"
	"benchtender/record"
	"benchtender/safety"
)

// The whole loop through real files: a config file, the export folder
// watched with fsnotify, a semicolon result file parsed, the journal, the
// planner, the gate and the handoff file, whose content must be exactly
// the gated proposal.
func TestWholeLoopThroughRealFiles(t *testing.T) {
	tc := newTestCampaign(t, "6", passLimits)
	events, stop := tc.start(t)
	purities := []string{"81,5", "84,25", "79,0", "88,75", "90,5", "91,0"}
	var handoffs []record.Entry
	for i := 0; i < 6; i++ {
		prop := waitFor(t, events, "a proposal", kind(record.KindProposal))
		if prop.Decision.Verdict != safety.Pass {
			t.Fatalf("proposal %s: %v, want pass (no review limits)", prop.Run, prop.Decision.Summary())
		}
		h := waitFor(t, events, "a handoff", kind(record.KindHandoffOK))
		handoffs = append(handoffs, h)
		if h.Run != prop.Run {
			t.Fatalf("handoff of %s after proposal of %s", h.Run, prop.Run)
		}
		// The handoff file holds exactly the proposal.
		data, err := os.ReadFile(h.File)
		if err != nil {
			t.Fatal(err)
		}
		rows, err := csv.NewReader(bytes.NewReader(data)).ReadAll()
		if err != nil {
			t.Fatal(err)
		}
		if len(rows) != 2 || strings.Join(rows[0], ",") != "run,temp,flow,action" || rows[1][0] != prop.Run || !strings.HasPrefix(rows[1][3], prop.Run+"-") {
			t.Fatalf("handoff %s: %q", h.File, data)
		}
		for k := 0; k < 2; k++ {
			v, err := strconv.ParseFloat(rows[1][k+1], 64)
			if err != nil || v != prop.Point[k] {
				t.Fatalf("handoff %s value %d: %q, proposal %v", h.File, k, rows[1][k+1], prop.Point[k])
			}
		}
		if !tc.cfg.Campaign.Factors.Contains(prop.Point) {
			t.Fatalf("proposal outside the box: %v", prop.Point)
		}
		// The instrument answers.
		tc.writeResult(t, "res_"+prop.Run+".csv", resultFile(purities[i]))
		in := waitFor(t, events, "an ingest", kind(record.KindIngest))
		want, _ := strconv.ParseFloat(strings.Replace(purities[i], ",", ".", 1), 64)
		if in.Run != prop.Run || in.Value != want {
			t.Fatalf("ingested %s = %v, want %s = %v", in.Run, in.Value, prop.Run, want)
		}
	}
	stop()
	es := readJournalT(t, tc)
	st := record.Replay(es)
	if st.Handoffs != 6 || len(st.Trials()) != 6 {
		t.Fatalf("journal has %d handoffs and %d results, want 6 and 6", st.Handoffs, len(st.Trials()))
	}
	methods := map[string]int{}
	for _, id := range st.Order {
		methods[st.Runs[id].Method]++
	}
	if methods[planner.MethodDesign] != 3 || methods[planner.MethodShortlist] != 3 {
		t.Errorf("methods %v, want 3 %q and 3 %q", methods, planner.MethodDesign, planner.MethodShortlist)
	}
	// Budget spent: no seventh handoff file.
	files, _ := filepath.Glob(filepath.Join(tc.cfg.Instrument.HandoffDir, "*.csv"))
	if len(files) != 6 {
		t.Errorf("%d handoff files, want 6: %v", len(files), files)
	}
}

// A malformed result file is copied to quarantine with its reason beside
// it; the original stays untouched; the agent goes on and takes the next,
// good file for the same run.
func TestMalformedResultIsQuarantinedAndNothingIsLost(t *testing.T) {
	tc := newTestCampaign(t, "3", defaultLimits)
	events, stop := tc.start(t)
	h := waitFor(t, events, "a handoff", kind(record.KindHandoffOK))
	bad := "Instrument: test bench\r\nDate: 01.12.2026\r\nSample;Purity;Unit\r\nx;12,3,4;%\r\n"
	path := tc.writeResult(t, "res_"+h.Run+"_a.csv", bad)
	q := waitFor(t, events, "a quarantine", kind(record.KindQuarantine))
	if !strings.Contains(q.Reason, ":4:") || !strings.Contains(q.Reason, "not a number") || !strings.Contains(q.Reason, "Purity") {
		t.Errorf("reason %q should name line 4, the column and why", q.Reason)
	}
	if got, err := os.ReadFile(path); err != nil || string(got) != bad {
		t.Fatalf("original changed or gone: %q, %v", got, err)
	}
	if got, err := os.ReadFile(q.Copy); err != nil || string(got) != bad {
		t.Fatalf("quarantine copy: %q, %v", got, err)
	}
	note, err := os.ReadFile(q.Copy + ".reason.txt")
	if err != nil || !strings.Contains(string(note), q.Reason) {
		t.Fatalf("reason file: %q, %v", note, err)
	}
	// The agent keeps running: a good file for the same run is taken.
	tc.writeResult(t, "res_"+h.Run+"_b.csv", resultFile("55,5"))
	in := waitFor(t, events, "an ingest", kind(record.KindIngest))
	if in.Run != h.Run || in.Value != 55.5 {
		t.Fatalf("ingest %s %v", in.Run, in.Value)
	}
	waitFor(t, events, "the next handoff", kind(record.KindHandoffOK))
	stop()

	// After a restart neither the quarantined nor the ingested content is
	// taken again: the first thing recorded is the next run's result.
	next := record.Replay(readJournalT(t, tc)).InFlight()[0].ID
	events, stop = tc.start(t)
	tc.writeResult(t, "res_"+next+".csv", resultFile("60,0"))
	first := waitFor(t, events, "the first entry after restart", func(record.Entry) bool { return true })
	stop()
	if first.Kind != record.KindIngest || first.Run != next {
		t.Errorf("first entry after restart: %s %s (%s), want the ingest of %s", first.Kind, first.Run, first.File, next)
	}
}

// A proposal outside the hard limits is recorded as refused and never
// written; after three refusals in a row the agent stops proposing.
func TestProposalOutsideHardLimitsIsNeverHandedOff(t *testing.T) {
	// The factor box reaches past the hard limits (check warns of this):
	// temp may be proposed up to 80 but the hard limit is 21.
	tc := newTestCampaign(t, "10", `
[safety.limits.temp]
hard_min = 20.0
hard_max = 21.0

[safety.limits.flow]
hard_min = 1.0
hard_max = 5.0
`)
	if w := tc.cfg.Warnings(); len(w) < 1 || !strings.Contains(w[0], "temp") || !strings.Contains(w[0], "hard limits") {
		t.Errorf("warnings %q, want the first about temp's hard limits", w)
	}
	events, stop := tc.start(t)
	for i := 0; i < maxRefusals; i++ {
		e := waitFor(t, events, "a proposal", kind(record.KindProposal))
		if e.Decision.Verdict != safety.Refuse {
			// A design point may land inside [20, 21]: then it is
			// handed off; the test needs refusals only.
			t.Fatalf("proposal %s at %v: %s, want refuse", e.Run, e.Point, e.Decision.Summary())
		}
		if !strings.Contains(e.Decision.Summary(), "above hard_max 21") {
			t.Errorf("reason %q", e.Decision.Summary())
		}
	}
	stop()
	files, _ := os.ReadDir(tc.cfg.Instrument.HandoffDir)
	if len(files) != 0 {
		t.Fatalf("handoff folder holds %d files, want none", len(files))
	}
	st := record.Replay(readJournalT(t, tc))
	if st.Proposals != maxRefusals || st.Handoffs != 0 {
		t.Errorf("%d proposals, %d handoffs; want %d and 0", st.Proposals, st.Handoffs, maxRefusals)
	}
}

// A move outside the review limits waits in the hold queue; a sign-off
// left in the inbox (as `benchtender approve` does while the daemon runs)
// releases it; a rejection makes the agent propose something else.
func TestHeldMoveIsHandedOffOnlyAfterApproval(t *testing.T) {
	// Every temp below 79 is held.
	tc, events, _, p := heldCampaign(t, "", Options{})
	if _, err := RequestSignoff(tc.cfg, SignoffRequest{Run: "R9999", Action: record.ActionApprove, By: "a", Name: "A", Reason: "b"}); err == nil {
		t.Error("approving an unknown run was accepted")
	}
	if _, err := RequestSignoff(tc.cfg, SignoffRequest{Run: p.Run, Action: record.ActionApprove, By: "", Name: "B", Reason: "b"}); err == nil {
		t.Error("approval without a name was accepted")
	}
	if files, _ := filepath.Glob(filepath.Join(tc.cfg.Instrument.HandoffDir, "*.csv")); len(files) != 0 {
		t.Fatalf("held move was written: %v", files)
	}
	if _, err := RequestSignoff(tc.cfg, SignoffRequest{Run: p.Run, Action: record.ActionReject, By: "ada", Name: "Ada Tech", Reason: "too cold for this batch"}); err != nil {
		t.Fatal(err)
	}
	s := waitFor(t, events, "the rejection", kind(record.KindSignoff))
	if s.Run != p.Run || s.Action != record.ActionReject || s.By != "ada" || s.Name != "Ada Tech" || s.Reason != "too cold for this batch" {
		t.Fatalf("sign-off entry %+v", s)
	}
	p2 := waitFor(t, events, "the next proposal", kind(record.KindProposal))
	if p2.Run == p.Run || campaign.Point(p2.Point).Finite() == false {
		t.Fatalf("next proposal %+v", p2)
	}
	if _, err := RequestSignoff(tc.cfg, SignoffRequest{Run: p2.Run, Action: record.ActionApprove, By: "ada", Name: "Ada Tech", Reason: "checked the jacket"}); err != nil {
		t.Fatal(err)
	}
	h := waitFor(t, events, "the handoff", kind(record.KindHandoffOK))
	if h.Run != p2.Run {
		t.Fatalf("handed off %s, want %s", h.Run, p2.Run)
	}
	if _, err := os.Stat(filepath.Join(tc.cfg.Instrument.HandoffDir, p.Run+".csv")); !os.IsNotExist(err) {
		t.Errorf("rejected run %s has a handoff file", p.Run)
	}
	if _, err := RequestSignoff(tc.cfg, SignoffRequest{Run: p2.Run, Action: record.ActionApprove, By: "ada", Name: "Ada Tech", Reason: "again"}); err == nil {
		t.Error("a second approval of a handed-off run was accepted")
	}
}

// The same result content is never ingested twice, also across a restart,
// even under another name.
func TestSameContentIsIngestedOnceAcrossRestarts(t *testing.T) {
	tc := newTestCampaign(t, "3", defaultLimits)
	events, stop := tc.start(t)
	h := waitFor(t, events, "a handoff", kind(record.KindHandoffOK))
	body := resultFile("70,0")
	tc.writeResult(t, "res_"+h.Run+".csv", body)
	waitFor(t, events, "an ingest", kind(record.KindIngest))
	waitFor(t, events, "the next handoff", kind(record.KindHandoffOK))
	stop()
	n := len(readJournalT(t, tc))
	// Restart; the old file is still there and a copy appears.
	events, stop = tc.start(t)
	tc.writeResult(t, "copy_of_res_"+h.Run+".csv", body)
	// Wait for two full scans' worth of time by waiting on a fresh file.
	h2 := record.Replay(readJournalT(t, tc)).InFlight()[0]
	tc.writeResult(t, "res_"+h2.ID+".csv", resultFile("71,0"))
	// The new result and the copy settle together; either may come
	// first.
	var in record.Entry
	gotDup := false
	for in.Kind == "" || !gotDup {
		e := waitFor(t, events, "the new ingest and the duplicate", func(e record.Entry) bool { return e.Kind == record.KindIngest || e.Kind == record.KindDuplicate })
		if e.Kind == record.KindIngest {
			in = e
		} else {
			gotDup = true
		}
	}
	stop()
	if in.Run != h2.ID {
		t.Fatalf("ingested %s, want %s", in.Run, h2.ID)
	}
	es := readJournalT(t, tc)
	ingests := 0
	for _, e := range es {
		if e.Kind == record.KindIngest {
			ingests++
		}
	}
	if ingests != 2 {
		t.Errorf("%d ingests, want 2 (the copy and the old file must not count): %d entries before restart, %d after", ingests, n, len(es))
	}
	// The copy is recorded as a duplicate of the first file, once.
	dups := 0
	for _, e := range es {
		if e.Kind == record.KindDuplicate {
			dups++
			if !strings.Contains(e.File, "copy_of_res_") || !strings.Contains(e.Reason, "same content as") {
				t.Errorf("duplicate entry %+v", e)
			}
		}
	}
	if dups != 1 {
		t.Errorf("%d duplicate entries, want 1", dups)
	}
}

// With planner.batch = 2 and an instrument of capacity 2, two setpoints are
// handed off before any result comes, and they differ.
func TestBatchOfTwoInFlight(t *testing.T) {
	tc := newTestCampaign(t, "4", defaultLimits)
	tc.positions(2)
	events, stop := tc.start(t)
	h1 := waitFor(t, events, "a handoff", kind(record.KindHandoffOK))
	h2 := waitFor(t, events, "a second handoff", kind(record.KindHandoffOK))
	stop()
	if h1.Run == h2.Run || (h1.Point[0] == h2.Point[0] && h1.Point[1] == h2.Point[1]) {
		t.Fatalf("two handoffs %v %v", h1, h2)
	}
	if n := len(record.Replay(readJournalT(t, tc)).InFlight()); n != 2 {
		t.Errorf("%d in flight, want 2", n)
	}
}
