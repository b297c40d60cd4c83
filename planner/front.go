package planner

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"

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

// hviDraws is the number of joint draws of the responses behind the
// expected hypervolume improvement at a point.
const hviDraws = 32

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
	cfg    Config
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
	one.Warp = cfg.Front.Warp
	fp := &FrontPlanner{cfg: one, method: cfg.Front.Acquisition, stopBelow: cfg.Stop.HypervolumeBelow, noisy: cfg.Front.Noisy, responses: responses, worst: worst}
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
// Each trial carries one value per response in Values; Warm, Previous
// and Aside are not used.
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

// single is the request for one response's planner, with the values
// given (nil: no trials).
func (fp *FrontPlanner) single(req Request, values []float64) Request {
	r := Request{RunID: req.RunID, Index: req.Index, Pending: req.Pending, Failed: req.Failed, Avoid: req.Avoid, Region: req.Region, Allowed: req.Allowed}
	for i, v := range values {
		r.Trials = append(r.Trials, campaign.Trial{Point: req.Trials[i].Point, Value: v})
	}
	return r
}

// scalarised plans the augmented Chebyshev scalarisation of the losses,
// each scaled to [0, 1] between the best seen and the reference point,
// with weights drawn from the simplex for this run.
func (fp *FrontPlanner) scalarised(ctx context.Context, req Request, losses [][]float64, ref []float64) (Result, error) {
	rng := rand.New(rand.NewPCG(fp.folded.seed, uint64(req.Index)+0x5ca1))
	k := len(fp.responses)
	// Uniform on the simplex: normalised exponential draws.
	w := make([]float64, k)
	sum := 0.0
	for i := range w {
		w[i] = rng.ExpFloat64()
		sum += w[i]
	}
	for i := range w {
		w[i] /= sum
	}
	lo := make([]float64, k)
	for i := range lo {
		lo[i] = math.Inf(1)
		for _, l := range losses {
			lo[i] = math.Min(lo[i], l[i])
		}
	}
	// ρ = 0.05 as Knowles.
	const rho = 0.05
	values := make([]float64, len(losses))
	for j, l := range losses {
		worst, total := math.Inf(-1), 0.0
		for i := range l {
			s := (l[i] - lo[i]) / math.Max(ref[i]-lo[i], 1e-12)
			worst = math.Max(worst, w[i]*s)
			total += w[i] * s
		}
		values[j] = worst + rho*total
	}
	r, err := fp.folded.Propose(ctx, fp.single(req, values))
	if err != nil {
		return Result{}, err
	}
	r.Proposal.Method = fmt.Sprintf("%s (%s; weights %s)", MethodScalarised, r.Proposal.Method, weightsText(fp.responses, w))
	// What the result says of one response's model does not apply.
	return Result{Proposal: r.Proposal}, nil
}

func weightsText(rs []campaign.Response, w []float64) string {
	s := ""
	for i, r := range rs {
		if i > 0 {
			s += ", "
		}
		s += fmt.Sprintf("%s %.2f", r.Name, w[i])
	}
	return s
}

