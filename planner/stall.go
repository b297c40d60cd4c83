package planner

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"

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
//
// A region is decided once, when the stall is seen, with the length
// scales of that moment, and returned in Result.NewAside; the caller
// records it (the agent journals it with its reason) and passes every
// region back in Request.Aside, so a region never changes or vanishes
// afterwards (worked out again from the current length scales at every
// request, as before, regions came and went: issue 18). The planner keeps
// no state. Progress is measured on the modelled loss before the output
// warp, against the range of every run so far.
//
// That measure misfires on a bowl whose values span orders of magnitude
// (0.1% of the range is more than a steady descent gains near the
// bottom), so the bowl holding the optimum is set aside while it is still
// being descended. The new search then runs down into the region's edge
// and is released (stalled), and after each release the window doubles
// (stallWindow): on powell 8 the campaigns that reach the optimum went
// from 27 to 30 of 30 and their mean from 212 to 136 runs
// (docs/planner-figures.md).
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

// stallWindow is the stall window after the given number of releases:
// stallRuns, doubled for each (at most 16 times). A release says the
// basin left behind was the best the campaign knows, so the next stall
// must last longer before it is set aside again (restart schedules with
// budgets that grow are common practice). Without the doubling, a bowl
// set aside by a misfire (above) was set aside again about 30 runs after
// each release (trid 10, docs/planner-figures.md).
func stallWindow(d, released int) int { return stallRuns(d) << min(released, 4) }

// edgeShell is how far beyond a region's edge, as a share of its radius,
// a run still counts as at the edge: a new search whose lowest run lies
// there ran down into the basin set aside, and is released (stalled).
const edgeShell = 1.1

// Aside is a region set aside after progress stalled in it. The planner
// decides it once (Result.NewAside); the caller records it and passes it
// back, unchanged, in every later Request.Aside.
type Aside struct {
	// Run is the index, among the trials of the request that decided it,
	// of the best run of the stalled search: the region's centre.
	Run int `json:"run"`
	// Centre is that run's setpoint, in factor units.
	Centre campaign.Point `json:"centre"`
	// Scales are the surrogate's length scales, one per input on the unit
	// box, when it was decided: the region is the ellipsoid of
	// asideRadius of them around Centre.
	Scales []float64 `json:"scales"`
	// From is the number of trials when it was decided: the new search
	// is made of the trials from there on.
	From int `json:"from"`
	// Reason says why, in words.
	Reason string `json:"reason"`
	// Release, when true, makes this a release, not a region: every
	// region before it is released, and the search goes on over the
	// whole box from From on (Centre and Scales are empty).
	Release bool `json:"release,omitempty"`
}

// aside is the regions set aside, in the surrogate's inputs.
type aside struct {
	centres [][]float64
	invLen2 [][]float64 // 1/ℓ² per input, per region
}

// outside reports whether the surrogate input g lies outside every region.
func (a *aside) outside(g []float64) bool { return !a.within(g, asideRadius) }

// within reports whether the surrogate input g lies within radius length
// scales of a region's centre.
func (a *aside) within(g []float64, radius float64) bool {
	if a == nil {
		return false
	}
	for r, c := range a.centres {
		var s float64
		for k := range g {
			s += (g[k] - c[k]) * (g[k] - c[k]) * a.invLen2[r][k]
		}
		if s < radius*radius {
			return true
		}
	}
	return false
}

// add appends a region.
func (a *aside) add(p *Planner, r Aside) {
	inv := make([]float64, len(r.Scales))
	for k, l := range r.Scales {
		inv[k] = 1 / (l * l)
	}
	a.centres = append(a.centres, p.encode(p.space.ToUnit(nil, r.Centre)))
	a.invLen2 = append(a.invLen2, inv)
}

// with returns a copy of the regions (a may be nil) with r added.
func (a *aside) with(p *Planner, r Aside) *aside {
	b := &aside{}
	if a != nil {
		b.centres = append(b.centres, a.centres...)
		b.invLen2 = append(b.invLen2, a.invLen2...)
	}
	b.add(p, r)
	return b
}

