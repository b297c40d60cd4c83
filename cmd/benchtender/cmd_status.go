package main

import (
	"context"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"path/filepath"
	"sort"
	"strings"

	"benchtender/agent"
	"benchtender/console"
	"benchtender/planner"
	"benchtender/record"
)

// cmdStatus summarises the campaign from its journal.
func cmdStatus(ctx context.Context, args []string, stdout io.Writer) error {
	cfg, _, st, err := campaignFromArgs("status", args)
	if err != nil {
		return err
	}
	counts := map[string]int{}
	for _, r := range st.Runs {
		counts[r.Status]++
	}
	fmt.Fprintf(stdout, "campaign %s: %d proposals, %d handoffs, budget %d runs\n", cfg.Campaign.Name, st.Proposals, st.Handoffs, cfg.Campaign.MaxRuns)
	for _, s := range []string{record.StatusDone, record.StatusFailed, record.StatusHanded, record.StatusReady, record.StatusHeld, record.StatusRejected, record.StatusRefused} {
		if counts[s] > 0 {
			fmt.Fprintf(stdout, "  %-10s %d\n", s, counts[s])
		}
	}
	for _, h := range agent.Halts(cfg, st) {
		fmt.Fprintln(stdout, h)
	}
	if fl := ids(st.InFlight()); len(fl) > 0 {
		fmt.Fprintf(stdout, "awaiting result: %s (instruments take %d setpoint file(s) at once)\n", strings.Join(fl, ", "), cfg.Capacity())
	}
	if q := ids(st.Ready()); len(q) > 0 {
		fmt.Fprintf(stdout, "cleared, queued for handoff in this order: %s\n", strings.Join(q, ", "))
	}
	for _, r := range st.Held() {
		if f := r.First; f != nil {
			fmt.Fprintf(stdout, "%s held: first of two approvals by %s, for %s; waits for a second person\n", r.ID, f.Describe(cfg.Campaign.Factors), cfg.Campaign.Factors.Describe(f.Point))
		}
	}
	for _, n := range agent.Notices(cfg) {
		fmt.Fprintln(stdout, "NOTE: "+n)
	}
	for _, id := range st.Order {
		if r := st.Runs[id]; len(r.Files) > 1 {
			fmt.Fprintf(stdout, "  %s has %d revisions; the latest counts: %s\n", r.ID, len(r.Files), filepath.Base(r.Files[len(r.Files)-1]))
		}
	}
	if st.Stopped != "" {
		fmt.Fprintf(stdout, "proposals stopped: %s\n", st.Stopped)
	} else if st.Proposals-countStatus(st, record.StatusRejected, record.StatusRefused) >= cfg.Campaign.MaxRuns {
		fmt.Fprintf(stdout, "proposals stopped: the budget of %d runs is spent\n", cfg.Campaign.MaxRuns)
	} else if st.Stopping != "" {
		fmt.Fprintf(stdout, "stopping rule at the latest proposal: %s\n", st.Stopping)
	}
	if cfg.Campaign.Several() {
		printFront(ctx, stdout, cfg, st)
		return nil
	}
	resp := cfg.Campaign.Response
	if b := st.Best(resp); b != nil {
		fmt.Fprintf(stdout, "best so far: %s, %s = %.4g %s (%s)\n", b.ID, resp.Name, b.Value, resp.Unit, cfg.Campaign.Factors.Describe(b.Point))
	}
	printModel(ctx, stdout, cfg, st)
	return nil
}

// printFront says which runs are on the Pareto front of a campaign with
// several responses, how sure the model is of each, and what the front
// dominates.
func printFront(ctx context.Context, stdout io.Writer, cfg agent.Config, st *record.State) {
	f, _, err := console.SummariseFront(ctx, cfg, st)
	switch {
	case err != nil:
		fmt.Fprintf(stdout, "Pareto front: not worked out (%v)\n", err)
		return
	case len(f.Members) == 0:
		fmt.Fprintln(stdout, "Pareto front: no completed run with every response yet")
		return
	}
	fmt.Fprintf(stdout, "Pareto front: %d of %d completed runs (no other run is as good in every response and better in one)\n", len(f.Members), f.Runs)
	for _, m := range f.Members {
		sure := "on the front in " + fmt.Sprintf("%.0f%%", 100*m.Sure) + " of the model's draws"
		if math.IsNaN(m.Sure) {
			sure = "no model yet"
		}
		var sp []string
		for _, v := range m.Setpoint {
			sp = append(sp, strings.TrimSpace(v.Factor+" "+v.Text+" "+v.Unit))
		}
		if len(m.Beyond) > 0 {
			sure += "; worse than the worst acceptable " + strings.Join(m.Beyond, " and ")
		}
		fmt.Fprintf(stdout, "  %s  %s  (%s; %s)\n", m.ID, strings.Join(m.Values, ", "), strings.Join(sp, ", "), sure)
	}
	fmt.Fprintf(stdout, "hypervolume %.4g (%s), measured from the worst acceptable values: %s\n", f.Hypervolume, f.HypervolumeUnit, f.Reference)
}

