package planner

import (
	"context"
	"fmt"
	"math"

	"benchtender/campaign"
	"benchtender/planner/gp"
	"benchtender/planner/pareto"
)

// Ways of choosing the next run when several responses are traded off
// (FrontConfig.Acquisition).
const (
	// FrontHypervolume is the expected hypervolume improvement (Emmerich,
	// Giannakoglou and Naujoks 2006, "Single- and multiobjective
	// evolutionary optimization assisted by Gaussian random field
	// metamodels", IEEE Trans. Evol. Comput. 10(4)), estimated by Monte
	// Carlo over draws of each response's posterior at the point, with the
	// same draws for every point (common random numbers, as in the
	// Monte-Carlo form of Daulton, Balandat and Bakshy 2020, "Differentiable
	// expected hypervolume improvement for parallel multi-objective
	// Bayesian optimization", NeurIPS).
	FrontHypervolume = "hypervolume"
	// FrontScalarised is a random scalarisation at every run (ParEGO:
	// Knowles 2006, "ParEGO: a hybrid algorithm with on-line landscape
	// approximation for expensive multiobjective optimization problems",
	// IEEE Trans. Evol. Comput. 10(1)): the responses, scaled to [0, 1],
	// folded into one by the augmented Chebyshev function with weights
	// drawn afresh, and that one response planned as a single-response
	// campaign is.
	FrontScalarised = "scalarised"
)

// Methods named in proposals of a campaign with several responses.
const (
	MethodHypervolume = "expected hypervolume improvement"
	MethodScalarised  = "random scalarisation"
)

// FrontSummary is the Pareto front as a campaign's runs show it, beside a
// proposal of a campaign with several responses (Result.Front).
type FrontSummary struct {
	// Members holds the indices of the trials on the front.
	Members []int
	// Hypervolume is what the trials dominate up to the reference point,
	// in the responses' modelled units (a response to be made large
	// negated, a logged one logged).
	Hypervolume float64
	// Reference is the reference point in the same units.
	Reference []float64
	// Improvement is the proposal's expected hypervolume improvement, in
	// the same units (NaN when a scalarisation chose it or during the
	// initial design).
	Improvement float64
	// Models are the surrogates, one per response (nil during the initial
	// design and with the scalarisation).
	Models []*gp.Model
}

// FrontPlanner proposes setpoints for a campaign that trades several
// responses off: one Gaussian process per response, fitted as for a
// single response.
type FrontPlanner struct {
	method string
	// stopBelow is Config.Stop.HypervolumeBelow (0: the rule is off).
	stopBelow float64
	// noisy is FrontConfig.Noisy.
	noisy     bool
	responses []campaign.Response
	// worst holds each response's worst acceptable value (NaN when not
	// given), the reference point of the hypervolume.
	worst []float64
	// per holds one single-response planner per response; its design is
	// the campaign's.
	per []*Planner
	// folded plans the scalarised response.
	folded *Planner
}

// NewFront returns a planner for a campaign with several responses
// (cc.Responses, two to four), each one's Worst the reference point of
// the front. It panics on an invalid config, which the caller must have
// validated.
func NewFront(cc campaign.Config, cfg Config) *FrontPlanner {
	responses := cc.Responses
	if len(responses) < 2 || len(responses) > 4 {
		panic(fmt.Sprintf("planner: %d responses; want 2 to 4", len(responses)))
	}
	if err := cc.Validate().Err(); err != nil {
		panic(fmt.Sprintf("planner: invalid campaign: %v", err))
	}
	worst := make([]float64, len(responses))
	for i, r := range responses {
		worst[i] = math.NaN()
		if r.Worst != nil {
			worst[i] = *r.Worst
		}
	}
	// What belongs to the whole campaign, not to one response, is off for
	// each: setting a basin aside and the stopping rule. The output warp
	// is off by default (FrontConfig.Warp): it sharpens a model near a
	// response's lowest values, and a front needs each response modelled
	// over its whole range. Measured
	// (docs/planner-figures.md, "Pareto front"), the median share of the
	// front found in 40 runs rose without it on every problem: tuning set
	// DTLZ2 0.49 to 0.92, ZDT2 0.94 to 0.96, Branin-Currin 0.90 to 0.97;
	// validation set ZDT1 0.974 to 0.977, ZDT3 0.82 to 0.92, ZDT1 in 4
	// factors 0.971 to 0.975.
	one := cfg
	one.SetAside = false
	one.Stop = StopConfig{}
	one.Warp, one.Kernel = cfg.Front.Warp, cfg.Front.Kernel
	fp := &FrontPlanner{method: cfg.Front.Acquisition, stopBelow: cfg.Stop.HypervolumeBelow, noisy: cfg.Front.Noisy, responses: responses, worst: worst}
	for _, r := range responses {
		c := cc
		r.Worst = nil // used here, not by the response's own planner
		c.Response, c.Responses = r, nil
		fp.per = append(fp.per, New(c, one))
	}
	c := cc
	c.Response, c.Responses = campaign.Response{Name: "scalarised", Goal: campaign.Minimise}, nil
	fp.folded = New(c, one)
	return fp
}

