package agent

import (
	"context"
	"encoding/json"
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/rs/zerolog"

	"benchtender/campaign"
	"benchtender/planner"
	"benchtender/record"
)

// fakeProposer is a planner whose answer the test chooses.
// failingCommit stages for real and fails the rename, as a handoff folder
// whose permissions changed under the agent would.
type failingCommit struct{ record.Staged }

func (f failingCommit) Commit() error {
	f.Abort()
	return errors.New("injected: rename refused")
}

type fakeProposer struct {
	propose func(ctx context.Context, req planner.Request) (planner.Result, error)
}

var _ Proposer = fakeProposer{}

func (f fakeProposer) Propose(ctx context.Context, req planner.Request) (planner.Result, error) {
	return f.propose(ctx, req)
}

// startWith runs an agent with the given options on the campaign.
func (tc *testCampaign) startWith(t *testing.T, opt Options) (<-chan record.Entry, func()) {
	t.Helper()
	events := make(chan record.Entry, 1024)
	opt.Logger = zerolog.New(zerolog.NewTestWriter(t))
	if opt.Tick == 0 {
		opt.Tick = 50 * time.Millisecond
	}
	opt.Notify = func(e record.Entry) { events <- e }
	a, err := New(tc.cfg, opt)
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() { done <- a.Run(ctx) }()
	var once sync.Once
	stop := func() {
		once.Do(func() {
			cancel()
			if err := <-done; err != nil {
				t.Errorf("agent: %v", err)
			}
		})
	}
	t.Cleanup(stop)
	return events, stop
}

func handoffFiles(t *testing.T, tc *testCampaign) []string {
	t.Helper()
	entries, err := os.ReadDir(tc.cfg.Instrument.HandoffDir)
	if err != nil {
		t.Fatal(err)
	}
	var out []string
	for _, e := range entries {
		out = append(out, e.Name())
	}
	return out
}

// Every fault in the planner or the writer ends with no setpoint written:
// an error, a panic, a NaN, a point outside the space, and a disk whose
// fsync fails (the temp file is removed, the error not retried as if it
// had worked).
func TestFaultsWriteNoSetpoint(t *testing.T) {
	good := func(ctx context.Context, req planner.Request) (planner.Result, error) {
		return planner.Result{Proposal: campaign.Proposal{Setpoint: campaign.Setpoint{RunID: req.RunID, Point: campaign.Point{50, 3}}}}, nil
	}
	faults := map[string]Options{
		"planner error": {Proposer: fakeProposer{func(context.Context, planner.Request) (planner.Result, error) {
			return planner.Result{}, errors.New("injected")
		}}},
		"planner panic": {Proposer: fakeProposer{func(context.Context, planner.Request) (planner.Result, error) {
			panic("injected")
		}}},
		"planner NaN": {Proposer: fakeProposer{func(ctx context.Context, req planner.Request) (planner.Result, error) {
			return planner.Result{Proposal: campaign.Proposal{Setpoint: campaign.Setpoint{RunID: req.RunID, Point: campaign.Point{math.NaN(), 3}}}}, nil
		}}},
		"planner wrong size": {Proposer: fakeProposer{func(ctx context.Context, req planner.Request) (planner.Result, error) {
			return planner.Result{Proposal: campaign.Proposal{Setpoint: campaign.Setpoint{RunID: req.RunID, Point: campaign.Point{50}}}}, nil
		}}},
		"writer fails on sync": {Proposer: fakeProposer{good}, Writer: func(dir, name string, data []byte) (record.Staged, error) {
			return record.Writer{Sync: func(*os.File) error { return errors.New("injected: EIO on fsync") }}.Stage(dir, name, data, 0o644)
		}},
		"writer fails": {Proposer: fakeProposer{good}, Writer: func(string, string, []byte) (record.Staged, error) { return nil, errors.New("injected") }},
		"rename fails": {Proposer: fakeProposer{good}, Writer: func(dir, name string, data []byte) (record.Staged, error) {
			st, err := record.Writer{}.Stage(dir, name, data, 0o644)
			return failingCommit{st}, err
		}},
	}
	for name, opt := range faults {
		t.Run(name, func(t *testing.T) {
			tc := newTestCampaign(t, "3", defaultLimits)
			events, stop := tc.startWith(t, opt)
			time.Sleep(400 * time.Millisecond) // several ticks of trying
			stop()
			if files := handoffFiles(t, tc); len(files) != 0 {
				t.Fatalf("handoff folder holds %v", files)
			}
			intents := 0
			for len(events) > 0 {
				switch e := <-events; e.Kind {
				case record.KindHandoffOK:
					t.Fatalf("a handoff was recorded as written: %+v", e)
				case record.KindHandoff:
					intents++
				case record.KindHandoffNo:
					intents--
				}
			}
			// A handoff begun and failed is journalled as not written.
			if intents != 0 {
				t.Errorf("%d handoff intents without their failure recorded", intents)
			}
			if n := len(record.Replay(readJournalT(t, tc)).InFlight()); n != 0 {
				t.Errorf("%d runs count as handed off", n)
			}
		})
	}
}