// printModel fits the surrogate to the completed runs and says how well
// it fits: hyperparameters in the factors' units and the leave-one-out
// check (Rasmussen and Williams 2006, section 5.4.2).
func printModel(ctx context.Context, stdout io.Writer, cfg agent.Config, st *record.State) {
	runs := st.TrialRuns()
	pl := planner.New(cfg.Campaign, cfg.Planner)
	d, fitted, err := pl.Diagnose(ctx, st.Trials())
	if err != nil {
		fmt.Fprintf(stdout, "model: not fitted (%v)\n", err)
		return
	}
	unit := d.Units
	fmt.Fprintf(stdout, "model: Gaussian process, %s kernel, %d runs, log marginal likelihood %.2f\n", d.Kernel, d.Runs, d.LogLikelihood)
	var scales []string
	for _, s := range d.LengthScales {
		scales = append(scales, strings.TrimSpace(fmt.Sprintf("%s %.3g %s", s.Factor, s.Value, s.Unit)))
	}
	fmt.Fprintf(stdout, "  length-scales: %s\n", strings.Join(scales, ", "))
	fmt.Fprintf(stdout, "  signal sd %.3g %s, noise sd %.3g %s\n", d.SignalSD, unit, d.NoiseSD, unit)
	if cfg.Planner.Additive {
		fmt.Fprintf(stdout, "  %.0f%% of the signal's variance in effects of one factor at a time, the rest in effects of factors together\n", 100*d.Additive)
	}
	fmt.Fprintf(stdout, "  leave-one-out: RMSE %.3g %s; %.0f%% of runs beyond ±2 sd (about 5%% expected when the model fits)\n", d.LOORMSE, cfg.Campaign.Response.Unit, 100*d.Outside2)
	worst := append([]planner.CheckPoint(nil), d.Checks...)
	sort.Slice(worst, func(i, j int) bool { return math.Abs(worst[i].Standardised) > math.Abs(worst[j].Standardised) })
	for _, c := range worst[:min(3, len(worst))] {
		fmt.Fprintf(stdout, "    %s measured %.4g, predicted from the others %.4g (standardised error %+.2f)\n", runs[c.Index].ID, c.Measured, c.Predicted, c.Standardised)
	}
	if note := agent.SetAsideNote(st); note != "" {
		fmt.Fprintf(stdout, "  %s\n", note)
	}
	o, err := pl.OptimumOf(ctx, fitted, cfg.Planner.Samples, rand.New(rand.NewPCG(cfg.Campaign.Seed, 0x0b7)))
	if err != nil {
		fmt.Fprintf(stdout, "optimum: not computed (%v)\n", err)
		return
	}
	resp := cfg.Campaign.Response
	ov := console.SummariseOptimum(cfg, o, st.Trials(), d.LengthScales)
	fmt.Fprintf(stdout, "where the optimum probably is (%d posterior draws): most likely value; 90%% highest-density region (share of draws); 90%% box (holds %.0f%%):\n", o.Samples, 100*o.BoxMass)
	for _, b := range ov.Box {
		fmt.Fprintf(stdout, "  %-14s %s %s; %s; box %s to %s %s\n", b.Factor, b.Likely, b.Unit, strings.Join(b.Region, " and "), b.Low, b.High, b.Unit)
	}
	for _, w := range ov.Beyond {
		fmt.Fprintf(stdout, "  CAUTION: %s\n", w)
	}
	fmt.Fprintf(stdout, "best achievable %s: median %.4g %s, 90%% interval %.4g to %.4g\n", resp.Name, ov.Median, resp.Unit, ov.Low, ov.High)
	if ov.Bounded != "" {
		fmt.Fprintf(stdout, "  (%s)\n", ov.Bounded)
	}
	if !math.IsNaN(o.BestWithin) {
		fmt.Fprintf(stdout, "probability that the best run so far is within %g %s of it: %.2f\n", cfg.Planner.Stop.ValueTolerance, resp.Unit, o.BestWithin)
	}
}

func countStatus(st *record.State, sts ...string) int {
	n := 0
	for _, r := range st.Runs {
		for _, s := range sts {
			if r.Status == s {
				n++
			}
		}
	}
	return n
}

func ids(runs []*record.Run) []string {
	out := make([]string, len(runs))
	for i, r := range runs {
		out[i] = r.ID
	}
	return out
}
