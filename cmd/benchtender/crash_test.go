package main

import (
	"bufio"
	"context"
	"io/fs"
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
	"benchtender/examples"
	"benchtender/examples/sim"
	"benchtender/record"
)

// The crash test: the real binary runs the demo's campaign against its
// simulated instrument and is killed with SIGKILL at random moments, 100
// times, restarted each time, then left to finish. Afterwards every result
// file was ingested exactly once, no run was handed off twice, every
// setpoint the instrument took has its journal entry, and the audit chain
// verifies.
func TestCrashAndRestart(t *testing.T) {
	if testing.Short() || runtime.GOOS == "windows" {
		t.Skip("kills the real binary 100 times")
	}
	kills := 100
	bin := binary(t)
	dir := t.TempDir()
	const runs = 40
	cfgPath, cfg, instr := unattendedCampaign(t, dir, runs, 3)
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	simDone := make(chan error, 1)
	go func() { simDone <- instr.Run(ctx) }()

	rng := rand.New(rand.NewPCG(7, 7))
	start := func() *exec.Cmd { return startDaemon(t, bin, cfgPath) }
	for i := 0; i < kills; i++ {
		c := start()
		time.Sleep(time.Duration(50+rng.IntN(700)) * time.Millisecond)
		c.Process.Signal(syscall.SIGKILL)
		c.Wait()
	}
	// Let it finish the campaign.
	c := start()
	deadline := time.Now().Add(90 * time.Second)
	for time.Now().Before(deadline) {
		es, _ := record.ReadJournal(filepath.Join(cfg.Campaign.StateDir, "journal.log"))
		st := record.Replay(es)
		if len(st.Trials())+len(st.FailedPoints()) >= runs && len(st.InFlight()) == 0 {
			break
		}
		time.Sleep(200 * time.Millisecond)
	}
	c.Process.Signal(syscall.SIGTERM)
	c.Wait()
	cancel()
	<-simDone

	es, err := record.ReadJournal(filepath.Join(cfg.Campaign.StateDir, "journal.log"))
	if err != nil {
		t.Fatal(err)
	}
	st := record.Replay(es)
	noTempFiles(t, cfg.Campaign.StateDir)
	// Every result file ingested exactly once.
	ingests := map[string]int{}
	for _, e := range es {
		switch e.Kind {
		case record.KindIngest:
			ingests[filepath.Base(e.File)]++
		case record.KindQuarantine:
			t.Errorf("quarantined %s: %s", e.File, e.Reason)
		}
	}
	results, _ := filepath.Glob(filepath.Join(cfg.Instrument.Watch.Dir, "*.csv"))
	for _, r := range results {
		if n := ingests[filepath.Base(r)]; n != 1 {
			t.Errorf("result %s ingested %d times", filepath.Base(r), n)
		}
	}
	taken := handedOffOnce(t, cfg, es)
	n, err := agent.CheckRecord(cfg)
	if err != nil {
		t.Errorf("audit trail: %v", err)
	}
	t.Logf("%d kills; %d setpoints taken by the instrument, %d result files, %d ingested, %d runs done, %d journal entries, %d audit entries",
		kills, taken, len(results), len(ingests), len(st.Trials()), len(es), n)
	// Nothing stalls: every run of the budget ends with its result.
	if len(st.Trials()) != runs {
		t.Errorf("%d of %d runs done after the kills and %v of running on", len(st.Trials()), runs, 90*time.Second)
	}
	// Settled once: restarts add nothing to the audit trail beyond the
	// journal (and the rare repair note of a torn last record).
	if n > len(es)+kills/10 {
		t.Errorf("%d audit entries for %d journal entries", n, len(es))
	}
	if t.Failed() {
		dumpCampaign(t, cfg, es)
	}
}

// startDaemon starts the real binary on the campaign, its output
// discarded.
func startDaemon(t *testing.T, bin, cfgPath string) *exec.Cmd {
	t.Helper()
	c := exec.Command(bin, "run", cfgPath)
	if err := c.Start(); err != nil {
		t.Fatal(err)
	}
	return c
}