// heldCampaign starts a campaign whose every move is held (review_min
// above the whole design), and returns the first held proposal.
func heldCampaign(t *testing.T, extra string, opt Options) (*testCampaign, <-chan record.Entry, func(), record.Entry) {
	t.Helper()
	tc := newTestCampaign(t, "4", `
[safety.limits.temp]
hard_min = 20.0
hard_max = 80.0
review_min = 79.0

[safety.limits.flow]
hard_min = 1.0
hard_max = 5.0
`+extra)
	events, stop := tc.startWith(t, opt)
	p := waitFor(t, events, "a held proposal", kind(record.KindProposal))
	if p.Decision.Verdict != "hold" {
		t.Fatalf("verdict %s", p.Decision.Verdict)
	}
	return tc, events, stop, p
}

func approve(t *testing.T, tc *testCampaign, run, by string, edit map[string]float64) {
	t.Helper()
	if _, err := RequestSignoff(tc.cfg, SignoffRequest{Run: run, Action: record.ActionApprove, By: by, Name: "Person " + by, Reason: "checked", Edit: edit}); err != nil {
		t.Fatal(err)
	}
}

// waitAudit waits until the audit trail has an entry containing text.
func waitAudit(t *testing.T, tc *testCampaign, text string) {
	t.Helper()
	deadline := time.Now().Add(10 * time.Second)
	for time.Now().Before(deadline) {
		b, _ := os.ReadFile(record.AuditPath(tc.cfg.Campaign.StateDir))
		if strings.Contains(string(b), text) {
			return
		}
		time.Sleep(20 * time.Millisecond)
	}
	t.Fatalf("audit trail never said %q", text)
}

// A stale approval is refused: given before a new result arrived, given
// under other limits, or older than approval_expiry; and a replayed
// request file is refused the second time.
func TestStaleAndReplayedApprovalsAreRefused(t *testing.T) {
	t.Run("new result arrived", func(t *testing.T) {
		tc, _, _, p := heldCampaign(t, "", Options{})
		req := SignoffRequest{ID: "r1", Run: p.Run, Action: record.ActionApprove, By: "ada", Name: "Ada", Reason: "ok", Time: time.Now(), Limits: tc.cfg.Safety.Version(), State: -1}
		writeRequest(t, tc, req)
		waitAudit(t, tc, "new result(s) arrived since it was given")
	})
	t.Run("limits edited", func(t *testing.T) {
		tc, _, _, p := heldCampaign(t, "", Options{})
		req := SignoffRequest{ID: "r2", Run: p.Run, Action: record.ActionApprove, By: "ada", Name: "Ada", Reason: "ok", Time: time.Now(), Limits: "0123456789abcdef", State: 0}
		writeRequest(t, tc, req)
		waitAudit(t, tc, "the limits changed since it was given")
	})
	t.Run("expired", func(t *testing.T) {
		tc, _, _, p := heldCampaign(t, "", Options{})
		req := SignoffRequest{ID: "r3", Run: p.Run, Action: record.ActionApprove, By: "ada", Name: "Ada", Reason: "ok", Time: time.Now().Add(-2 * time.Hour), Limits: tc.cfg.Safety.Version()}
		writeRequest(t, tc, req)
		waitAudit(t, tc, "longer than approval_expiry")
	})
	t.Run("replayed", func(t *testing.T) {
		tc, events, _, p := heldCampaign(t, "", Options{})
		req := SignoffRequest{ID: "r4", Run: p.Run, Action: record.ActionReject, By: "ada", Name: "Ada", Reason: "no", Time: time.Now(), Limits: tc.cfg.Safety.Version()}
		writeRequest(t, tc, req)
		waitFor(t, events, "the rejection", kind(record.KindSignoff))
		// Once the agent has taken the first copy away, the same request
		// comes again.
		first := filepath.Join(inboxDir(tc.cfg.Campaign.StateDir), req.ID+".json")
		for _, err := os.Stat(first); err == nil; _, err = os.Stat(first) {
			time.Sleep(10 * time.Millisecond)
		}
		writeRequest(t, tc, req)
		waitAudit(t, tc, "used already (a replay)")
	})
	if testing.Short() {
		return
	}
}

