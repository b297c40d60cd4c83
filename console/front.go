package console

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"strings"

	"benchtender/agent"
	"benchtender/campaign"
	"benchtender/planner"
	"benchtender/planner/pareto"
	"benchtender/plots"
	"benchtender/record"
)

// Front is the Pareto front of a campaign with several responses, for
// people: the runs no other run beats in every response, with their
// values, setpoints and how sure the model is that each is truly on the
// front, and what the front dominates.
type Front struct {
	Responses []campaign.Response
	// Reference says the worst acceptable values the front is measured
	// from ("purity 50 %, energy 262 kJ").
	Reference string
	Members   []FrontRow
	// Draws is the number of posterior draws behind FrontRow.Sure (0: no
	// model yet).
	Draws int
	// Runs is the number of completed runs with every response.
	Runs int
	// Hypervolume is what the runs dominate up to the reference point, in
	// HypervolumeUnit.
	Hypervolume     float64
	HypervolumeUnit string
}

// FrontRow is one run on the front.
type FrontRow struct {
	ID       string
	Values   []string // one per response, with its unit
	Setpoint []Value
	// Sure is the share of posterior draws in which the run is on the
	// front (NaN without a model).
	Sure float64
	// Beyond names the responses in which the run is worse than the worst
	// acceptable value: on the front, yet adding nothing to what it
	// dominates.
	Beyond []string
}

// SummariseFront works out the front of the campaign's completed runs and
// its figures: each pair of responses against each other, and the
// hypervolume over runs.
func SummariseFront(ctx context.Context, cfg agent.Config, st *record.State) (*Front, []plots.Figure, error) {
	cc := cfg.Campaign
	trials := st.TrialsOf(cc.ResponseNames())
	runs := st.TrialRuns()
	fp := planner.NewFront(cc, cfg.Planner)
	rep, err := fp.Report(ctx, trials, rand.New(rand.NewPCG(cc.Seed, 0xf407)))
	if err != nil {
		return nil, nil, err
	}
	f := &Front{Responses: cc.Responses, Runs: len(trials), Draws: rep.Draws}
	if len(trials) == 0 {
		return f, nil, nil
	}
	var ref, units []string
	logged := false
	for k, r := range cc.Responses {
		ref = append(ref, strings.TrimSpace(fmt.Sprintf("%s %.4g %s", r.Name, rep.Reference[k], r.Unit)))
		u := r.Unit
		if u == "" {
			u = "1"
		}
		if r.Transform == campaign.TransformLog {
			u, logged = "ln "+u, true
		}
		units = append(units, u)
	}
	f.Reference = strings.Join(ref, ", ")
	f.HypervolumeUnit = strings.Join(units, " × ")
	if logged {
		f.HypervolumeUnit += "; logged responses on a natural-log scale"
	}
	f.Hypervolume = rep.Hypervolume[len(rep.Hypervolume)-1]
	for k, m := range rep.Members {
		row := FrontRow{ID: runs[m].ID, Setpoint: values(cc.Factors, trials[m].Point), Sure: math.NaN()}
		for i, r := range cc.Responses {
			row.Values = append(row.Values, strings.TrimSpace(fmt.Sprintf("%.4g %s", trials[m].Values[i], r.Unit)))
		}
		if rep.OnFront != nil {
			row.Sure = rep.OnFront[k]
		}
		for i, r := range cc.Responses {
			if !r.Better(trials[m].Values[i], rep.Reference[i]) {
				row.Beyond = append(row.Beyond, r.Name)
			}
		}
		f.Members = append(f.Members, row)
	}
	var figs []plots.Figure
	for a := 0; a < len(cc.Responses); a++ {
		for b := a + 1; b < len(cc.Responses); b++ {
			xs, ys := make([]float64, len(trials)), make([]float64, len(trials))
			losses := make([][]float64, len(trials))
			for i, t := range trials {
				xs[i], ys[i] = t.Values[a], t.Values[b]
				losses[i] = []float64{cc.Responses[a].Loss(xs[i]), cc.Responses[b].Loss(ys[i])}
			}
			// With two responses the panel's front is the campaign's; with
			// more, each panel rings the runs no run beats in its pair.
			members := rep.Members
			if len(cc.Responses) > 2 {
				members = pareto.Front(losses)
			}
			if fig, err := plots.FrontPair(cc.Responses[a], cc.Responses[b], xs, ys, members, rep.Reference[a], rep.Reference[b]); err == nil {
				figs = append(figs, fig)
			}
		}
	}
	if fig, err := plots.Hypervolume(rep.Hypervolume, f.HypervolumeUnit); err == nil {
		figs = append(figs, fig)
	}
	return f, figs, nil
}
