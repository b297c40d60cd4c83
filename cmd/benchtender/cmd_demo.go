package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"time"

	"benchtender/agent"
	"benchtender/campaign"
	"benchtender/examples"
	"benchtender/examples/sim"
	"benchtender/planner/pareto"
	"benchtender/record"
	"benchtender/safety"
)

// demoSigner is the identity under which the demo signs off held moves. It
// says plainly that no person signed.
const demoSigner = "demo-technician (simulated, not a person)"

// cmdDemo runs the invented demo campaign on the simulated instrument.
func cmdDemo(ctx context.Context, args []string, stdout io.Writer) error {
	fs := flag.NewFlagSet("demo", flag.ContinueOnError)
	dir := fs.String("dir", "", "folder for the demo's files (kept); default: a temporary folder, removed at the end")
	runs := fs.Int("runs", 30, "number of runs")
	seed := fs.Uint64("seed", 1, "seed of the planner and the simulated noise")
	responses := fs.Int("responses", 1, "1: maximise colour strength; 2: trade colour strength off against the energy a batch takes (a Pareto front)")
	pos, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	if len(pos) != 0 {
		return usageError{"demo: takes no arguments besides --dir, --runs, --seed and --responses"}
	}
	if *responses != 1 && *responses != 2 {
		return usageError{"demo: --responses must be 1 or 2"}
	}
	if *runs < 2 {
		return usageError{"demo: --runs must be at least 2"}
	}
	keep := *dir != ""
	root := *dir
	if !keep {
		if root, err = os.MkdirTemp("", "benchtender-demo-"); err != nil {
			return err
		}
		defer os.RemoveAll(root)
	}
	for _, d := range []string{"exports", "handoff", "state"} {
		if err := os.MkdirAll(filepath.Join(root, d), 0o755); err != nil {
			return err
		}
	}
	cfgPath := filepath.Join(root, "benchtender.toml")
	text := examples.Config(*runs, *seed)
	if *responses == 2 {
		text = examples.ConfigTwo(*runs, *seed)
	}
	if err := os.WriteFile(cfgPath, []byte(text), 0o644); err != nil {
		return err
	}
	cfg, err := loadConfig(cfgPath)
	if err != nil {
		return err
	}
	log, closeLog, err := newLogger(cfg, io.Discard, false)
	if err != nil {
		return err
	}
	defer closeLog()

	ctx, cancel := context.WithTimeout(ctx, 5*time.Minute)
	defer cancel()
	events := make(chan record.Entry, 4096)
	a, err := agent.New(cfg, agent.Options{Logger: log, Tick: 100 * time.Millisecond, Notify: func(e record.Entry) {
		select {
		case events <- e:
		default: // the demo's printing must never stall the agent
		}
	}})
	if err != nil {
		return err
	}
	instr := &sim.Instrument{
		HandoffDir: cfg.Instrument.HandoffDir, ExportDir: cfg.Instrument.Watch.Dir,
		Factors: cfg.Campaign.Factors, Columns: []string{"Temp", "Feed", "Hold"},
		Law: examples.ColourStrength, Noise: 0.3, Delay: 150 * time.Millisecond, Seed: *seed, Name: "Bench reactor BR-2",
	}
	fmt.Fprintf(stdout, "benchtender demo: an INVENTED bench process (simulated reactor, invented pigment \"Ochre 7\")\n")
	if *responses == 2 {
		instr.Extra = []sim.Output{{Column: "Energy", Law: examples.Energy, Noise: 0.02}}
		fmt.Fprintf(stdout, "trading colour strength (made large) off against the energy a batch takes (made small), over temperature, feed rate and hold time, in %d runs; files in %s\n\n", *runs, root)
	} else {
		fmt.Fprintf(stdout, "maximising colour strength over temperature, feed rate and hold time in %d runs; files in %s\n\n", *runs, root)
	}

	agentDone := make(chan error, 1)
	simDone := make(chan error, 1)
	go func() { agentDone <- a.Run(ctx) }()
	go func() { simDone <- instr.Run(ctx) }()

	start := time.Now()
	p := demoPrinter{out: stdout, cfg: cfg, total: *runs}
	var runErr error
loop:
	for {
		select {
		case e := <-events:
			if e.Kind == record.KindProposal && e.Decision != nil && e.Decision.Verdict == safety.Hold {
				p.held(e)
				go signOff(ctx, cfg, e.Run, stdout)
			}
			if e.Kind == record.KindSignoff {
				fmt.Fprintf(stdout, "         %s %s by %s\n", e.Run, e.Action+"d", e.Name)
			}
			if e.Kind == record.KindIngest || e.Kind == record.KindQuarantine {
				p.result(e)
				if p.done >= *runs {
					break loop
				}
			}
		case err := <-agentDone:
			runErr = fmt.Errorf("demo: the agent stopped: %v", err)
			agentDone <- err
			break loop
		case err := <-simDone:
			runErr = fmt.Errorf("demo: the simulated instrument stopped: %v", err)
			simDone <- err
			break loop
		case <-ctx.Done():
			runErr = fmt.Errorf("demo: %w after %d of %d runs", ctx.Err(), p.done, *runs)
			break loop
		}
	}
	cancel()
	<-agentDone
	<-simDone
	if runErr != nil && !errors.Is(runErr, context.Canceled) {
		return runErr
	}
	if cfg.Campaign.Several() {
		p.frontSummary(ctx, time.Since(start), root, keep)
	} else {
		p.summary(time.Since(start), root, keep)
	}
	return runErr
}