// noTempFiles fails for every temp file left under the state folder:
// the last clean run sweeps what kills left half-written, archive
// folders included (issue 19: archive/xx/ was skipped).
func noTempFiles(t *testing.T, stateDir string) {
	t.Helper()
	filepath.WalkDir(stateDir, func(path string, d fs.DirEntry, err error) error {
		if err == nil && !d.IsDir() && strings.HasPrefix(d.Name(), ".benchtender-") && strings.HasSuffix(d.Name(), ".tmp") {
			t.Errorf("temp file left after the last clean run: %s", path)
		}
		return nil
	})
}

// handedOffOnce checks that no run was handed off twice, as the simulated
// instrument saw it (its taken.log) and as the journal es says, and that
// every setpoint taken has one live handoff in the journal. It returns the
// number of setpoints taken.
func handedOffOnce(t *testing.T, cfg agent.Config, es []record.Entry) int {
	t.Helper()
	intents := map[string]int{}
	for _, e := range es {
		switch e.Kind {
		case record.KindHandoff:
			intents[e.Run]++
		case record.KindHandoffNo:
			intents[e.Run]--
		}
	}
	taken := map[string]int{}
	if f, err := os.Open(filepath.Join(cfg.Instrument.HandoffDir, "taken.log")); err == nil {
		sc := bufio.NewScanner(f)
		for sc.Scan() {
			taken[sc.Text()]++
		}
		f.Close()
	}
	for run, n := range taken {
		if n != 1 {
			t.Errorf("the instrument took %s %d times", run, n)
		}
		if intents[run] != 1 {
			t.Errorf("%s was taken but the journal holds %d live handoffs of it", run, intents[run])
		}
	}
	for run, n := range intents {
		if n > 1 {
			t.Errorf("%s handed off %d times", run, n)
		}
	}
	return len(taken)
}

// dumpCampaign logs the journal's entries and the agent log's last lines,
// so a failure on a CI machine can be read without the temp folder.
func dumpCampaign(t *testing.T, cfg agent.Config, es []record.Entry) {
	t.Helper()
	for _, e := range es {
		t.Logf("journal: %s run=%s file=%s reason=%s", e.Kind, e.Run, filepath.Base(e.File), e.Reason)
	}
	logPath := cfg.Log.File
	if !filepath.IsAbs(logPath) {
		logPath = filepath.Join(cfg.Campaign.StateDir, logPath)
	}
	b, err := os.ReadFile(logPath)
	if err != nil {
		t.Logf("agent log: %v", err)
		return
	}
	lines := strings.Split(strings.TrimSpace(string(b)), "\n")
	if len(lines) > 40 {
		lines = lines[len(lines)-40:]
	}
	for _, l := range lines {
		t.Logf("log: %s", l)
	}
}

// unattendedCampaign writes the demo's campaign into dir with nothing held
// for sign-off and a fast look interval, and returns its config and the
// simulated instrument (not started) that answers it.
func unattendedCampaign(t *testing.T, dir string, runs int, seed uint64) (string, agent.Config, *sim.Instrument) {
	t.Helper()
	for _, d := range []string{"exports", "handoff", "state"} {
		os.MkdirAll(filepath.Join(dir, d), 0o755)
	}
	text := examples.Config(runs, seed)
	text = strings.Replace(text, "handoff_format = \"csv\"", "handoff_format = \"csv\"\nlook_every = \"100ms\"", 1)
	text = strings.Replace(text, "review_max = 90.0\n", "", 1)
	text = strings.Replace(text, "review_max = 4.0\n", "", 1)
	cfgPath := filepath.Join(dir, "benchtender.toml")
	if err := os.WriteFile(cfgPath, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	cfg, err := agent.LoadConfig(cfgPath, nil)
	if err != nil {
		t.Fatal(err)
	}
	instr := &sim.Instrument{HandoffDir: cfg.Instrument.HandoffDir, ExportDir: cfg.Instrument.Watch.Dir,
		Factors: cfg.Campaign.Factors, Columns: []string{"Temp", "Feed", "Hold"},
		Law: examples.ColourStrength, Noise: 0.3, Delay: 50 * time.Millisecond, Seed: seed, Name: "BR-2 (simulated)"}
	return cfgPath, cfg, instr
}