// hypervolume proposes where the expected hypervolume improvement over
// the runs' losses is largest. Pending runs are taken into account as each
// model's own prediction (the kriging believer); points where a run is
// more likely to fail than not are passed over.
func (fp *FrontPlanner) hypervolume(ctx context.Context, req Request, losses [][]float64, fs *FrontSummary) (Result, error) {
	p := fp.per[0]
	if req.Region != nil || req.Allowed != nil {
		q := *p
		q.region, q.allowed = req.Region, req.Allowed
		p = &q
	}
	rng := rand.New(rand.NewPCG(p.seed, uint64(req.Index)+1))
	k := len(fp.responses)
	fits := make([]*Fitted, k)
	models := make([]*gp.Model, k)
	for i, rp := range fp.per {
		values := make([]float64, len(req.Trials))
		for j, t := range req.Trials {
			values[j] = t.Values[i]
		}
		trials := fp.single(req, values).Trials
		ft, err := rp.fit(trials, nil, nil, rng)
		if err != nil {
			return Result{}, fmt.Errorf("planner: %s: %w", fp.responses[i].Name, err)
		}
		b, err := rp.believer(ft.Model, req.Pending)
		if err != nil {
			return Result{}, err
		}
		fits[i], models[i] = ft, b
		fs.Models = append(fs.Models, ft.Model)
	}
	// The front the improvement is measured against holds the pending
	// runs too, at their predicted losses, so that a batch spreads along
	// the front.
	front := slices.Clone(losses)
	for _, pt := range req.Pending {
		x := p.encode(p.space.ToUnit(nil, pt))
		l := make([]float64, k)
		for i, m := range models {
			l[i] = fits[i].loss(m.Mean(x))
		}
		front = append(front, l)
	}
	ref := fs.Reference
	z := make([][]float64, hviDraws)
	for d := range z {
		z[d] = make([]float64, k)
		for i := range z[d] {
			z[d][i] = rng.NormFloat64()
		}
	}
	// Against what is the improvement measured? The runs' measured values
	// carry noise: a run measured luckily would stand as a front no point
	// can pass. With noisy on, each draw takes the true values of the runs
	// (those of the first few non-dominated fronts, where the front can
	// be) from the models as well, jointly, and the improvement is
	// measured against that draw's front (the noisy expected hypervolume
	// improvement of Daulton, Balandat and Bakshy 2021, "Parallel Bayesian
	// optimization of multiple noisy objectives with expected hypervolume
	// improvement", NeurIPS; here the candidate's draw is taken
	// independent of the runs' draw, which their joint form does not).
	improvement := make([]func([]float64) float64, hviDraws)
	if fp.noisy {
		drawn, err := fp.runDraws(losses, req, fits, p, rng)
		if err != nil {
			return Result{}, err
		}
		for d := range improvement {
			improvement[d] = fp.improvement(append(drawn[d], front[len(losses):]...), ref)
		}
	} else {
		plain := fp.improvement(front, ref)
		for d := range improvement {
			improvement[d] = plain
		}
	}
	feasible, err := p.feasibility(fp.single(req, make([]float64, len(req.Trials))).Trials, req.Failed, rng)
	if err != nil {
		return Result{}, err
	}
	avoid := make([][]float64, 0, len(req.Avoid)+len(req.Pending)+len(req.Failed)+len(req.Trials))
	for _, pts := range [][]campaign.Point{req.Avoid, req.Pending, req.Failed} {
		for _, a := range pts {
			avoid = append(avoid, p.space.ToUnit(nil, a))
		}
	}
	var around [][]float64
	for _, t := range req.Trials {
		avoid = append(avoid, p.space.ToUnit(nil, t.Point))
	}
	for _, i := range fs.Members {
		around = append(around, p.space.ToUnit(nil, req.Trials[i].Point))
	}
	score := scorer{exact: func(us [][]float64, out []float64) {
		enc := make([][]float64, len(us))
		for j, u := range us {
			enc[j] = p.encode(u)
		}
		mu := make([][]float64, k)
		sd := make([][]float64, k)
		for i, m := range models {
			mu[i], sd[i] = make([]float64, len(us)), make([]float64, len(us))
			m.PredictMany(enc, mu[i], sd[i])
			for j := range sd[i] {
				sd[i][j] = math.Sqrt(sd[i][j])
			}
		}
		y := make([]float64, k)
		for j, u := range us {
			if !farFrom(u, avoid) || (feasible != nil && feasible(u) < 0.5) {
				out[j] = negInf
				continue
			}
			// Mean improvement over the draws; where no draw improves,
			// minus the mean distance of the draws from the region that
			// would, so that the search still knows which way to go.
			gain, gap := 0.0, 0.0
			for d, zd := range z {
				for i := range y {
					y[i] = fits[i].loss(mu[i][j] + sd[i][j]*zd[i])
				}
				gain += improvement[d](y)
				for i := range y {
					gap += math.Max(0, y[i]-ref[i])
				}
			}
			if gain > 0 {
				out[j] = gain / hviDraws
			} else {
				out[j] = -gap / hviDraws
			}
		}
	}}
	u, s, err := p.maximise(ctx, score, around, rng)
	if errors.Is(err, errNoCandidate) || (err == nil && math.IsInf(s, -1)) {
		return Result{}, fmt.Errorf("planner: no setpoint can be proposed: every candidate is barred")
	}
	if err != nil {
		return Result{}, err
	}
	fs.Improvement = math.Max(0, s)
	return p.result(req.RunID, u, MethodHypervolume, s, Result{})
}

// maxDrawnRuns bounds the runs whose true values are drawn for the noisy
// expected hypervolume improvement: those of the first non-dominated
// fronts, up to this many.
const maxDrawnRuns = 100

// runDraws returns hviDraws joint draws of the true losses of the runs on
// the first non-dominated fronts (a draw, then a run, then a response).
func (fp *FrontPlanner) runDraws(losses [][]float64, req Request, fits []*Fitted, p *Planner, rng *rand.Rand) ([][][]float64, error) {
	var runs []int
	for _, f := range pareto.Sort(losses) {
		if len(runs)+len(f) > maxDrawnRuns && len(runs) > 0 {
			break
		}
		runs = append(runs, f...)
	}
	xs := make([][]float64, len(runs))
	for j, r := range runs {
		xs[j] = p.encode(p.space.ToUnit(nil, req.Trials[r].Point))
	}
	out := make([][][]float64, hviDraws)
	for d := range out {
		out[d] = make([][]float64, len(runs))
		for j := range out[d] {
			out[d][j] = make([]float64, len(fits))
		}
	}
	for i, ft := range fits {
		s, _, err := ft.Model.Sample(xs, hviDraws, rng)
		if err != nil {
			return nil, fmt.Errorf("planner: %s: draws at the runs: %w", fp.responses[i].Name, err)
		}
		for d := range out {
			for j := range runs {
				out[d][j][i] = ft.loss(s.At(d, j))
			}
		}
	}
	return out, nil
}

