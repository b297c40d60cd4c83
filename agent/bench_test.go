package agent

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"runtime"
	"slices"
	"strings"
	"testing"
	"time"

	"github.com/rs/zerolog"

	"benchtender/campaign"
	"benchtender/record"
	"benchtender/safety"
)

// benchCampaign writes a campaign with d factors whose journal already
// holds n completed runs, and one run in flight, whose id and setpoint it
// returns.
func benchCampaign(b *testing.B, n, d int) (*testCampaign, string, campaign.Point) {
	b.Helper()
	dir := b.TempDir()
	for _, s := range []string{"exports", "handoff", "state"} {
		os.MkdirAll(filepath.Join(dir, s), 0o755)
	}
	var sb strings.Builder
	fmt.Fprintf(&sb, "[campaign]\nname = \"bench\"\nstate_dir = \"state\"\nseed = 1\nmax_runs = %d\ninitial_runs = 5\n", n+1000)
	for k := 0; k < d; k++ {
		fmt.Fprintf(&sb, "[[campaign.factor]]\nname = \"x%d\"\nmin = 0.0\nmax = 1.0\n", k)
	}
	sb.WriteString("[campaign.response]\nname = \"y\"\ngoal = \"minimise\"\n")
	sb.WriteString("[instrument]\nname = \"bench\"\nhandoff_dir = \"handoff\"\nformat = \"f\"\nlook_every = \"20ms\"\n")
	sb.WriteString("[instrument.watch]\ndir = \"exports\"\npattern = \"*.csv\"\nsettle = \"0s\"\nrescan = \"1s\"\n")
	sb.WriteString("[formats.f]\nrun_id_pattern = \"(R[0-9]+)\"\n[formats.f.values.y]\ncolumn = \"y\"\n")
	for k := 0; k < d; k++ {
		fmt.Fprintf(&sb, "[safety.limits.x%d]\nhard_min = 0.0\nhard_max = 1.0\n", k)
	}
	sb.WriteString("[log]\nfile = \"\"\n")
	cfgPath := filepath.Join(dir, "c.toml")
	os.WriteFile(cfgPath, []byte(sb.String()), 0o644)
	cfg, err := LoadConfig(cfgPath, nil)
	if err != nil {
		b.Fatal(err)
	}
	// The history: n runs of a smooth function, then one in flight.
	add, done := recordHistory(b, cfg)
	defer done()
	rng := rand.New(rand.NewPCG(uint64(n), uint64(d)))
	pass := safety.Decision{Verdict: safety.Pass}
	var pt campaign.Point
	for i := 0; i <= n; i++ {
		run := fmt.Sprintf("R%05d", i+1)
		pt = make(campaign.Point, d)
		for k := range pt {
			pt[k] = rng.Float64()
		}
		y := benchResponse(pt)
		add(record.Entry{Kind: record.KindProposal, Run: run, Point: pt, Method: "history", Decision: &pass})
		add(record.Entry{Kind: record.KindHandoff, Run: run, Point: pt, ActionID: run + "-h"})
		add(record.Entry{Kind: record.KindHandoffOK, Run: run, ActionID: run + "-h"})
		if i < n {
			add(record.Entry{Kind: record.KindIngest, Run: run, File: run + ".csv", SHA256: fmt.Sprint(i), Value: y})
		}
	}
	return &testCampaign{dir: dir, cfgPath: cfgPath, cfg: cfg}, fmt.Sprintf("R%05d", n+1), pt
}

// benchResponse is the benchmark campaigns' smooth response.
func benchResponse(pt campaign.Point) float64 {
	var y float64
	for k, v := range pt {
		y += math.Sin(3*v+float64(k)) * float64(k+1)
	}
	return y
}

// BenchmarkArrivalToHandoff: the time from a result file's arrival in the
// export folder to the next setpoint file written, with n runs in the
// journal and d factors (settle 0, so it measures the agent's own work:
// read, parse, journal, fit, propose, gate, write). Peak memory is
// reported as peak-MB (runtime's total memory obtained from the system),
// and the arrivals' median and 90th percentile as p50-ms and p90-ms. Each
// arrival is one more run, so the runs grow by b.N over a benchmark.
//
//	go test ./agent -run XXX -bench ArrivalToHandoff -benchtime 20x
func BenchmarkArrivalToHandoff(b *testing.B) {
	for _, n := range []int{50, 200, 1000} {
		for _, d := range []int{2, 6} {
			b.Run(fmt.Sprintf("N=%d/d=%d", n, d), func(b *testing.B) {
				tc, inflight, at := benchCampaign(b, n, d)
				events := make(chan record.Entry, 64)
				a, err := New(tc.cfg, Options{Logger: zerolog.Nop(), Tick: 20 * time.Millisecond, Notify: func(e record.Entry) {
					select {
					case events <- e:
					default:
					}
				}})
				if err != nil {
					b.Fatal(err)
				}
				ctx, cancel := context.WithCancel(context.Background())
				done := make(chan error, 1)
				go func() { done <- a.Run(ctx) }()
				defer func() { cancel(); <-done }()
				next := inflight
				took := make([]time.Duration, 0, b.N)
				b.ResetTimer()
				for i := 0; i < b.N; i++ {
					start := time.Now()
					path := filepath.Join(tc.cfg.Instrument.Watch.Dir, next+".csv")
					if err := os.WriteFile(path, []byte(fmt.Sprintf("run,y\n%s,%.6f\n", next, benchResponse(at))), 0o644); err != nil {
						b.Fatal(err)
					}
				wait:
					for {
						select {
						case e := <-events:
							if e.Kind == record.KindHandoff {
								at = e.Point
							}
							if e.Kind == record.KindHandoffOK {
								next = e.Run
								took = append(took, time.Since(start))
								break wait
							}
						case err := <-done:
							b.Fatalf("the agent stopped: %v", err)
						case <-time.After(2 * time.Minute):
							b.Fatalf("no handoff two minutes after %s arrived", next)
						}
					}
				}
				b.StopTimer()
				var ms runtime.MemStats
				runtime.ReadMemStats(&ms)
				b.ReportMetric(float64(ms.Sys)/1e6, "peak-MB")
				slices.Sort(took)
				b.ReportMetric(took[len(took)/2].Seconds()*1000, "p50-ms")
				b.ReportMetric(took[(len(took)*9)/10].Seconds()*1000, "p90-ms")
			})
		}
	}
}