// signOff approves a held move after a short pause, through the same
// inbox the approve command uses, under the demo's labelled identity.
func signOff(ctx context.Context, cfg agent.Config, run string, stdout io.Writer) {
	select {
	case <-ctx.Done():
		return
	case <-time.After(300 * time.Millisecond):
	}
	_, err := agent.RequestSignoff(cfg, agent.SignoffRequest{Run: run, Action: record.ActionApprove, By: "demo", Name: demoSigner,
		Reason: "demo: approved automatically to show the sign-off path"})
	if err != nil {
		fmt.Fprintf(stdout, "         sign-off of %s failed: %v\n", run, err)
	}
}

type demoPrinter struct {
	out      io.Writer
	cfg      agent.Config
	total    int
	done     int
	best     float64
	bestRun  string
	bestAt   campaign.Point
	proposed map[string]record.Entry
}

func (p *demoPrinter) held(e record.Entry) {
	var why []string
	for _, r := range e.Decision.Reasons {
		why = append(why, r.Message)
	}
	fmt.Fprintf(p.out, "         %s held for sign-off: %s\n", e.Run, strings.Join(why, "; "))
}

func (p *demoPrinter) result(e record.Entry) {
	p.done++
	if e.Kind == record.KindQuarantine {
		fmt.Fprintf(p.out, "run %2d/%d  quarantined %s: %s\n", p.done, p.total, filepath.Base(e.File), e.Reason)
		return
	}
	st, _ := readState(p.cfg)
	var pt campaign.Point
	method := ""
	if st != nil {
		if r := st.Runs[e.Run]; r != nil {
			pt, method = r.Point, r.Method
		}
	}
	if p.cfg.Campaign.Several() {
		var vals []string
		for _, r := range p.cfg.Campaign.Responses {
			v := "-"
			if st != nil && st.Runs[e.Run] != nil {
				if rd, ok := st.Runs[e.Run].Values[r.Name]; ok {
					v = fmt.Sprintf("%.2f", rd.Value)
				}
			}
			vals = append(vals, fmt.Sprintf("%s %s %s", r.Name, v, r.Unit))
		}
		front := 0
		if st != nil {
			// The runs no run beats in every response, counted on the
			// measured values (status and the report add the model's view).
			var losses [][]float64
			for _, t := range st.TrialsOf(p.cfg.Campaign.ResponseNames()) {
				l := make([]float64, len(t.Values))
				for i, r := range p.cfg.Campaign.Responses {
					l[i] = r.Loss(t.Values[i])
				}
				losses = append(losses, l)
			}
			front = len(pareto.Front(losses))
		}
		fmt.Fprintf(p.out, "run %2d/%d  %s  %-58s -> %s   front %d runs  (%s)\n", p.done, p.total, e.Run, p.cfg.Campaign.Factors.Describe(pt), strings.Join(vals, ", "), front, method)
		return
	}
	resp := p.cfg.Campaign.Response
	if p.bestRun == "" || resp.Better(e.Value, p.best) {
		p.best, p.bestRun, p.bestAt = e.Value, e.Run, pt
	}
	fmt.Fprintf(p.out, "run %2d/%d  %s  %-58s -> %s %6.2f %s   best %6.2f  (%s)\n",
		p.done, p.total, e.Run, p.cfg.Campaign.Factors.Describe(pt), resp.Name, e.Value, resp.Unit, p.best, method)
}