// improvement returns the hypervolume a point of losses adds to front: a
// staircase for two responses, the general computation for more.
func (fp *FrontPlanner) improvement(front [][]float64, ref []float64) func(y []float64) float64 {
	if len(ref) == 2 {
		st := pareto.NewStaircase(front, [2]float64{ref[0], ref[1]})
		return func(y []float64) float64 { return st.Improvement(y[0], y[1]) }
	}
	kept := make([][]float64, 0, len(front))
	for _, i := range pareto.Front(front) {
		kept = append(kept, front[i])
	}
	return func(y []float64) float64 { return pareto.Improvement(kept, y, ref) }
}

// reportDraws is the number of posterior draws behind FrontReport.OnFront.
const reportDraws = 200

// maxReportRuns bounds the runs drawn jointly for FrontReport.OnFront:
// those of the first non-dominated fronts, up to this many. A run behind
// several fronts of others has no real chance of being on the true front,
// and a joint draw costs the cube of the runs drawn.
const maxReportRuns = 300

// FrontReport is the front as a person sees it: its members, how sure the
// model is of each, the reference point and the hypervolume over the runs.
type FrontReport struct {
	// Members holds the indices of the trials on the front, the best in
	// the first response first.
	Members []int
	// OnFront is, for each member, the share of posterior draws of every
	// run's true values (noise left out) in which that member is on the
	// front: near 1, the model is sure it is; lower, a neighbour may well
	// beat it and the difference is within the noise. Nil with fewer runs
	// than a model needs.
	OnFront []float64
	Draws   int
	// Reference is the reference point in the responses' own units.
	Reference []float64
	// Hypervolume holds what the first k+1 trials dominate up to the
	// reference point, in the responses' modelled units (see
	// FrontSummary.Hypervolume).
	Hypervolume []float64
}

// Report summarises the front of the trials (each with Values).
func (fp *FrontPlanner) Report(ctx context.Context, trials []campaign.Trial, rng *rand.Rand) (*FrontReport, error) {
	losses, err := fp.losses(trials)
	if err != nil {
		return nil, err
	}
	r := &FrontReport{}
	if len(losses) == 0 {
		return r, nil
	}
	ref := fp.reference(losses)
	for k, l := range ref {
		r.Reference = append(r.Reference, fp.responses[k].Measured(l))
	}
	for n := 1; n <= len(losses); n++ {
		r.Hypervolume = append(r.Hypervolume, pareto.Hypervolume(losses[:n], ref))
	}
	r.Members = pareto.Front(losses)
	slices.SortStableFunc(r.Members, func(a, b int) int { return cmpLoss(losses[a][0], losses[b][0]) })
	if len(trials) < minFit {
		return r, nil
	}
	// The runs drawn: the first fronts, members first.
	var drawn []int
	for _, f := range pareto.Sort(losses) {
		if len(drawn)+len(f) > maxReportRuns && len(drawn) > 0 {
			break
		}
		drawn = append(drawn, f...)
	}
	at := map[int]int{}
	for j, i := range drawn {
		at[i] = j
	}
	k := len(fp.responses)
	draws := make([][][]float64, reportDraws) // draw, run, response
	for d := range draws {
		draws[d] = make([][]float64, len(drawn))
		for j := range draws[d] {
			draws[d][j] = make([]float64, k)
		}
	}
	for i, rp := range fp.per {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		values := make([]float64, len(trials))
		for j, t := range trials {
			values[j] = t.Values[i]
		}
		ft, err := rp.fit(fp.single(Request{Trials: trials}, values).Trials, nil, nil, rng)
		if err != nil {
			return nil, fmt.Errorf("planner: %s: %w", fp.responses[i].Name, err)
		}
		xs := make([][]float64, len(drawn))
		for j, t := range drawn {
			xs[j] = rp.encode(rp.space.ToUnit(nil, trials[t].Point))
		}
		s, _, err := ft.Model.Sample(xs, reportDraws, rng)
		if err != nil {
			return nil, fmt.Errorf("planner: %s: %w", fp.responses[i].Name, err)
		}
		for d := range draws {
			for j := range drawn {
				draws[d][j][i] = ft.loss(s.At(d, j))
			}
		}
	}
	counts := make([]int, len(drawn))
	for _, dr := range draws {
		for _, j := range pareto.Front(dr) {
			counts[j]++
		}
	}
	r.Draws = reportDraws
	for _, m := range r.Members {
		r.OnFront = append(r.OnFront, float64(counts[at[m]])/reportDraws)
	}
	return r, nil
}

func cmpLoss(a, b float64) int {
	switch {
	case a < b:
		return -1
	case a > b:
		return 1
	}
	return 0
}