// burstCampaign is a campaign with n runs handed off and awaiting their
// results, its budget spent (so no planning runs meanwhile), watching
// with the default settle of 2 s and events on.
func burstCampaign(b *testing.B, n int) *testCampaign {
	b.Helper()
	dir := b.TempDir()
	for _, s := range []string{"exports", "handoff", "state"} {
		os.MkdirAll(filepath.Join(dir, s), 0o755)
	}
	text := fmt.Sprintf(`[campaign]
name = "burst"
state_dir = "state"
seed = 1
max_runs = %d
initial_runs = 5
[[campaign.factor]]
name = "x"
min = 0.0
max = 1.0
[campaign.response]
name = "y"
goal = "minimise"
[instrument]
name = "bench"
handoff_dir = "handoff"
format = "f"
[instrument.watch]
dir = "exports"
pattern = "*.csv"
[formats.f]
run_id_pattern = "(R[0-9]+)"
[formats.f.values.y]
column = "y"
[safety.limits.x]
hard_min = 0.0
hard_max = 1.0
[log]
file = ""
`, n)
	cfgPath := filepath.Join(dir, "c.toml")
	os.WriteFile(cfgPath, []byte(text), 0o644)
	cfg, err := LoadConfig(cfgPath, nil)
	if err != nil {
		b.Fatal(err)
	}
	add, done := recordHistory(b, cfg)
	pass := safety.Decision{Verdict: safety.Pass}
	for i := 1; i <= n; i++ {
		run := fmt.Sprintf("R%05d", i)
		pt := campaign.Point{float64(i) / float64(n+1)}
		add(record.Entry{Kind: record.KindProposal, Run: run, Point: pt, Method: "history", Decision: &pass})
		add(record.Entry{Kind: record.KindHandoff, Run: run, Point: pt, ActionID: run + "-h"})
		add(record.Entry{Kind: record.KindHandoffOK, Run: run, ActionID: run + "-h"})
	}
	done()
	return &testCampaign{dir: dir, cfgPath: cfgPath, cfg: cfg}
}

// BenchmarkBurst1000: 1,000 result files dropped into the export folder
// at once, each answering a run in flight; the time until all 1,000 are
// in the journal (each read through os.Root, hashed, parsed, archived,
// journalled and audited with fsync), settle window of 2 s included.
//
//	go test ./agent -run XXX -bench Burst1000 -benchtime 3x
func BenchmarkBurst1000(b *testing.B) {
	const n = 1000
	for i := 0; i < b.N; i++ {
		b.StopTimer()
		tc := burstCampaign(b, n)
		ingested := make(chan struct{}, n)
		a, err := New(tc.cfg, Options{Logger: zerolog.Nop(), Tick: 50 * time.Millisecond, Notify: func(e record.Entry) {
			if e.Kind == record.KindIngest {
				ingested <- struct{}{}
			}
		}})
		if err != nil {
			b.Fatal(err)
		}
		ctx, cancel := context.WithCancel(context.Background())
		done := make(chan error, 1)
		go func() { done <- a.Run(ctx) }()
		time.Sleep(200 * time.Millisecond) // started and watching
		b.StartTimer()
		for k := 1; k <= n; k++ {
			run := fmt.Sprintf("R%05d", k)
			if err := os.WriteFile(filepath.Join(tc.cfg.Instrument.Watch.Dir, run+".csv"), []byte(fmt.Sprintf("run,y\n%s,%d.25\n", run, k)), 0o644); err != nil {
				b.Fatal(err)
			}
		}
		for k := 0; k < n; k++ {
			select {
			case <-ingested:
			case <-time.After(2 * time.Minute):
				b.Fatalf("%d of %d ingested", k, n)
			}
		}
		b.StopTimer()
		cancel()
		if err := <-done; err != nil {
			b.Fatal(err)
		}
		es, _ := record.ReadJournal(journalPath(tc.cfg.Campaign.StateDir))
		if got := len(record.Replay(es).Trials()); got != n {
			b.Fatalf("%d runs done, want %d", got, n)
		}
	}
}

// recordHistory opens the campaign's record the way the agent does and
// returns a function that appends an entry to the journal and the audit
// trail together (so the agent vouches for the history at start), and one
// that closes the record.
func recordHistory(b *testing.B, cfg Config) (add func(record.Entry), done func()) {
	b.Helper()
	a, err := New(cfg, Options{Logger: zerolog.Nop()})
	if err != nil {
		b.Fatal(err)
	}
	if err := a.open(); err != nil {
		b.Fatal(err)
	}
	add = func(e record.Entry) {
		if err := a.record(e); err != nil {
			b.Fatal(err)
		}
	}
	done = func() {
		a.closeStores()
		if a.unlock != nil {
			a.unlock()
		}
	}
	return add, done
}
