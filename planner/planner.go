package planner

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"

	"benchtender/campaign"
	"benchtender/planner/acquisition"
	"benchtender/planner/gp"
)

// Methods named in proposals.
const (
	MethodDesign = "initial design"
	// MethodShortlist is expected improvement with the shortlist
	// (shortlist.go): the lowest confidence bound among the points of
	// high expected improvement.
	MethodShortlist = "expected improvement shortlist"
	// MethodImprovement is plain expected improvement.
	MethodImprovement = "expected improvement"
	// MethodThompson is the minimiser of one posterior draw.
	MethodThompson = "thompson sampling"
	// MethodEntropy is max-value entropy search (entropy.go).
	MethodEntropy = "max-value entropy search"
)

// Planner proposes setpoints for one campaign.
type Planner struct {
	cfg    Config
	space  campaign.Space
	resp   campaign.Response
	nInit  int
	seed   uint64
	design []campaign.Point // unit box
	cons   constraintSet

	hasCategorical, hasDiscrete bool
	encDim                      int // inputs of the surrogate

	// region and allowed, set on a copy for one request, confine
	// proposals.
	region  [][2]float64
	allowed func(campaign.Point) bool
}

// New returns a planner for the campaign. It panics on an invalid config,
// which the caller must have validated.
func New(cc campaign.Config, cfg Config) *Planner {
	if err := cc.Validate().Err(); err != nil {
		panic(fmt.Sprintf("planner: invalid campaign: %v", err))
	}
	if err := append(cfg.Validate(), cfg.ValidateFor(cc.Factors)...).Err(); err != nil {
		panic(fmt.Sprintf("planner: invalid config: %v", err))
	}
	cons, ps := CompileConstraints(cc.Factors, cc.Constraints)
	if len(ps) > 0 {
		panic(fmt.Sprintf("planner: invalid constraints: %v", ps))
	}
	p := &Planner{cfg: cfg, space: cc.Factors.Normalised(), resp: cc.Response, nInit: cc.Initial(), seed: cc.Seed, cons: cons}
	for _, f := range p.space {
		switch f.Kind {
		case campaign.Categorical:
			p.hasCategorical, p.hasDiscrete = true, true
			p.encDim += len(f.Categories)
		case campaign.Integer, campaign.Levels:
			p.hasDiscrete = true
			p.encDim++
		default:
			p.encDim++
		}
	}
	// The design: a Latin hypercube, snapped to valid values; points
	// that break a constraint are replaced when used (designPoint).
	p.design = LatinHypercube(p.nInit, p.space.Dim(), rand.NewPCG(p.seed, 0x1a7e))
	for i, u := range p.design {
		p.design[i] = p.snapUnit(u)
	}
	return p
}

// Request is what the planner is told about the campaign so far.
type Request struct {
	// RunID is the id the proposal will carry.
	RunID string
	// Index counts the proposals made before this one (0 for the first);
	// it picks the design point and seeds the random choices.
	Index int
	// Trials are the completed runs with a usable value, in factor units,
	// in the order the runs were proposed.
	Trials []campaign.Trial
	// Pending are runs handed off (or about to be) whose results have not
	// come: the model treats them as observed at its own prediction, so
	// a batch spreads out.
	Pending []campaign.Point
	// Failed are runs that produced no usable value: never modelled as
	// numbers, they steer proposals away from their region.
	Failed []campaign.Point
	// Avoid lists points that must not be proposed again, such as
	// proposals that were rejected or refused.
	Avoid []campaign.Point
	// Warm is the previous fit, used as a warm start.
	Warm *gp.Params
	// Previous is the last proposal's Result.Surrogate: its
	// hyperparameters may be held and it conditioned on the new runs
	// (hold.go). nil fits afresh.
	Previous *Surrogate
	// Region, when not nil, confines the proposal to these per-factor
	// intervals (in factor units), for example the review limits while a
	// move outside them waits for sign-off.
	Region [][2]float64
	// Allowed, when not nil, is a further test every proposal must pass
	// (in factor units), for example the safety gate's verdict.
	Allowed func(campaign.Point) bool
	// Aside are the regions set aside so far (stall.go), as the planner
	// returned them in Result.NewAside, oldest first.
	Aside []Aside
}

// Result is a proposal and what the model thought when making it.
type Result struct {
	Proposal campaign.Proposal
	// Model is the fitted surrogate, nil during the initial design.
	Model *gp.Model
	// Fit is the fitted hyperparameters, for the next warm start.
	Fit *gp.Params
	// Surrogate is the model of every run, for the next Request.Previous
	// (nil during the initial design).
	Surrogate *Surrogate
	// Best is the modelled loss the improvement is measured against.
	Best float64
	// EI is the largest expected improvement found, in modelled units.
	EI float64
	// Stop, when not empty, says why no more runs are worth making; the
	// proposal is then only what would have been run.
	Stop string
	// Stopping is the stopping rule's verdict, test by test (nil when the
	// rule is off).
	Stopping *Stopping
	// Optimum is the optimum's distribution when the stopping rule needed
	// it (nil otherwise).
	Optimum *Optimum
	// NewAside, when not nil, is a region this proposal set aside, or a
	// release of every region (stall.go): the caller records it and passes
	// it back in every later Request.Aside.
	NewAside *Aside
	// Front is the Pareto front so far, for a campaign with several
	// responses (FrontPlanner; nil otherwise).
	Front *FrontSummary
}