func writeRequest(t *testing.T, tc *testCampaign, req SignoffRequest) {
	t.Helper()
	dir := inboxDir(tc.cfg.Campaign.StateDir)
	os.MkdirAll(dir, 0o755)
	b, _ := json.Marshal(req)
	if err := record.WriteFileAtomic(dir, req.ID+".json", b, 0o644); err != nil {
		t.Fatal(err)
	}
}

// An approval with edited values passes the gate again: edited past a hard
// limit it is refused and nothing is written; edited inside the limits it
// is handed off with the edited values.
func TestEditedApprovalIsGatedAgain(t *testing.T) {
	tc, events, _, p := heldCampaign(t, "", Options{})
	// The command says so at once; a request that reaches the inbox all
	// the same is refused by the daemon.
	_, err := RequestSignoff(tc.cfg, SignoffRequest{Run: p.Run, Action: record.ActionApprove, By: "ada", Name: "Ada", Reason: "hotter", Edit: map[string]float64{"temp": 85}})
	if err == nil || !strings.Contains(err.Error(), "above hard_max") {
		t.Fatalf("edited past a hard limit: %v", err)
	}
	writeRequest(t, tc, SignoffRequest{ID: "hot", Run: p.Run, Action: record.ActionApprove, By: "ada", Name: "Ada", Reason: "hotter", Edit: map[string]float64{"temp": 85}, Time: time.Now(), Limits: tc.cfg.Safety.Version()})
	waitAudit(t, tc, "the gate refuses the move")
	if files := handoffFiles(t, tc); len(files) != 0 {
		t.Fatalf("handoff folder holds %v", files)
	}
	approve(t, tc, p.Run, "ada", map[string]float64{"temp": 79.5})
	h := waitFor(t, events, "the handoff", kind(record.KindHandoffOK))
	if h.Run != p.Run || h.Point[0] != 79.5 {
		t.Fatalf("handed off %v for %s", h.Point, h.Run)
	}
}

// A move of a two-person kind needs two different people.
func TestTwoPersonRule(t *testing.T) {
	tc, events, _, p := heldCampaign(t, "\n[safety]\ntwo_person = [\"review_min\"]\n", Options{})
	approve(t, tc, p.Run, "ada", nil)
	first := waitFor(t, events, "the first approval", kind(record.KindSignoff))
	if !first.Partial {
		t.Fatalf("first approval %+v is not partial", first)
	}
	if _, err := RequestSignoff(tc.cfg, SignoffRequest{Run: p.Run, Action: record.ActionApprove, By: "ada", Name: "Ada", Reason: "again"}); err == nil || !strings.Contains(err.Error(), "a second, different person") {
		t.Fatalf("the same person approving twice: %v", err)
	}
	// Past the command's check (a request written straight into the
	// inbox), the daemon refuses it too.
	writeRequest(t, tc, SignoffRequest{ID: "again", Run: p.Run, Action: record.ActionApprove, By: "ada", Name: "Ada", Reason: "again", Time: time.Now(), Limits: tc.cfg.Safety.Version(), State: 0})
	waitAudit(t, tc, "ada gave the first approval of this move")
	if files := handoffFiles(t, tc); len(files) != 0 {
		t.Fatalf("handed off after one person: %v", files)
	}
	approve(t, tc, p.Run, "bo", nil)
	second := waitFor(t, events, "the second approval", kind(record.KindSignoff))
	if second.Partial || second.By != "bo" {
		t.Fatalf("second approval %+v", second)
	}
	waitFor(t, events, "the handoff", kind(record.KindHandoffOK))
}

