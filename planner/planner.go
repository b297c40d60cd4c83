package planner

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"sort"

	"gonum.org/v1/gonum/optimize"

	"benchtender/campaign"
	"benchtender/planner/acquisition"
	"benchtender/planner/gp"
)

// Methods named in proposals.
const (
	MethodDesign = "initial design"
	MethodEI     = "expected improvement"
)

// Planner proposes setpoints for one campaign.
type Planner struct {
	cfg    Config
	space  campaign.Space
	resp   campaign.Response
	nInit  int
	seed   uint64
	design []campaign.Point // unit box
}

// New returns a planner for the campaign. It panics on an invalid config,
// which the caller must have validated.
func New(cc campaign.Config, cfg Config) *Planner {
	if err := cc.Validate().Err(); err != nil {
		panic(fmt.Sprintf("planner: invalid campaign: %v", err))
	}
	if err := cfg.Validate().Err(); err != nil {
		panic(fmt.Sprintf("planner: invalid config: %v", err))
	}
	p := &Planner{cfg: cfg, space: cc.Factors, resp: cc.Response, nInit: cc.Initial(), seed: cc.Seed}
	p.design = LatinHypercube(p.nInit, p.space.Dim(), rand.NewPCG(p.seed, 0x1a7e))
	return p
}

// Request is what the planner is told about the campaign so far.
type Request struct {
	// RunID is the id the proposal will carry.
	RunID string
	// Index counts the proposals made before this one (0 for the first);
	// it picks the design point and seeds the random choices.
	Index int
	// Trials are the completed runs with a usable value, in factor units.
	Trials []campaign.Trial
	// Avoid lists points that must not be proposed again: runs handed
	// off and still waiting for results, and proposals that were
	// rejected or refused.
	Avoid []campaign.Point
	// Warm is the previous fit, used as a warm start.
	Warm *gp.Params
}

// Result is a proposal and what the model thought when making it.
type Result struct {
	Proposal campaign.Proposal
	// Model is the fitted surrogate, nil during the initial design.
	Model *gp.Model
	// Fit is the fitted hyperparameters, for the next warm start.
	Fit *gp.Params
	// Best is the loss the improvement is measured against.
	Best float64
}

// minSpacing is the smallest distance, in the unit box, between a proposal
// and an earlier run: 0.5% of each factor's range when only one differs.
const minSpacing = 0.005

func pointsOf(x [][]float64) []campaign.Point {
	out := make([]campaign.Point, len(x))
	for i, r := range x {
		out[i] = r
	}
	return out
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
	rng := rand.New(rand.NewPCG(p.seed, uint64(req.Index)+1))
	avoid := make([]campaign.Point, len(req.Avoid))
	for i, a := range req.Avoid {
		avoid[i] = p.space.ToUnit(nil, a)
	}
	if req.Index < p.nInit || len(req.Trials) < minFit {
		u := p.designPoint(req.Index, rng, avoid)
		return p.result(req.RunID, u, MethodDesign, 0, Result{})
	}

	x := make([][]float64, len(req.Trials))
	y := make([]float64, len(req.Trials))
	for i, t := range req.Trials {
		if len(t.Point) != p.space.Dim() || !t.Point.Finite() || math.IsNaN(t.Value) || math.IsInf(t.Value, 0) {
			return Result{}, fmt.Errorf("planner: trial %d is not usable: %v -> %v", i, t.Point, t.Value)
		}
		x[i] = p.space.ToUnit(nil, t.Point)
		v, err := p.resp.Modelled(t.Value)
		if err != nil {
			return Result{}, fmt.Errorf("planner: trial %d: %w", i, err)
		}
		y[i] = v
	}
	m, err := gp.Fit(x, y, p.fitOptions(req.Warm, rng))
	if err != nil {
		return Result{}, fmt.Errorf("planner: fit surrogate: %w", err)
	}
	// Improvement is measured against the best posterior mean at a run,
	// which is steadier than the best raw value when runs are noisy
	// (common practice).
	best := math.Inf(1)
	for _, xi := range x {
		if mu, _ := m.Predict(xi); mu < best {
			best = mu
		}
	}
	// A run repeated within a hair of an earlier one teaches the model
	// almost nothing and costs a full run, so candidates closer than
	// minSpacing (in the unit box) to a run or an avoided point are not
	// proposed.
	near := append(append([]campaign.Point(nil), avoid...), pointsOf(x)...)
	score := func(u []float64) float64 {
		for _, a := range near {
			if dist2(u, a) < minSpacing*minSpacing {
				return math.Inf(-1)
			}
		}
		mu, v := m.Predict(u)
		return acquisition.LogExpectedImprovement(mu, math.Sqrt(v), best)
	}
	u, s, err := p.maximise(ctx, score, x, y, rng)
	if err != nil {
		return Result{}, err
	}
	fit := m.Params()
	return p.result(req.RunID, u, MethodEI, s, Result{Model: m, Fit: &fit, Best: best})
}

