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

// hviDraws is the number of draws behind the expected hypervolume
// improvement: of the runs' true values (with noisy on), and of a point's
// responses where there is no closed form (three or four responses, or an
// output warp).
const hviDraws = 32

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
	parts := make([]*Surrogate, k)
	models := make([]*gp.Model, k)
	for i, rp := range fp.per {
		trials := responseTrials(req.Trials, i)
		// Each response's model is held between fits as for one
		// response (hold.go), from the last proposal's.
		var prev *Surrogate
		if req.Previous != nil && len(req.Previous.parts) == k {
			prev = req.Previous.parts[i]
		}
		ft, err := rp.fit(trials, nil, prev, rng)
		if err != nil {
			return Result{}, fmt.Errorf("planner: %s: %w", fp.responses[i].Name, err)
		}
		b, err := rp.believer(ft.Model, req.Pending)
		if err != nil {
			return Result{}, err
		}
		fits[i], models[i] = ft, b
		parts[i] = &Surrogate{fitted: ft, kernel: rp.cfg.Kernel, noiseSD: rp.cfg.NoiseSD}
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
	fronts := [][][]float64{front}
	if fp.noisy {
		drawn, err := fp.runDraws(losses, req, fits, p, rng)
		if err != nil {
			return Result{}, err
		}
		fronts = fronts[:0]
		for d := range drawn {
			fronts = append(fronts, append(drawn[d], front[len(losses):]...))
		}
	}
	ex := fp.expectation(fits, fronts, ref, z)
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
		enc := encodeAll(p, us)
		mu := make([][]float64, k)
		sd := make([][]float64, k)
		for i, m := range models {
			mu[i], sd[i] = make([]float64, len(us)), make([]float64, len(us))
			m.PredictMany(enc, mu[i], sd[i])
			for j := range sd[i] {
				sd[i][j] = math.Sqrt(sd[i][j])
			}
		}
		m, sdj, y := make([]float64, k), make([]float64, k), make([]float64, k)
		for j, u := range us {
			if !farFrom(u, avoid) || (feasible != nil && feasible(u) < 0.5) {
				out[j] = negInf
				continue
			}
			for i := range m {
				m[i], sdj[i] = mu[i][j], sd[i][j]
			}
			out[j] = ex.at(m, sdj, y)
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
	return p.result(req.RunID, u, MethodHypervolume, s, Result{Surrogate: &Surrogate{parts: parts}})
}

// maxDrawnRuns bounds the runs whose true values are drawn for the noisy
// expected hypervolume improvement: those of the first non-dominated
// fronts, up to this many.
const maxDrawnRuns = 100

// runDraws returns hviDraws joint draws of the true losses of the runs on
// the first non-dominated fronts (a draw, then a run, then a response).
func (fp *FrontPlanner) runDraws(losses [][]float64, req Request, fits []*Fitted, p *Planner, rng *rand.Rand) ([][][]float64, error) {
	runs := firstFronts(losses, maxDrawnRuns)
	xs := make([][]float64, len(runs))
	for j, r := range runs {
		xs[j] = p.encode(p.space.ToUnit(nil, req.Trials[r].Point))
	}
	out := newDraws(hviDraws, len(runs), len(fits))
	for i, ft := range fits {
		if err := drawInto(out, i, ft, xs, rng); err != nil {
			return nil, fmt.Errorf("planner: %s: draws at the runs: %w", fp.responses[i].Name, err)
		}
	}
	return out, nil
}

// firstFronts returns the runs of the first non-dominated fronts of the
// losses, front by front, as many fronts as fit in limit runs (the first
// front always).
func firstFronts(losses [][]float64, limit int) []int {
	var runs []int
	for _, f := range pareto.Sort(losses) {
		if len(runs)+len(f) > limit && len(runs) > 0 {
			break
		}
		runs = append(runs, f...)
	}
	return runs
}

// newDraws allocates draws of runs' losses: a draw, then a run, then a
// response.
func newDraws(count, runs, responses int) [][][]float64 {
	out := make([][][]float64, count)
	for d := range out {
		out[d] = make([][]float64, runs)
		for j := range out[d] {
			out[d][j] = make([]float64, responses)
		}
	}
	return out
}

// drawInto fills response i of every draw with a joint posterior draw of
// ft's true values at xs (encoded runs), as losses.
func drawInto(draws [][][]float64, i int, ft *Fitted, xs [][]float64, rng *rand.Rand) error {
	s, _, err := ft.Model.Sample(xs, len(draws), rng)
	if err != nil {
		return err
	}
	for d := range draws {
		for j := range xs {
			draws[d][j][i] = ft.loss(s.At(d, j))
		}
	}
	return nil
}

// expectation scores a point by its expected hypervolume improvement,
// the mean over fronts (the runs as measured, or drawn) of the
// improvement's expectation under the models' predictions there.
type expectation struct {
	fits []*Fitted
	ref  []float64
	// stairs, for two responses each modelled on its own scale (no output
	// warp), gives the expectation for each front in closed form
	// (pareto.Staircase.ExpectedImprovement).
	stairs []*pareto.Staircase
	// Otherwise improvement is the improvement over front d, averaged
	// over the draws z[d] of the point's responses.
	improvement []func([]float64) float64
	z           [][]float64
}

// expectation prepares the scoring against fronts: one front, or one per
// draw in z.
func (fp *FrontPlanner) expectation(fits []*Fitted, fronts [][][]float64, ref []float64, z [][]float64) *expectation {
	e := &expectation{fits: fits, ref: ref, z: z}
	closed := len(fits) == 2
	for _, ft := range fits {
		closed = closed && !ft.w.on
	}
	for _, f := range fronts {
		if closed {
			e.stairs = append(e.stairs, pareto.NewStaircase(f, [2]float64{ref[0], ref[1]}))
		} else {
			e.improvement = append(e.improvement, fp.improvement(f, ref))
		}
	}
	return e
}

// at is the score at a point whose responses the models predict with
// means mu and standard deviations sd (on the modelled scale): the
// expected improvement where it is positive; where it is not, minus the
// mean distance of the responses from the region that would improve, so
// that the search still knows which way to go. y is scratch of one value
// per response.
func (e *expectation) at(mu, sd, y []float64) float64 {
	gain, gap := 0.0, 0.0
	if e.stairs != nil {
		for _, st := range e.stairs {
			gain += st.ExpectedImprovement([2]float64{mu[0], mu[1]}, [2]float64{sd[0], sd[1]})
		}
		for i := range mu {
			gap += math.Max(0, mu[i]-e.ref[i])
		}
		if gain > 0 {
			return gain / float64(len(e.stairs))
		}
		return -gap
	}
	for d, zd := range e.z {
		for i := range y {
			y[i] = e.fits[i].loss(mu[i] + sd[i]*zd[i])
		}
		gain += e.improvement[d%len(e.improvement)](y)
		for i := range y {
			gap += math.Max(0, y[i]-e.ref[i])
		}
	}
	if gain > 0 {
		return gain / float64(len(e.z))
	}
	return -gap / float64(len(e.z))
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