// A pending first approval is never dropped. Here the proposed move needs
// one approval (below review_min) but the first approver's edit needs two
// (flow above review_max): a second plain approval of the proposed values
// is refused with both sets shown, at the command and in the daemon; the
// same values complete it; other values with replace start a new first
// approval that says whose it replaced.
func TestSecondApprovalNeverDropsTheFirst(t *testing.T) {
	tc, events, _, p := heldCampaign(t, "review_max = 4.0\n\n[safety]\ntwo_person = [\"review_max\"]\n", Options{})
	edit := map[string]float64{"flow": 4.5}
	approve(t, tc, p.Run, "ada", edit)
	first := waitFor(t, events, "the first approval", kind(record.KindSignoff))
	if !first.Partial || first.Point[1] != 4.5 {
		t.Fatalf("first approval %+v", first)
	}
	st := record.Replay(readJournalT(t, tc))
	if f := st.Runs[p.Run].First; f == nil || f.By != "ada" || f.Name != "Person ada" || f.Point[1] != 4.5 || f.Time.IsZero() {
		t.Fatalf("pending first approval %+v", f)
	}
	_, err := RequestSignoff(tc.cfg, SignoffRequest{Run: p.Run, Action: record.ActionApprove, By: "bo", Name: "Bo", Reason: "fine"})
	if err == nil || !strings.Contains(err.Error(), "flow=4.5") || !strings.Contains(err.Error(), "ada (Person ada)") {
		t.Fatalf("a plain second approval after an edited first: %v", err)
	}
	writeRequest(t, tc, SignoffRequest{ID: "plain", Run: p.Run, Action: record.ActionApprove, By: "bo", Name: "Bo", Reason: "fine", Time: time.Now(), Limits: tc.cfg.Safety.Version(), State: 0})
	waitAudit(t, tc, "Approve those same values to complete it")
	if files := handoffFiles(t, tc); len(files) != 0 {
		t.Fatalf("handed off with the first approver's edit dropped: %v", files)
	}
	// Other values, replacing the first approval: a new first approval.
	if _, err := RequestSignoff(tc.cfg, SignoffRequest{Run: p.Run, Action: record.ActionApprove, By: "bo", Name: "Bo", Reason: "less flow", Edit: map[string]float64{"flow": 4.2}, Replace: true}); err != nil {
		t.Fatal(err)
	}
	repl := waitFor(t, events, "the replacing approval", kind(record.KindSignoff))
	if !repl.Partial || !strings.Contains(repl.Replaces, "ada (Person ada)") || !strings.Contains(repl.Replaces, "flow=4.5") {
		t.Fatalf("replacing approval %+v", repl)
	}
	waitAudit(t, tc, "replaces the first approval by ada (Person ada)")
	// ada completes bo's values.
	approve(t, tc, p.Run, "ada", map[string]float64{"flow": 4.2})
	second := waitFor(t, events, "the second approval", kind(record.KindSignoff))
	if second.Partial {
		t.Fatalf("second approval %+v", second)
	}
	h := waitFor(t, events, "the handoff", kind(record.KindHandoffOK))
	if h.Point[1] != 4.2 {
		t.Fatalf("handed off %v, want the values both signed", h.Point)
	}
}

