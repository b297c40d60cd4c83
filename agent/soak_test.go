package agent

import (
	"bufio"
	"context"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"runtime"
	"strconv"
	"strings"
	"sync/atomic"
	"testing"
	"time"

	"github.com/rs/zerolog"

	"benchtender/campaign"
	"benchtender/examples/sim"
	"benchtender/planner"
	"benchtender/record"
)

// rssKB reads this process's resident set size.
func rssKB() int {
	f, err := os.Open("/proc/self/status")
	if err != nil {
		return -1
	}
	defer f.Close()
	for sc := bufio.NewScanner(f); sc.Scan(); {
		if v, ok := strings.CutPrefix(sc.Text(), "VmRSS:"); ok {
			n, _ := strconv.Atoi(strings.Fields(v)[0])
			return n
		}
	}
	return -1
}

// The soak: thousands of runs at accelerated speed (a simulated
// instrument that answers at once, a planner that proposes at random, no
// settle time), sampling the resident memory and the goroutines. Both
// must stay flat: no goroutine, file or timer leaks with every run. It
// runs when BENCHTENDER_SOAK gives the number of runs (5000 for the
// README figures); BENCHTENDER_SOAK_PLANNER=real uses the campaign's own
// planner instead of the random one (500 runs for the README):
//
//	BENCHTENDER_SOAK=5000 go test ./agent -run Soak -v -timeout 30m
//	BENCHTENDER_SOAK=500 BENCHTENDER_SOAK_PLANNER=real go test ./agent -run Soak -v -timeout 60m
func TestSoak(t *testing.T) {
	runs, _ := strconv.Atoi(os.Getenv("BENCHTENDER_SOAK"))
	if runs == 0 {
		t.Skip("set BENCHTENDER_SOAK=5000 to run the soak")
	}
	if runtime.GOOS != "linux" {
		t.Skip("reads /proc/self/status")
	}
	tc := newTestCampaign(t, strconv.Itoa(runs), "\n[safety.limits.temp]\nhard_min = 20.0\nhard_max = 80.0\n\n[safety.limits.flow]\nhard_min = 1.0\nhard_max = 5.0\n")
	tc.cfg.Instrument.Watch.Settle = 10 * time.Millisecond
	tc.cfg.Instrument.Watch.Rescan = 2 * time.Second
	rng := rand.New(rand.NewPCG(1, 2))
	fast := fakeProposer{func(ctx context.Context, req planner.Request) (planner.Result, error) {
		pt := campaign.Point{20 + 60*rng.Float64(), 1 + 4*rng.Float64()}
		return planner.Result{Proposal: campaign.Proposal{Setpoint: campaign.Setpoint{RunID: req.RunID, Point: pt}, Method: "random (soak)"}}, nil
	}}
	done := make(chan struct{})
	var ingested atomic.Int64
	var proposer Proposer = fast
	if os.Getenv("BENCHTENDER_SOAK_PLANNER") == "real" {
		proposer = nil // the campaign's own planner: refits and all
	}
	a, err := New(tc.cfg, Options{Logger: zerolog.Nop(), Tick: 5 * time.Millisecond, Proposer: proposer, Notify: func(e record.Entry) {
		if e.Kind == record.KindIngest {
			if ingested.Add(1) == int64(runs) {
				close(done)
			}
		}
	}})
	if err != nil {
		t.Fatal(err)
	}
	// The instrument writes the test campaign's export format.
	instr := &sim.Instrument{HandoffDir: tc.cfg.Instrument.HandoffDir, ExportDir: filepath.Join(tc.dir, "sim-out"),
		Factors: tc.cfg.Campaign.Factors, Columns: []string{"T", "F"}, Law: func(p campaign.Point) float64 { return 50 + p[0]/10 },
		Poll: 2 * time.Millisecond, Seed: 1, Name: "soak"}
	os.MkdirAll(instr.ExportDir, 0o755)
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	agentDone := make(chan error, 1)
	go func() { agentDone <- a.Run(ctx) }()
	go instr.Run(ctx)
	// Move each simulated result into the export folder in this test's
	// format (the sim writes the demo's; this keeps the format fixed).
	go func() {
		seen := map[string]bool{}
		for ctx.Err() == nil {
			entries, _ := os.ReadDir(instr.ExportDir)
			for _, e := range entries {
				if seen[e.Name()] {
					continue
				}
				seen[e.Name()] = true
				data, err := os.ReadFile(filepath.Join(instr.ExportDir, e.Name()))
				if err != nil {
					seen[e.Name()] = false
					continue
				}
				lines := strings.Split(strings.TrimSpace(string(data)), "\n")
				f := strings.Split(strings.TrimSpace(lines[len(lines)-1]), ";")
				if len(f) < 5 || !strings.HasPrefix(f[0], "R") || f[0] == "Sample" {
					seen[e.Name()] = false
					continue
				}
				final := filepath.Join(tc.cfg.Instrument.Watch.Dir, "res_"+f[0]+".csv")
				// The run id in the content, as real exports carry it:
				// identical content is a duplicate by design.
				body := strings.Replace(resultFile(f[3]), "\r\nx;", "\r\n"+f[0]+";", 1)
				os.WriteFile(final+".tmp", []byte(body), 0o644)
				os.Rename(final+".tmp", final)
				// Keep the simulator's folder small.
				os.Remove(filepath.Join(instr.ExportDir, e.Name()))
				delete(seen, e.Name())
			}
			time.Sleep(2 * time.Millisecond)
		}
	}()
	type sample struct{ runs, rssKB, goroutines int }
	var samples []sample
	start := time.Now()
	tick := time.NewTicker(200 * time.Millisecond)
	defer tick.Stop()
	step := max(runs/20, 1)
	next := step
loop:
	for {
		select {
		case <-done:
			break loop
		case <-tick.C:
			n := int(ingested.Load())
			if n >= next {
				runtime.GC()
				samples = append(samples, sample{n, rssKB(), runtime.NumGoroutine()})
				next += step
			}
			if time.Since(start) > 55*time.Minute {
				t.Fatalf("only %d of %d runs after 55 minutes", n, runs)
			}
		}
	}
	runtime.GC()
	samples = append(samples, sample{runs, rssKB(), runtime.NumGoroutine()})
	cancel()
	if err := <-agentDone; err != nil {
		t.Fatal(err)
	}
	var b strings.Builder
	for _, s := range samples {
		fmt.Fprintf(&b, "%d runs: RSS %.1f MB, %d goroutines\n", s.runs, float64(s.rssKB)/1024, s.goroutines)
	}
	t.Logf("%d runs in %v\n%s", runs, time.Since(start).Round(time.Second), b.String())
	first, last := samples[min(1, len(samples)-1)], samples[len(samples)-1]
	if last.goroutines > first.goroutines+2 {
		t.Errorf("goroutines grew from %d to %d", first.goroutines, last.goroutines)
	}
	if last.rssKB-first.rssKB > 100*1024 {
		t.Errorf("resident memory grew by %.0f MB", float64(last.rssKB-first.rssKB)/1024)
	}
}