// losses returns the trials' values (Trial.Values, one per response) as
// modelled losses, one row per trial.
func (fp *FrontPlanner) losses(trials []campaign.Trial) ([][]float64, error) {
	out := make([][]float64, len(trials))
	for i, t := range trials {
		if len(t.Values) != len(fp.responses) {
			return nil, fmt.Errorf("planner: trial %d has %d values for %d responses", i, len(t.Values), len(fp.responses))
		}
		out[i] = make([]float64, len(t.Values))
		for k, v := range t.Values {
			l, err := fp.responses[k].Modelled(v)
			if err != nil || math.IsNaN(l) || math.IsInf(l, 0) {
				return nil, fmt.Errorf("planner: trial %d: %s = %v cannot be modelled: %v", i, fp.responses[k].Name, v, err)
			}
			out[i][k] = l
		}
	}
	return out, nil
}

// reference is the reference point in loss units: each response's worst
// acceptable value, or where none is given, the worst loss seen plus a
// tenth of the range seen (common practice).
func (fp *FrontPlanner) reference(losses [][]float64) []float64 {
	ref := make([]float64, len(fp.responses))
	for k, r := range fp.responses {
		if w := fp.worst[k]; !math.IsNaN(w) {
			if l, err := r.Modelled(w); err == nil {
				ref[k] = l
				continue
			}
		}
		lo, hi := math.Inf(1), math.Inf(-1)
		for _, l := range losses {
			lo, hi = math.Min(lo, l[k]), math.Max(hi, l[k])
		}
		ref[k] = hi + 0.1*math.Max(hi-lo, 1e-9*math.Max(1, math.Abs(hi)))
	}
	return ref
}

// Propose returns the next proposal and the front so far (Result.Front).
// Each trial carries one value per response in Values. Previous is the
// last proposal's Result.Surrogate, each response's model held between
// fits from hold_fit_from runs on; Warm and Aside are not used.
func (fp *FrontPlanner) Propose(ctx context.Context, req Request) (Result, error) {
	if err := ctx.Err(); err != nil {
		return Result{}, err
	}
	losses, err := fp.losses(req.Trials)
	if err != nil {
		return Result{}, err
	}
	fs := &FrontSummary{Improvement: math.NaN()}
	if len(losses) > 0 {
		fs.Reference = fp.reference(losses)
		fs.Members = pareto.Front(losses)
		fs.Hypervolume = pareto.Hypervolume(losses, fs.Reference)
	}
	var res Result
	p := fp.per[0]
	switch {
	case req.Index < p.nInit || len(req.Trials) < minFit:
		res, err = p.Propose(ctx, fp.single(req, nil))
	case fp.method == FrontScalarised:
		res, err = fp.scalarised(ctx, req, losses, fs.Reference)
	default:
		res, err = fp.hypervolume(ctx, req, losses, fs)
		if err == nil && fp.stopBelow > 0 {
			res.Stopping = fp.stopping(fs)
			if res.Stopping.Stop {
				res.Stop = "the front is found well enough: " + res.Stopping.String()
			}
		}
	}
	if err != nil {
		return Result{}, err
	}
	res.Front = fs
	return res, nil
}

// stopping is the stopping rule of a campaign with several responses: the
// largest expected hypervolume improvement, as a share of what the runs
// already dominate, is at most stop.hypervolume_below. No run is then
// expected to move the front out by more than that share.
func (fp *FrontPlanner) stopping(fs *FrontSummary) *Stopping {
	t := StopTest{Name: "expected hypervolume improvement", Threshold: 100 * fp.stopBelow, Unit: "% of the front's hypervolume", Done: true}
	if fs.Hypervolume > 0 {
		t.Value = 100 * fs.Improvement / fs.Hypervolume
		t.Passed = t.Value <= t.Threshold
	} else {
		// Nothing dominated yet: no run inside the worst acceptable values.
		t.Value = math.Inf(1)
	}
	return &Stopping{Tests: []StopTest{t}, Stop: t.Passed}
}

// responseTrials are the trials as response i's own planner takes them:
// that response's value as each one's Value.
func responseTrials(trials []campaign.Trial, i int) []campaign.Trial {
	out := make([]campaign.Trial, len(trials))
	for j, t := range trials {
		out[j] = campaign.Trial{Point: t.Point, Value: t.Values[i]}
	}
	return out
}

// single is the request for one response's planner, with the values
// given (nil: no trials).
func (fp *FrontPlanner) single(req Request, values []float64) Request {
	r := Request{RunID: req.RunID, Index: req.Index, Pending: req.Pending, Failed: req.Failed, Avoid: req.Avoid, Region: req.Region, Allowed: req.Allowed}
	for i, v := range values {
		r.Trials = append(r.Trials, campaign.Trial{Point: req.Trials[i].Point, Value: v})
	}
	return r
}