// asidesOf returns the regions given, the first trial of the current
// search (0 while none is set aside) and the number of releases before
// it; nil regions when none is set aside, or when the config turns
// setting aside off. Regions that do not fit the campaign (another number
// of inputs) are an error: they were not recorded for it.
func (p *Planner) asidesOf(given []Aside) (a *aside, from, released int, err error) {
	if !p.cfg.SetAside || len(given) == 0 {
		return nil, 0, 0, nil
	}
	a = &aside{}
	for i, r := range given {
		if r.Release {
			a, from = &aside{}, max(from, r.From)
			released++
			continue
		}
		if len(r.Centre) != p.space.Dim() || len(r.Scales) != p.encDim || !r.Centre.Finite() {
			return nil, 0, 0, fmt.Errorf("planner: region set aside %d does not fit the campaign (%d values, %d scales)", i, len(r.Centre), len(r.Scales))
		}
		a.add(p, r)
		from = max(from, r.From)
	}
	if len(a.centres) == 0 {
		return nil, from, released, nil
	}
	return a, from, released, nil
}

// stalled returns a new region to set aside when, among the runs of the
// current search (from on) that lie outside every region, window runs
// (stallWindow) have passed since the best of them last improved by more
// than stallGain of the losses' range; nil otherwise. When that search
// runs outside regions already set aside and its best is still worse than
// the best run of all, it returns a release instead: the search outside
// found nothing better in a whole stall window, so the regions are
// released and the campaign goes back to the whole box, best basin
// included. (Kept for good, a region can hold the optimum itself, set
// aside while progress along a narrow valley was slow: on the suite's
// Beale, 8 campaigns of 30 more missed the optimum. The release is the
// restart's way back.)
//
// The search's best, for that choice, is its lowest run, gains too small
// to count as progress included: a search that holds the best run of all
// and polishes it has its own basin set aside, not released. (Measured
// against the value of its last progress instead, such a search was
// released with the reason "found nothing better than the best run", which
// it had found, and then polished its basin again for a whole window.)
//
// A search outside is also released, without waiting for it to stall,
// when its lowest run, made after its design and still worse than the
// best of all, lies at the edge of a region (within edgeShell of its
// radius): it ran downhill into the basin set aside, which therefore
// reaches beyond its region (on trid 10 such a search slid along the
// edge for 40 runs before it stalled).
func (p *Planner) stalled(f *Fitted, a *aside, from, window int) *Aside {
	if !p.cfg.SetAside || len(f.x) == 0 {
		return nil
	}
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, v := range f.y[:min(from, len(f.y))] {
		lo, hi = math.Min(lo, v), math.Max(hi, v)
	}
	best, bestAt, last := math.Inf(1), -1, 0
	// lowest is the search's best run, counting gains too small to be
	// progress: it decides between a release and a new region.
	lowest, lowestAt := math.Inf(1), -1
	for i := from; i < len(f.y); i++ {
		lo, hi = math.Min(lo, f.y[i]), math.Max(hi, f.y[i])
		if !a.outside(p.encode(f.x[i])) {
			continue
		}
		if f.y[i] <= lowest {
			lowest, lowestAt = f.y[i], i
		}
		if f.y[i] < best-stallGain*(hi-lo) {
			best, bestAt, last = f.y[i], i, i
		}
	}
	n := len(f.y)
	searching := a != nil && len(a.centres) > 0
	overall := slices.Min(f.y)
	if searching && lowest > overall && lowestAt >= from+p.nInit && a.within(p.encode(f.x[lowestAt]), edgeShell*asideRadius) {
		return &Aside{Release: true, From: n,
			Reason: fmt.Sprintf("the search outside %d region(s) ran down to the edge of one at run %d (%.4g, worse than the best run, %.4g): the basin set aside reaches beyond it; released, the search goes on over the whole box", len(a.centres), lowestAt+1, lowest, overall)}
	}
	if bestAt < 0 || n-1-last < window {
		return nil
	}
	if searching && lowest > overall {
		return &Aside{Release: true, From: n,
			Reason: fmt.Sprintf("the search outside %d region(s) found nothing better than the best run in %d runs; released, the search goes on over the whole box", len(a.centres), n-from)}
	}
	return &Aside{
		Run:    bestAt,
		Centre: p.space.FromUnit(nil, f.x[bestAt]),
		Scales: f.Model.Params().LengthScales,
		From:   n,
		Reason: fmt.Sprintf("%d runs without progress since run %d, the best of its search", n-1-last, bestAt+1),
	}
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