// minFit is the number of completed runs needed before a model is fitted.
const minFit = 3

// Propose returns the next proposal. It returns an error when the context
// is cancelled or the model cannot be fitted; it never returns a point
// outside the factor box or with a non-finite value.
func (p *Planner) Propose(ctx context.Context, req Request) (Result, error) {
	if err := ctx.Err(); err != nil {
		return Result{}, err
	}
	if req.Region != nil || req.Allowed != nil {
		if req.Region != nil && len(req.Region) != p.space.Dim() {
			return Result{}, fmt.Errorf("planner: region has %d intervals for %d factors", len(req.Region), p.space.Dim())
		}
		q := *p
		q.region, q.allowed = req.Region, req.Allowed
		p = &q
	}
	rng := rand.New(rand.NewPCG(p.seed, uint64(req.Index)+1))
	unit := func(pts []campaign.Point) [][]float64 {
		out := make([][]float64, len(pts))
		for i, a := range pts {
			out[i] = p.space.ToUnit(nil, a)
		}
		return out
	}
	avoid := unit(append(append(append([]campaign.Point(nil), req.Avoid...), req.Pending...), req.Failed...))
	if req.Index < p.nInit || len(req.Trials) < minFit {
		u, err := p.designPoint(req.Index, rng, avoid)
		if err != nil {
			return Result{}, err
		}
		return p.result(req.RunID, u, MethodDesign, 0, Result{})
	}

	ft, err := p.fit(req.Trials, req.Warm, req.Previous, rng)
	if err != nil {
		return Result{}, err
	}
	near := append(append([][]float64(nil), avoid...), ft.x...)
	// Where progress has stalled, the basin is set aside and a new search
	// starts outside it (stall.go). When nothing outside the regions can
	// be proposed (a small region to search, tight constraints), the
	// search goes on as before and no new region is set aside.
	a, epoch, released, err := p.asidesOf(req.Aside)
	if err != nil {
		return Result{}, err
	}
	if req.Region == nil {
		if na := p.stalled(ft, a, epoch, stallWindow(p.encDim, released)); na != nil && na.Release {
			res, err := p.search(ctx, req, ft, ft, nil, near, rng)
			res.NewAside = na
			return res, err
		} else if na != nil {
			res, err := p.searchOutside(ctx, req, ft, a.with(p, *na), na.From, near, rng)
			if !errors.Is(err, errNoCandidate) {
				res.NewAside = na
				return res, err
			}
		}
	}
	if a != nil && len(a.centres) > 0 {
		res, err := p.searchOutside(ctx, req, ft, a, epoch, near, rng)
		if !errors.Is(err, errNoCandidate) {
			return res, err
		}
	}
	return p.search(ctx, req, ft, ft, nil, near, rng)
}

// searchOutside proposes in the new search that started at run epoch,
// outside the regions set aside: a design of its own, then a model of its
// own runs only. (With every run outside the regions kept, the set-aside
// basin's runs lent the new search their length scales, and 1 of 10 stuck
// Hartmann campaigns got out instead of 9. With its hyperparameters fitted
// to its own runs but the earlier runs outside the regions conditioned on,
// it polished the best basin outside instead of looking further: both
// sets of the suite lost campaigns, docs/planner-figures.md.)
func (p *Planner) searchOutside(ctx context.Context, req Request, ft *Fitted, a *aside, epoch int, near [][]float64, rng *rand.Rand) (Result, error) {
	if n := len(req.Trials) - epoch; n < p.nInit {
		u := p.restartPoint(epoch, n, a, rng, near)
		if u == nil {
			return Result{}, errNoCandidate
		}
		res, err := p.summary(ctx, req, ft, near, math.NaN(), rng)
		if err != nil {
			return Result{}, err
		}
		return p.result(req.RunID, u, fmt.Sprintf("design of a new search, outside %d stalled region(s)", len(a.centres)), 0, res)
	}
	local, err := p.fit(req.Trials[epoch:], nil, nil, rng)
	if err != nil {
		return Result{}, err
	}
	return p.search(ctx, req, ft, local, a, near, rng)
}

