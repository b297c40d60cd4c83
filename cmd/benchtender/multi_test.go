package main

import (
	"context"
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

// Two campaigns, each with its own folders and simulated instrument, run
// in one process to the end of their budgets; two configs sharing a
// folder are refused before anything starts.
func TestTwoCampaignsInOneProcess(t *testing.T) {
	if testing.Short() || runtime.GOOS == "windows" {
		t.Skip("runs two campaigns with the real binary")
	}
	bin := binary(t)
	const runs = 9
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	var cfgPaths []string
	var cfgs []agent.Config
	for i, seed := range []uint64{11, 12} {
		dir := filepath.Join(t.TempDir(), []string{"a", "b"}[i])
		os.MkdirAll(dir, 0o755)
		p, cfg, instr := unattendedCampaign(t, dir, runs, seed)
		go instr.Run(ctx)
		cfgPaths, cfgs = append(cfgPaths, p), append(cfgs, cfg)
	}
	out, code := runBin(t, bin, "run", cfgPaths[0], cfgPaths[0])
	if code != 2 || !strings.Contains(out, "same state folder") {
		t.Errorf("one config twice: exit %d\n%s", code, out)
	}
	daemon := exec.Command(bin, "run", cfgPaths[0], cfgPaths[1])
	var logs syncBuffer
	daemon.Stdout, daemon.Stderr = &logs, &logs
	if err := daemon.Start(); err != nil {
		t.Fatal(err)
	}
	done := func(cfg agent.Config) int {
		es, _ := record.ReadJournal(filepath.Join(cfg.Campaign.StateDir, "journal.log"))
		return len(record.Replay(es).Trials())
	}
	waitUntil(t, 60*time.Second, "both campaigns done", func() bool { return done(cfgs[0]) >= runs && done(cfgs[1]) >= runs })
	daemon.Process.Signal(syscall.SIGTERM)
	if err := daemon.Wait(); err != nil {
		t.Errorf("daemon: %v\n%s", err, tail(logs.String(), 2000))
	}
	for _, cfg := range cfgs {
		if n := done(cfg); n != runs {
			t.Errorf("%s: %d runs done", cfg.Campaign.StateDir, n)
		}
	}
}