// The all-stop file halts every handoff within one tick; only a person's
// resume clears it, and handoffs go on.
func TestAllStop(t *testing.T) {
	tc := newTestCampaign(t, "6", defaultLimits)
	tc.positions(1)
	events, _ := tc.startWith(t, Options{Tick: 50 * time.Millisecond})
	h := waitFor(t, events, "a handoff", kind(record.KindHandoffOK))
	stopFile := allStopPath(tc.cfg)
	if err := os.WriteFile(stopFile, []byte("smoke in room 3"), 0o644); err != nil {
		t.Fatal(err)
	}
	set := time.Now()
	as := waitFor(t, events, "the all-stop", kind(record.KindAllStop))
	if took := time.Since(set); took > 2*time.Second || !strings.Contains(as.Reason, "smoke in room 3") {
		t.Errorf("all-stop after %v: %+v", took, as)
	}
	// A result arrives: it is ingested, but nothing is handed off.
	tc.writeResult(t, "res_"+h.Run+".csv", resultFile("70,0"))
	waitFor(t, events, "the ingest", kind(record.KindIngest))
	time.Sleep(300 * time.Millisecond)
	if n := len(handoffFiles(t, tc)); n != 1 {
		t.Fatalf("%d handoff files during the all-stop, want the 1 from before", n)
	}
	// Deleting the file is not enough: a person must resume.
	os.Remove(stopFile)
	time.Sleep(200 * time.Millisecond)
	if n := len(handoffFiles(t, tc)); n != 1 {
		t.Fatalf("handoff resumed without a person: %d files", n)
	}
	if _, err := RequestSignoff(tc.cfg, SignoffRequest{Action: ActionResume, By: "ada", Name: "Ada Tech", Reason: "room checked"}); err != nil {
		t.Fatal(err)
	}
	waitFor(t, events, "the resume", kind(record.KindResume))
	waitFor(t, events, "a handoff after the resume", kind(record.KindHandoffOK))
}

// A held move lapses after hold_expiry, measured by the injected clock.
func TestHoldExpires(t *testing.T) {
	var mu sync.Mutex
	now := time.Now()
	clock := func() time.Time { mu.Lock(); defer mu.Unlock(); return now }
	_, events, _, p := heldCampaign(t, "\n[safety]\nhold_expiry = \"1h\"\n", Options{Now: clock})
	mu.Lock()
	now = now.Add(59 * time.Minute)
	mu.Unlock()
	time.Sleep(200 * time.Millisecond)
	mu.Lock()
	now = now.Add(2 * time.Minute)
	mu.Unlock()
	e := waitFor(t, events, "the expiry", kind(record.KindExpire))
	if e.Run != p.Run {
		t.Fatalf("expired %s, want %s", e.Run, p.Run)
	}
}

// At most max_handoffs_per_hour setpoints are written in any hour.
func TestRateLimit(t *testing.T) {
	tc := newTestCampaign(t, "6", defaultLimits+"\n[safety]\nmax_handoffs_per_hour = 2\n")
	tc.positions(4)
	events, stop := tc.startWith(t, Options{})
	waitFor(t, events, "a handoff", kind(record.KindHandoffOK))
	waitFor(t, events, "a second handoff", kind(record.KindHandoffOK))
	time.Sleep(500 * time.Millisecond)
	stop()
	if n := len(handoffFiles(t, tc)); n != 2 {
		t.Fatalf("%d handoffs within the hour, limit 2", n)
	}
}

// An edited config that no longer validates stops every handoff (fail
// closed) until it is fixed.
func TestBrokenConfigEditStopsHandoffs(t *testing.T) {
	tc := newTestCampaign(t, "6", defaultLimits)
	events, _ := tc.startWith(t, Options{ConfigPath: tc.cfgPath})
	h := waitFor(t, events, "a handoff", kind(record.KindHandoffOK))
	good, _ := os.ReadFile(tc.cfgPath)
	time.Sleep(20 * time.Millisecond) // a new modification time
	if err := os.WriteFile(tc.cfgPath, []byte(strings.Replace(string(good), "hard_max = 80.0", "hard_max = 10.0", 1)), 0o644); err != nil {
		t.Fatal(err)
	}
	waitAudit(t, tc, "config refused")
	tc.writeResult(t, "res_"+h.Run+".csv", resultFile("70,0"))
	waitFor(t, events, "the ingest", kind(record.KindIngest))
	time.Sleep(300 * time.Millisecond)
	if n := len(handoffFiles(t, tc)); n != 1 {
		t.Fatalf("%d handoff files under a broken config", n)
	}
	os.WriteFile(tc.cfgPath, good, 0o644)
	waitAudit(t, tc, "limits edited")
	waitFor(t, events, "a handoff once fixed", kind(record.KindHandoffOK))
	_ = filepath.Join
}

