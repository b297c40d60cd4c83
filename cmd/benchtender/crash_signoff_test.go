package main

import (
	"context"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"strings"
	"syscall"
	"testing"
	"time"

	"benchtender/agent"
	"benchtender/record"
)

// The crash test with sign-offs (issue 19): most moves of the demo's
// campaign are held (review limit 55 °C on a 40-98 °C temperature), and
// a technician approves each held move through the real binary while the
// daemon is killed with SIGKILL at random moments, often just after an
// approval. Afterwards: no run handed off twice, every setpoint the
// instrument took has one live handoff in the journal, no sign-off
// request applied twice, every request the daemon saw either applied or
// refused with its reason (none silently dropped), no run left held or
// ready, the record checks and no temp file is left.
func TestCrashDuringSignoffs(t *testing.T) {
	if testing.Short() || runtime.GOOS == "windows" {
		t.Skip("kills the real binary 40 times")
	}
	const kills, runs = 40, 16
	bin := binary(t)
	dir := t.TempDir()
	cfgPath, cfg, instr := unattendedCampaign(t, dir, runs, 11)
	text, err := os.ReadFile(cfgPath)
	if err != nil {
		t.Fatal(err)
	}
	held := strings.Replace(string(text), "hard_max = 98.0\n", "hard_max = 98.0\nreview_max = 55.0\n", 1)
	if held == string(text) {
		t.Fatal("the demo's temperature limits have moved; this test cannot hold moves")
	}
	if err := os.WriteFile(cfgPath, []byte(held), 0o644); err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	simDone := make(chan error, 1)
	go func() { simDone <- instr.Run(ctx) }()

	journal := filepath.Join(cfg.Campaign.StateDir, "journal.log")
	// approveHeld approves every held move through the binary, as a
	// technician would; an approval refused because a result arrived in
	// between is simply given again on a later round.
	requests := 0
	approveHeld := func() {
		es, _ := record.ReadJournal(journal)
		for _, r := range record.Replay(es).Held() {
			out, code := runBin(t, bin, "approve", r.ID, "--by", "tech", "--name", "Tess Tech", "--reason", "crash test", "--config", cfgPath)
			if code == 0 {
				requests++
			} else if !strings.Contains(out, "not held") && !strings.Contains(out, "pending") {
				t.Logf("approve %s: exit %d: %s", r.ID, code, strings.TrimSpace(out))
			}
		}
	}
	rng := rand.New(rand.NewPCG(19, 19))
	start := func() *exec.Cmd { return startDaemon(t, bin, cfgPath) }
	for i := 0; i < kills; i++ {
		c := start()
		time.Sleep(time.Duration(100+rng.IntN(500)) * time.Millisecond)
		approveHeld()
		// Half the kills come within 50 ms of the approvals, while the
		// daemon is applying them.
		if i%2 == 0 {
			time.Sleep(time.Duration(rng.IntN(50)) * time.Millisecond)
		} else {
			time.Sleep(time.Duration(rng.IntN(400)) * time.Millisecond)
		}
		c.Process.Signal(syscall.SIGKILL)
		c.Wait()
	}
	c := start()
	deadline := time.Now().Add(120 * time.Second)
	for time.Now().Before(deadline) {
		approveHeld()
		es, _ := record.ReadJournal(journal)
		st := record.Replay(es)
		if len(st.Trials())+len(st.FailedPoints()) >= runs && len(st.InFlight()) == 0 && len(st.Held()) == 0 {
			break
		}
		time.Sleep(300 * time.Millisecond)
	}
	c.Process.Signal(syscall.SIGTERM)
	c.Wait()
	cancel()
	<-simDone

	es, err := record.ReadJournal(journal)
	if err != nil {
		t.Fatal(err)
	}
	st := record.Replay(es)
	applied := map[string]int{}
	approvals := 0
	for _, e := range es {
		if e.Kind == record.KindSignoff {
			applied[e.Request]++
			approvals++
		}
	}
	for id, n := range applied {
		if id != "" && n > 1 {
			t.Errorf("sign-off request %s applied %d times", id, n)
		}
	}
	// Every request the daemon saw was applied or refused: none waits in
	// the inbox after the last clean run.
	inbox, _ := os.ReadDir(filepath.Join(cfg.Campaign.StateDir, "signoff"))
	for _, f := range inbox {
		if !f.IsDir() {
			t.Errorf("sign-off request left in the inbox: %s", f.Name())
		}
	}
	taken := handedOffOnce(t, cfg, es)
	if len(st.Held())+len(st.Ready()) > 0 {
		t.Errorf("%d runs still held and %d approved but not handed off", len(st.Held()), len(st.Ready()))
	}
	noTempFiles(t, cfg.Campaign.StateDir)
	n, err := agent.CheckRecord(cfg)
	if err != nil {
		t.Errorf("audit trail: %v", err)
	}
	if approvals == 0 {
		t.Error("no move was approved: the test did not exercise sign-offs")
	}
	t.Logf("%d kills; %d approval requests given, %d sign-off entries; %d setpoints taken; %d runs done; %d journal entries, %d audit entries",
		kills, requests, approvals, taken, len(st.Trials()), len(es), n)
	if len(st.Trials())+len(st.FailedPoints()) < runs {
		t.Errorf("%d of %d runs done", len(st.Trials())+len(st.FailedPoints()), runs)
	}
	if t.Failed() {
		dumpCampaign(t, cfg, es)
	}
}
