// Package closedloop runs one closed-loop campaign of the benchmark
// scripts: the planner proposes, the suite problem's function gives the
// run's value (with the problem's noise added), and the run goes back to
// the planner with every region set aside, as the agent would journal it.
package closedloop

import (
	"context"
	"fmt"
	"math/rand/v2"

	"benchtender/campaign"
	"benchtender/planner"
	"benchtender/planner/gp"
	"benchtender/planner/testfn"
)

// Step is one run of a campaign, for Run's callback.
type Step struct {
	// Index counts the runs before this one.
	Index int
	// Result is the planner's proposal for it.
	Result planner.Result
	// Truth is the function's value there, without noise.
	Truth float64
}

// Outcome is what a campaign gave.
type Outcome struct {
	// Runs is the number of runs until the optimum was reached (the
	// budget when it was not).
	Runs    int
	Reached bool
	// Stopped is the number of runs after which the stopping rule fired
	// (0: it did not, or it was off).
	Stopped int
}

// Run runs the campaign of prob with seed under cfg until a run's true
// value reaches the optimum or the budget is spent; with stop, the
// stopping rule is on (each factor's location within 5% of its range,
// ei_below a tenth of the problem's tolerance, search_elsewhere as cfg
// has it) and the campaign goes on
// after the optimum until the rule fires. each, when not nil, is called
// after every run.
func Run(ctx context.Context, prob testfn.Problem, seed uint64, cfg planner.Config, stop bool, each func(Step)) (Outcome, error) {
	f := prob.Instance(seed)
	if stop {
		cfg.Stop = planner.StopConfig{Tolerance: map[string]float64{}, EIBelow: prob.Tol / 10, SearchElsewhere: cfg.Stop.SearchElsewhere}
		for _, fa := range f.Space {
			cfg.Stop.Tolerance[fa.Name] = 0.05 * (fa.Max - fa.Min)
		}
	}
	cc := campaign.Config{Name: "bench", StateDir: "x", Seed: seed, MaxRuns: prob.Budget, Factors: f.Space,
		Response: campaign.Response{Name: "f", Goal: campaign.Minimise}}
	p := planner.New(cc, cfg)
	noise := rand.New(rand.NewPCG(seed, 99))
	var trials []campaign.Trial
	var warm *gp.Params
	var previous *planner.Surrogate
	var asides []planner.Aside
	reachedAt := 0
	missed := Outcome{Runs: prob.Budget}
	for i := 0; i < prob.Budget; i++ {
		res, err := p.Propose(ctx, planner.Request{RunID: "R", Index: i, Trials: trials, Warm: warm, Previous: previous, Aside: asides})
		if err != nil {
			return missed, fmt.Errorf("%s seed %d run %d: %w", prob.Name, seed, i+1, err)
		}
		if res.Stop != "" {
			if reachedAt == 0 {
				return Outcome{Runs: prob.Budget, Stopped: i}, nil
			}
			return Outcome{Runs: reachedAt, Reached: true, Stopped: i}, nil
		}
		warm = res.Fit
		previous = res.Surrogate
		if res.NewAside != nil {
			asides = append(asides, *res.NewAside) // as the agent journals it
		}
		truth := f.F(res.Proposal.Point)
		obs := truth
		if prob.NoiseSD > 0 {
			obs += prob.NoiseSD * noise.NormFloat64()
		}
		trials = append(trials, campaign.Trial{Point: res.Proposal.Point, Value: obs})
		if each != nil {
			each(Step{Index: i, Result: res, Truth: truth})
		}
		if prob.Reached(truth) && reachedAt == 0 {
			reachedAt = i + 1
			if !stop {
				return Outcome{Runs: reachedAt, Reached: true}, nil
			}
		}
	}
	if reachedAt > 0 {
		return Outcome{Runs: reachedAt, Reached: true}, nil
	}
	return missed, nil
}