// frontSummary closes the demo with two responses: the front found.
func (p *demoPrinter) frontSummary(ctx context.Context, took time.Duration, root string, keep bool) {
	fmt.Fprintf(p.out, "\nsummary (invented scenario)\n")
	fmt.Fprintf(p.out, "  runs done:      %d in %.1f s\n", p.done, took.Seconds())
	st, err := readState(p.cfg)
	if err == nil {
		printFront(context.WithoutCancel(ctx), p.out, p.cfg, st)
	}
	p.files(root, keep)
}

func (p *demoPrinter) summary(took time.Duration, root string, keep bool) {
	resp := p.cfg.Campaign.Response
	opt, val := examples.Optimum()
	fmt.Fprintf(p.out, "\nsummary (invented scenario)\n")
	fmt.Fprintf(p.out, "  runs done:      %d in %.1f s\n", p.done, took.Seconds())
	if p.bestRun != "" {
		fmt.Fprintf(p.out, "  best found:     %s, %s = %.2f %s at %s (measured, with noise)\n", p.bestRun, resp.Name, p.best, resp.Unit, p.cfg.Campaign.Factors.Describe(p.bestAt))
		fmt.Fprintf(p.out, "                  true law there: %.2f %s (%.2f%% below the true optimum)\n", examples.ColourStrength(p.bestAt), resp.Unit, 100*(val-examples.ColourStrength(p.bestAt))/val)
	}
	fmt.Fprintf(p.out, "  true optimum:   %s = %.2f %s at %s (the simulator's invented law)\n", resp.Name, val, resp.Unit, p.cfg.Campaign.Factors.Describe(opt))
	p.files(root, keep)
}

// files says where the demo's files are, or that they were removed.
func (p *demoPrinter) files(root string, keep bool) {
	if keep {
		fmt.Fprintf(p.out, "  files:          %s\n", root)
		fmt.Fprintf(p.out, "                  config    %s\n", filepath.Join(root, "benchtender.toml"))
		fmt.Fprintf(p.out, "                  journal   %s\n", filepath.Join(p.cfg.Campaign.StateDir, "journal.log"))
		fmt.Fprintf(p.out, "                  log       %s\n", p.cfg.Log.File)
		fmt.Fprintf(p.out, "                  results   %s\n", p.cfg.Instrument.Watch.Dir)
		fmt.Fprintf(p.out, "                  setpoints %s (taken ones in taken/)\n", p.cfg.Instrument.HandoffDir)
		fmt.Fprintf(p.out, "  try:            go run ./cmd/benchtender status --config %s\n", filepath.Join(root, "benchtender.toml"))
	} else {
		fmt.Fprintf(p.out, "  files:          were in %s, now removed; use --dir DIR to keep them\n", root)
	}
}