// search proposes the point that maximises the acquisition on the model
// of search (ft itself, or a new search's), outside the regions a and away
// from the points near; what is reported (best, expected improvement,
// stopping) is always from ft, the model of every run (summary).
func (p *Planner) search(ctx context.Context, req Request, ft, search *Fitted, a *aside, near [][]float64, rng *rand.Rand) (Result, error) {
	believer, err := p.believer(search.Model, req.Pending)
	if err != nil {
		return Result{}, err
	}
	feasible, err := p.feasibility(req.Trials, req.Failed, rng)
	if err != nil {
		return Result{}, err
	}
	sit := &situation{p: p, model: believer, best: p.bestMean(search.Model, search.x), feasible: feasible,
		allowed: func(u []float64) bool { return farFrom(u, near) && a.outside(p.encode(u)) },
		around:  byValue(search.x, search.y), index: req.Index, rng: rng}
	c, err := p.strategyFor().choose(ctx, sit)
	if err != nil {
		return Result{}, err
	}
	u, s, method := c.u, c.score, c.method
	// The largest expected improvement, reported below, is the
	// strategy's when it searched for it on the model of every run;
	// otherwise summary searches for it.
	ei := math.NaN()
	if a == nil {
		ei = math.Exp(c.logEI)
	}
	if a != nil {
		method += fmt.Sprintf(" in a new search, outside %d stalled region(s)", len(a.centres))
	}
	res, err := p.summary(ctx, req, ft, near, ei, rng)
	if err != nil {
		return Result{}, err
	}
	return p.result(req.RunID, u, method, s, res)
}

// summary is what a proposal reports from ft, the model of every run: the
// best posterior mean at a run, the largest expected improvement anywhere
// (ei, in modelled units, when the caller already has it; NaN to search
// for it), both in the response's units, and the stopping rule's verdict.
func (p *Planner) summary(ctx context.Context, req Request, ft *Fitted, near [][]float64, ei float64, rng *rand.Rand) (Result, error) {
	m := ft.Model
	fit := m.Params()
	best := p.bestMean(m, ft.x)
	res := Result{Model: m, Fit: &fit, Surrogate: &Surrogate{fitted: ft, kernel: p.cfg.Kernel, noiseSD: p.cfg.NoiseSD}}
	if math.IsNaN(ei) {
		believer, err := p.believer(m, req.Pending)
		if err != nil {
			return Result{}, err
		}
		ei := p.byModel(believer, true, func(_ []float64, mu, sd float64) float64 {
			return acquisition.LogExpectedImprovement(mu, sd, best)
		})
		if _, le, err := p.maximise(ctx, ei.where(func(v []float64) bool { return farFrom(v, near) }), byValue(ft.x, ft.y), rng); err == nil {
			res.EI = math.Exp(le)
		}
	} else {
		res.EI = ei
	}
	// In the response's units: a small improvement in warped units times
	// the warping's slope at the incumbent.
	res.EI *= ft.w.slope(best)
	res.Best = ft.w.from(best)
	stop, opt, err := p.stopping(ctx, ft, res.EI, req.Aside, rng)
	if err != nil {
		return Result{}, err
	}
	res.Stopping = stop
	if stop != nil && stop.Stop {
		res.Stop = "the optimum is located well enough: " + stop.String()
		res.Optimum = opt
	}
	return res, nil
}

// believer conditions m on the pending runs at its own prediction, so that
// a batch spreads out (the kriging believer).
func (p *Planner) believer(m *gp.Model, pending []campaign.Point) (*gp.Model, error) {
	pend := make([][]float64, len(pending))
	for i, pt := range pending {
		pend[i] = p.encode(p.space.ToUnit(nil, pt))
	}
	b, err := m.WithFantasies(pend)
	if err != nil {
		return nil, fmt.Errorf("planner: pending runs: %w", err)
	}
	return b, nil
}

// bestMean returns the lowest posterior mean at the runs x: improvement is
// measured against it, which is steadier than the best raw value when runs
// are noisy (common practice).
func (p *Planner) bestMean(m *gp.Model, x [][]float64) float64 {
	best := math.Inf(1)
	for _, xi := range x {
		if mu := m.Mean(p.encode(xi)); mu < best {
			best = mu
		}
	}
	return best
}

func (p *Planner) result(runID string, u campaign.Point, method string, score float64, r Result) (Result, error) {
	// Snapping also guards against rounding in FromUnit nudging a value
	// past a bound.
	pt := p.space.Snap(p.space.FromUnit(nil, clampUnit(u)))
	if !p.space.Contains(pt) {
		return Result{}, fmt.Errorf("planner: proposal %v is not a valid setpoint", pt)
	}
	if c := p.Violated(pt); c != "" {
		return Result{}, fmt.Errorf("planner: proposal %v breaks constraint %s", pt, c)
	}
	prop := campaign.Proposal{Setpoint: campaign.Setpoint{RunID: runID, Point: pt}, Method: method, Score: score}
	if math.IsInf(score, 0) || math.IsNaN(score) {
		prop.Score = 0
	}
	if err := prop.Validate(p.space); err != nil {
		return Result{}, fmt.Errorf("planner: %w", err)
	}
	r.Proposal = prop
	return r, nil
}
