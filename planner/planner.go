package planner

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"sort"

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

// minSpacing is the smallest distance, in the unit box, between a proposal
// and an earlier run: 0.1% of each factor's range when only one differs.
// Small, so the last approach to an optimum is not barred (at 0.5% the
// Branin campaigns stalled 1-2% above the minimum, a run or two away).
const minSpacing = 0.001

// errNoCandidate is returned by maximise when every candidate is barred.
var errNoCandidate = errors.New("planner: no candidate has a finite acquisition value")

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
	a, epoch, err := p.asidesOf(req.Aside)
	if err != nil {
		return Result{}, err
	}
	if req.Region == nil {
		if na := p.stalled(ft, a, epoch); na != nil && na.Release {
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
	stop, opt, err := p.stopping(ctx, ft, res.EI, rng)
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

// farFrom reports whether u keeps minSpacing from every point of near.
func farFrom(u []float64, near [][]float64) bool {
	return nearest(u, near) >= minSpacing*minSpacing
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

// Fitted is a surrogate fitted to a campaign's runs, with the runs on the
// unit box and their modelled losses.
type Fitted struct {
	Model *gp.Model
	x     [][]float64
	y     []float64 // modelled losses, before warping
	w     warp
	// fittedAt is the number of runs when the hyperparameters were
	// last fitted (hold.go).
	fittedAt int
}

// Loss maps a model value (warped) back to a modelled loss.
func (f *Fitted) loss(u float64) float64 { return f.w.from(u) }

// fit fits the surrogate to the trials, on the unit box and the modelled
// scale (loss, transformed, warped), or conditions prev on them with its
// hyperparameters held (hold.go).
func (p *Planner) fit(trials []campaign.Trial, warm *gp.Params, prev *Surrogate, rng *rand.Rand) (*Fitted, error) {
	x := make([][]float64, len(trials))
	y := make([]float64, len(trials))
	for i, t := range trials {
		if len(t.Point) != p.space.Dim() || !t.Point.Finite() || math.IsNaN(t.Value) || math.IsInf(t.Value, 0) {
			return nil, fmt.Errorf("planner: trial %d is not usable: %v -> %v", i, t.Point, t.Value)
		}
		x[i] = p.space.ToUnit(nil, t.Point)
		v, err := p.resp.Modelled(t.Value)
		if err != nil {
			return nil, fmt.Errorf("planner: trial %d: %w", i, err)
		}
		y[i] = v
	}
	gx := make([][]float64, len(x))
	for i := range x {
		gx[i] = p.encode(x[i])
	}
	w := p.newWarp(y, len(gx[0]))
	yw := make([]float64, len(y))
	for i := range y {
		yw[i] = w.to(y[i])
	}
	fittedAt := len(trials)
	m := p.held(prev, gx, yw)
	if m != nil {
		fittedAt = prev.fitted.fittedAt
	} else {
		var err error
		if m, err = fitCapped(gx, yw, p.fitOptions(warm, rng, len(gx), len(gx[0]))); err != nil {
			return nil, fmt.Errorf("planner: fit surrogate: %w", err)
		}
	}
	return &Fitted{Model: m, x: x, y: y, w: w, fittedAt: fittedAt}, nil
}

// fitCap is the largest number of runs the hyperparameters are fitted to.
// Each step of the fit costs O(n³), so beyond it the fit (not the model)
// uses a subset: the best third, the latest third and an even spread of
// the rest. The model is then conditioned on every run with those
// hyperparameters, one factorisation.
const fitCap = 250

func fitCapped(x [][]float64, y []float64, opt gp.FitOptions) (*gp.Model, error) {
	if len(x) <= fitCap {
		return gp.Fit(x, y, opt)
	}
	idx := fitSubset(y, fitCap)
	sx, sy := make([][]float64, len(idx)), make([]float64, len(idx))
	for i, j := range idx {
		sx[i], sy[i] = x[j], y[j]
	}
	sub, err := gp.Fit(sx, sy, opt)
	if err != nil {
		return nil, err
	}
	return gp.New(x, y, sub.Params())
}

// fitSubset returns the indices (ascending) of n of the runs with losses
// y: the n/3 lowest, the n/3 latest, and the rest evenly spaced among the
// others.
func fitSubset(y []float64, n int) []int {
	take := make([]bool, len(y))
	order := make([]int, len(y))
	for i := range order {
		order[i] = i
	}
	sort.SliceStable(order, func(a, b int) bool { return y[order[a]] < y[order[b]] })
	for _, i := range order[:n/3] {
		take[i] = true
	}
	for i, k := len(y)-1, 0; i >= 0 && k < n/3; i-- {
		if !take[i] {
			take[i] = true
			k++
		}
	}
	var rest []int
	for i := range y {
		if !take[i] {
			rest = append(rest, i)
		}
	}
	left := n - 2*(n/3)
	for k := 0; k < left; k++ {
		take[rest[k*len(rest)/left]] = true
	}
	var out []int
	for i, t := range take {
		if t {
			out = append(out, i)
		}
	}
	return out
}

// byValue returns the points ordered from the lowest loss to the highest.
func byValue(x [][]float64, y []float64) [][]float64 {
	idx := make([]int, len(x))
	for i := range idx {
		idx[i] = i
	}
	sort.SliceStable(idx, func(a, b int) bool { return y[idx[a]] < y[idx[b]] })
	out := make([][]float64, len(x))
	for i, j := range idx {
		out[i] = x[j]
	}
	return out
}

// logFeasibility is the log of the chance of success at u that weighs EI
// and PI: where failure is more likely than success (or on a nil
// feasibility, no failed runs: 0) nothing is proposed, −Inf.
func logFeasibility(feasible func([]float64) float64, u []float64) float64 {
	if feasible == nil {
		return 0
	}
	pf := feasible(u)
	if pf < 0.5 {
		return math.Inf(-1)
	}
	return math.Log(pf)
}

// feasibility returns the probability that a run at u gives a usable
// value (the expected-improvement-with-constraints idea of Gardner et al.
// 2014, "Bayesian optimization with inequality constraints", ICML), from a least-squares classifier over the completed and failed
// runs (labels +1 and −1; Rasmussen and Williams 2006, section 6.5), as
// Φ(μ/√(1+σ²)). It returns nil when no run has failed.
func (p *Planner) feasibility(trials []campaign.Trial, failed []campaign.Point, rng *rand.Rand) (func([]float64) float64, error) {
	if len(failed) == 0 {
		return nil, nil
	}
	var x [][]float64
	var y []float64
	for _, t := range trials {
		x = append(x, p.encode(p.space.ToUnit(nil, t.Point)))
		y = append(y, 1)
	}
	for _, f := range failed {
		x = append(x, p.encode(p.space.ToUnit(nil, f)))
		y = append(y, -1)
	}
	c, err := fitCapped(x, y, gp.FitOptions{Kernel: gp.Matern52, Starts: 1, Rand: rng, NoiseFloor: 1e-3})
	if err != nil {
		return nil, fmt.Errorf("planner: feasibility model: %w", err)
	}
	return func(u []float64) float64 {
		mu, v := c.Predict(p.encode(u))
		return acquisition.NormCDF(mu / math.Sqrt(1+v))
	}, nil
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

// designPoint returns design point i, or a uniform random point once the
// design is used up (while too few runs have completed to fit a model) or
// where the design point breaks a constraint, skipping points to avoid.
func (p *Planner) designPoint(i int, rng *rand.Rand, avoid [][]float64) (campaign.Point, error) {
	if i < len(p.design) && p.feasibleUnit(p.design[i]) {
		return p.design[i].Clone(), nil
	}
	const tries = 100000
	var fallback campaign.Point
	u := p.randomUnit(rng, tries, func(u campaign.Point) bool {
		if !p.feasibleUnit(u) {
			return false
		}
		fallback = u
		return nearest(u, avoid) > minSpacing*minSpacing
	})
	switch {
	case u != nil:
		return u, nil
	case fallback != nil:
		return fallback, nil // a small discrete space: every point was tried
	}
	return nil, fmt.Errorf("planner: no setpoint satisfying the constraints found in %d random tries", tries)
}

// randomUnit returns the first of up to tries uniform random points of
// the unit box, snapped to valid values, that ok accepts; nil when none
// is.
func (p *Planner) randomUnit(rng *rand.Rand, tries int, ok func(campaign.Point) bool) campaign.Point {
	for t := 0; t < tries; t++ {
		u := make(campaign.Point, p.space.Dim())
		for k := range u {
			u[k] = rng.Float64()
		}
		if u = p.snapUnit(u); ok(u) {
			return u
		}
	}
	return nil
}

// maximise finds a high score in the unit box: score a space-filling set
// of candidates plus points scattered around the first few of around (the
// best runs), then
// refine the best few by Nelder-Mead with each trial point projected onto
// the box.
func (p *Planner) maximise(ctx context.Context, score scorer, around [][]float64, rng *rand.Rand) (campaign.Point, float64, error) {
	d := p.space.Dim()
	cands := LatinHypercube(p.cfg.Candidates, d, rng)
	if lo, hi := p.regionUnit(); lo != nil {
		// Confined to a region: the candidates fill it, not the box.
		for _, c := range cands {
			for k := range c {
				c[k] = lo[k] + c[k]*(hi[k]-lo[k])
			}
		}
	}
	// Candidates and every refined point are snapped to valid values and
	// must satisfy the constraints.
	score = score.where(p.feasibleUnit).mapped(func(u []float64) []float64 { return p.snapUnit(u) })
	// Points near the best runs, where the optimum is likely, at two
	// scales.
	for _, sigma := range []float64{0.02, 0.08} {
		for _, a := range around[:min(5, len(around))] {
			for j := 0; j < 20; j++ {
				c := make(campaign.Point, d)
				for k := range c {
					c[k] = math.Min(1, math.Max(0, a[k]+sigma*rng.NormFloat64()))
				}
				cands = append(cands, c)
			}
		}
	}
	type scored struct {
		u campaign.Point
		s float64
	}
	us := make([][]float64, len(cands))
	for i, c := range cands {
		us[i] = c
	}
	top, err := p.topCandidates(ctx, score, us, max(1, p.cfg.Refine))
	if err != nil {
		return nil, 0, err
	}
	all := make([]scored, len(top))
	for i, t := range top {
		all[i] = scored{cands[t.i], t.s}
	}
	if math.IsInf(all[0].s, -1) || math.IsNaN(all[0].s) {
		return nil, 0, errNoCandidate
	}
	best := all[0]
	starts := make([][]float64, 0, p.cfg.Refine)
	for _, s := range all[:min(p.cfg.Refine, len(all))] {
		starts = append(starts, s.u)
	}
	refined, err := p.refine(ctx, score, starts)
	if err != nil {
		return nil, 0, err
	}
	var ends [][]float64
	for _, x := range refined {
		if x != nil {
			ends = append(ends, p.snapUnit(x))
		}
	}
	endScores := make([]float64, len(ends))
	if len(ends) > 0 {
		score.exact(ends, endScores)
	}
	for i, u := range ends {
		if endScores[i] > best.s {
			best = scored{u, endScores[i]}
		}
	}
	return p.snapUnit(best.u), best.s, nil
}

func clampUnit(u []float64) []float64 {
	c := make([]float64, len(u))
	for k, v := range u {
		c[k] = math.Min(1, math.Max(0, v))
	}
	return c
}

func dist2(a, b []float64) float64 {
	b = b[:len(a)]
	var s float64
	for k := range a {
		s += (a[k] - b[k]) * (a[k] - b[k])
	}
	return s
}

// nearest returns the squared distance from u to the nearest point of set
// (+Inf for none). The points are finite, so a plain comparison does what
// math.Min would, without its checks for NaN and signed zeros.
func nearest(u []float64, set [][]float64) float64 {
	d := math.Inf(1)
	for _, s := range set {
		if v := dist2(u, s); v < d {
			d = v
		}
	}
	return d
}