// An instrument never holds more setpoint files than its capacity: with
// keep_busy a move inside the limits goes out while a move waits for
// sign-off; once that one is approved it queues in the agent and goes out
// when the result of the run in flight comes in.
func TestCapacityIsNeverExceeded(t *testing.T) {
	tc, events, _, p := heldCampaign(t, "\n[safety]\nkeep_busy = true\n", Options{})
	busy := waitFor(t, events, "the keep-busy handoff", kind(record.KindHandoffOK))
	approve(t, tc, p.Run, "ada", nil)
	waitFor(t, events, "the approval", kind(record.KindSignoff))
	// Several looks of the agent: nothing else may be written.
	noneFor(t, events, 500*time.Millisecond, "a second setpoint file while one is in flight", kind(record.KindHandoff))
	if files := handoffFiles(t, tc); len(files) != 1 {
		t.Fatalf("handoff folder holds %v, capacity 1", files)
	}
	if r := record.Replay(readJournalT(t, tc)).Runs[p.Run]; r.Status != record.StatusReady {
		t.Fatalf("approved run is %s, want ready (queued)", r.Status)
	}
	tc.writeResult(t, "res_"+busy.Run+".csv", resultFile("50,1"))
	h := waitFor(t, events, "the queued handoff", kind(record.KindHandoffOK))
	if h.Run != p.Run {
		t.Fatalf("handed off %s, want the queued %s", h.Run, p.Run)
	}
}

// An edit of the limits is recorded in words: which factor, which limit,
// the old and the new value.
func TestLimitsEditIsRecordedInWords(t *testing.T) {
	tc := newTestCampaign(t, "6", defaultLimits)
	events, _ := tc.startWith(t, Options{ConfigPath: tc.cfgPath})
	waitFor(t, events, "a proposal", kind(record.KindProposal))
	good, _ := os.ReadFile(tc.cfgPath)
	time.Sleep(20 * time.Millisecond) // a new modification time
	if err := os.WriteFile(tc.cfgPath, []byte(strings.Replace(string(good), "review_max = 75.0", "review_max = 70.0", 1)), 0o644); err != nil {
		t.Fatal(err)
	}
	waitAudit(t, tc, "temp: review max 75 degC → 70 degC")
}

// The all-stop file appears whole: a daemon that looks while the command
// line or the console writes it never reads it empty (with a plain
// create-then-write it recorded "(no reason written in the file)", seen
// in a console test). Readers poll the file while it is written and
// removed again and again.
func TestWriteAllStopIsNeverSeenEmpty(t *testing.T) {
	cfg := DefaultConfig()
	cfg.Campaign.StateDir = t.TempDir()
	path := allStopPath(cfg)
	done := make(chan struct{})
	empty := make(chan int, 1)
	go func() {
		seen := 0
		for {
			select {
			case <-done:
				empty <- seen
				return
			default:
			}
			if data, err := os.ReadFile(path); err == nil && len(data) == 0 {
				seen++
			}
		}
	}()
	for i := 0; i < 300; i++ {
		if _, err := WriteAllStop(cfg, "ada", "coolant leak", time.Now()); err != nil {
			t.Fatal(err)
		}
		if err := os.Remove(path); err != nil {
			t.Fatal(err)
		}
	}
	close(done)
	if n := <-empty; n > 0 {
		t.Errorf("the all-stop file was read empty %d times while it was written", n)
	}
}
