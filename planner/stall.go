package planner

import (
	"math"
	"math/rand/v2"

	"benchtender/campaign"
)

// Setting a resolved basin aside.
//
// Expected improvement on a stationary surrogate can settle in a local
// minimum for good: once most runs sit in one basin, the fitted length
// scales describe that basin, the model is confident that the rest of the
// box is a plateau, and the largest expected improvement is always one
// more run next to the incumbent (on Hartmann 6-D, 10 of 30 campaigns
// spent runs 50 to 200 within 0.01% of the local minimum at −3.203; the
// same without the output warp; Thompson draws and wide confidence bounds
// agree with the model and stayed too).
//
// So when stallRuns runs in a row have not improved the best value by more
// than stallGain of the losses' range, the incumbent's basin is set aside:
// the region where the model correlates strongly with the incumbent, an
// ellipsoid Σ_k ((u_k − c_k)/ℓ_k)² < asideRadius² in the fitted length
// scales ℓ (a fixed ball was too small: Hartmann's local basin stretches
// along the factors whose length scales are long, and the search slid
// along it). Proposals are then made outside every region set aside so
// far, with the improvement measured against the best run outside them.
// It is the restart of trust-region methods (Eriksson et al. 2019,
// "Scalable global optimization via local Bayesian optimization",
// NeurIPS: TuRBO restarts a local search once its region has collapsed)
// without discarding the runs: the new search still uses the whole model.
// Once a run beats the best outside the regions by the gain, the count
// starts again; a run that beats the best overall is simply the new
// incumbent. The regions are worked out again from the runs in order at
// every request, so the planner stays stateless.
const (
	stallGain = 1e-3
	// asideRadius is in length scales: a Matérn 3/2 (or 5/2) correlation
	// of 0.14 at the edge.
	asideRadius = 2.0
)

// stallRuns is the number of runs without progress after which the
// incumbent's basin is set aside: 3 per factor, at least 15. On Hartmann
// 6-D, 5 per factor got 6 of the 10 stuck campaigns out within 200 runs,
// 3 per factor 9 of 10 (and left the other 20 as they were); the low-
// dimensional functions reach their optimum before 15 runs pass without
// progress.
func stallRuns(d int) int { return max(15, 3*d) }

// aside is a set of regions set aside, in the surrogate's inputs.
type aside struct {
	centres [][]float64
	runs    []int     // index of each centre's run
	invLen2 []float64 // 1/ℓ² per input
}

// outside reports whether the surrogate input g lies outside every region.
func (a *aside) outside(g []float64) bool {
	if a == nil {
		return true
	}
	for _, c := range a.centres {
		var s float64
		for k := range g {
			s += (g[k] - c[k]) * (g[k] - c[k]) * a.invLen2[k]
		}
		if s < asideRadius*asideRadius {
			return false
		}
	}
	return true
}

// setAside returns the regions set aside, given the surrogate inputs of
// the runs in the order they were made, their modelled losses and the
// fitted length scales, and the index of the first run of the current
// search (0 while nothing is set aside); nil when none is.
func setAside(g [][]float64, y []float64, lengthScales []float64) (*aside, int) {
	if len(g) == 0 {
		return nil, 0
	}
	window := stallRuns(len(g[0]))
	a := &aside{invLen2: make([]float64, len(lengthScales))}
	for k, l := range lengthScales {
		a.invLen2[k] = 1 / (l * l)
	}
	lo, hi := math.Inf(1), math.Inf(-1)
	best, bestAt, last, epoch := math.Inf(1), -1, 0, 0
	for i := range g {
		lo, hi = math.Min(lo, y[i]), math.Max(hi, y[i])
		if a.outside(g[i]) && y[i] < best-stallGain*(hi-lo) {
			best, bestAt, last = y[i], i, i
			continue
		}
		if bestAt >= 0 && i-last >= window {
			a.centres = append(a.centres, g[bestAt])
			a.runs = append(a.runs, bestAt)
			best, bestAt, last, epoch = math.Inf(1), -1, i+1, i+1
		}
	}
	if len(a.centres) == 0 {
		return nil, 0
	}
	return a, epoch
}

// setAsideFor returns the regions set aside for a fitted campaign, or nil
// when there is none or the config turns setting aside off.
func (p *Planner) setAsideFor(f *Fitted) (*aside, int) {
	if !p.cfg.SetAside {
		return nil, 0
	}
	g := make([][]float64, len(f.x))
	for i, u := range f.x {
		g[i] = p.encode(u)
	}
	return setAside(g, f.y, f.Model.Params().LengthScales)
}

// restartPoint returns point n of the design of the search that started
// at run epoch: a Latin hypercube of its own, with points inside a region
// set aside, or too close to a run, replaced by random points outside; nil
// when no such point is found.
func (p *Planner) restartPoint(epoch, n int, a *aside, rng *rand.Rand, near [][]float64) campaign.Point {
	design := LatinHypercube(p.nInit, p.space.Dim(), rand.NewPCG(p.seed, 0x1a7e+uint64(epoch)))
	ok := func(u campaign.Point) bool {
		return p.feasibleUnit(u) && a.outside(p.encode(u)) && farFrom(u, near)
	}
	if u := p.snapUnit(design[n]); ok(u) {
		return u
	}
	return p.randomUnit(rng, 10000, ok)
}