func (p *Planner) result(runID string, u campaign.Point, method string, score float64, r Result) (Result, error) {
	for i := range u {
		u[i] = math.Min(1, math.Max(0, u[i]))
	}
	pt := p.space.FromUnit(nil, u)
	// Guard against rounding in FromUnit nudging a value past a bound.
	for i, f := range p.space {
		pt[i] = math.Min(f.Max, math.Max(f.Min, pt[i]))
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
// design is used up (while too few runs have completed to fit a model),
// skipping points to avoid.
func (p *Planner) designPoint(i int, rng *rand.Rand, avoid []campaign.Point) campaign.Point {
	if i < len(p.design) {
		return p.design[i].Clone()
	}
	for {
		u := make(campaign.Point, p.space.Dim())
		for k := range u {
			u[k] = rng.Float64()
		}
		if nearest(u, avoid) > 1e-6 {
			return u
		}
	}
}

// maximise finds a high score in the unit box: score a space-filling set
// of candidates plus points scattered around the best runs, then refine the
// best few by Nelder-Mead on the box (points are clamped into it).
func (p *Planner) maximise(ctx context.Context, score func([]float64) float64, x [][]float64, y []float64, rng *rand.Rand) (campaign.Point, float64, error) {
	d := p.space.Dim()
	cands := LatinHypercube(p.cfg.Candidates, d, rng)
	order := make([]int, len(y))
	for i := range order {
		order[i] = i
	}
	sort.Slice(order, func(a, b int) bool { return y[order[a]] < y[order[b]] })
	for _, i := range order[:min(3, len(order))] {
		for j := 0; j < 50; j++ {
			c := make(campaign.Point, d)
			for k := range c {
				c[k] = math.Min(1, math.Max(0, x[i][k]+0.05*rng.NormFloat64()))
			}
			cands = append(cands, c)
		}
	}
	type scored struct {
		u campaign.Point
		s float64
	}
	all := make([]scored, 0, len(cands))
	for i, c := range cands {
		if i%256 == 0 {
			if err := ctx.Err(); err != nil {
				return nil, 0, err
			}
		}
		all = append(all, scored{c, score(c)})
	}
	sort.Slice(all, func(a, b int) bool { return all[a].s > all[b].s })
	if math.IsInf(all[0].s, -1) {
		return nil, 0, errors.New("planner: no candidate has a finite acquisition value")
	}
	best := all[0]
	clamp := func(u []float64) []float64 {
		c := make([]float64, len(u))
		for k, v := range u {
			c[k] = math.Min(1, math.Max(0, v))
		}
		return c
	}
	for _, start := range all[:min(p.cfg.Refine, len(all))] {
		if err := ctx.Err(); err != nil {
			return nil, 0, err
		}
		prob := optimize.Problem{Func: func(u []float64) float64 {
			s := score(clamp(u))
			if math.IsInf(s, -1) {
				return math.MaxFloat64
			}
			return -s
		}}
		res, _ := optimize.Minimize(prob, start.u, &optimize.Settings{FuncEvaluations: 60 * d, Converger: &optimize.FunctionConverge{Absolute: 1e-6, Iterations: 15}}, &optimize.NelderMead{SimplexSize: 0.02})
		if res == nil {
			continue
		}
		u := clamp(res.X)
		if s := score(u); s > best.s {
			best = scored{u, s}
		}
	}
	return best.u, best.s, nil
}

func dist2(a, b []float64) float64 {
	var s float64
	for k := range a {
		s += (a[k] - b[k]) * (a[k] - b[k])
	}
	return s
}

func nearest(u campaign.Point, set []campaign.Point) float64 {
	d := math.Inf(1)
	for _, s := range set {
		d = math.Min(d, dist2(u, s))
	}
	return d
}
