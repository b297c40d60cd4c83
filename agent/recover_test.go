package agent

import (
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"benchtender/campaign"
	"benchtender/planner"
	"benchtender/record"
)

// A crash can stop a handoff after any of its three durable steps (temp
// file staged, intent journalled, file renamed into place). Each is set up
// here as the crash leaves it, and the restarted agent must settle the run
// without ever sending it twice: staged only means sent again; renamed
// means sent, whether the file still waits or the instrument took it.
func TestRestartSettlesAnUnconfirmedHandoff(t *testing.T) {
	fixed := fakeProposer{func(ctx context.Context, req planner.Request) (planner.Result, error) {
		return planner.Result{Proposal: campaign.Proposal{Setpoint: campaign.Setpoint{RunID: req.RunID, Point: campaign.Point{50, 3}}}}, nil
	}}
	cases := map[string]struct {
		crash    func(t *testing.T, handoff string) // leaves the folder as the crash did
		want     string                             // the kind recorded for the run at restart
		reason   string
		resent   bool
		fileLeft bool
	}{
		"after staging": {
			crash: func(t *testing.T, handoff string) {
				if err := os.Rename(handoff, filepath.Join(filepath.Dir(handoff), record.TempPrefix+"R0001.csv.4711.tmp")); err != nil {
					t.Fatal(err)
				}
			},
			want: record.KindHandoffNo, reason: "before the rename", resent: true, fileLeft: true,
		},
		"after the rename, file waiting": {
			crash: func(t *testing.T, handoff string) {},
			want:  record.KindHandoffOK, reason: "found in place", fileLeft: true,
		},
		"after the rename, file taken": {
			crash: func(t *testing.T, handoff string) {
				if err := os.Remove(handoff); err != nil {
					t.Fatal(err)
				}
			},
			want: record.KindHandoffOK, reason: "taken by the instrument",
		},
	}
	for name, c := range cases {
		t.Run(name, func(t *testing.T) {
			tc := newTestCampaign(t, "3", defaultLimits)
			events, stop := tc.startWith(t, Options{Proposer: fixed})
			ok := waitFor(t, events, "the first handoff", kind(record.KindHandoffOK))
			stop()
			// The journal and the audit trail as the crash left them:
			// everything up to the handoff's intent (audited too, as
			// record does before the rename), nothing after.
			es := readJournalT(t, tc)
			var kept []record.Entry
			for _, e := range es {
				if e.Kind == record.KindHandoffOK && e.Run == ok.Run {
					break
				}
				kept = append(kept, e)
			}
			if last := kept[len(kept)-1]; last.Kind != record.KindHandoff || last.Run != "R0001" {
				t.Fatalf("the journal before the confirmation ends in %+v", last)
			}
			sd := tc.cfg.Campaign.StateDir
			cutRecordAfter(t, sd, es, kept[len(kept)-1].Seq)
			intent := kept[len(kept)-1]
			handoff := filepath.Join(tc.cfg.Instrument.HandoffDir, "R0001.csv")
			for _, n := range handoffFiles(t, tc) {
				if n != "R0001.csv" { // handed off after the cut
					os.Remove(filepath.Join(tc.cfg.Instrument.HandoffDir, n))
				}
			}
			c.crash(t, handoff)

			events, stop = tc.startWith(t, Options{Proposer: fixed})
			got := waitFor(t, events, "the restart's verdict on R0001", func(e record.Entry) bool {
				return (e.Kind == record.KindHandoffOK || e.Kind == record.KindHandoffNo) && e.Run == "R0001"
			})
			if got.Kind != c.want || !strings.Contains(got.Reason, c.reason) || got.ActionID != intent.ActionID {
				t.Fatalf("restart recorded %s (%q, action %s); want %s (%q, action %s)", got.Kind, got.Reason, got.ActionID, c.want, c.reason, intent.ActionID)
			}
			if c.resent {
				again := waitFor(t, events, "R0001 sent again", func(e record.Entry) bool { return e.Kind == record.KindHandoffOK && e.Run == "R0001" })
				if again.ActionID == intent.ActionID {
					t.Errorf("sent again under the old action id %s", again.ActionID)
				}
				data, err := os.ReadFile(handoff)
				if err != nil || !strings.Contains(string(data), again.ActionID) {
					t.Errorf("handoff file %q, %v; want action %s", data, err, again.ActionID)
				}
			}
			stop()
			if _, err := os.Stat(handoff); (err == nil) != c.fileLeft {
				t.Errorf("handoff file present = %v, want %v", err == nil, c.fileLeft)
			}
			// Settled once: a second restart records nothing more about it.
			n := len(readJournalT(t, tc))
			_, stop = tc.startWith(t, Options{Proposer: fixed})
			stop()
			es = readJournalT(t, tc)
			for _, e := range es[n:] {
				if e.Run == "R0001" {
					t.Errorf("second restart recorded %s for R0001 again", e.Kind)
				}
			}
			if _, err := record.VerifyAudit(record.AuditPath(sd), keyOf(t, tc)); err != nil {
				t.Errorf("audit trail: %v", err)
			}
		})
	}
}
