package planner

import (
	"context"
	"errors"
	"math"
	"math/rand/v2"

	"benchtender/campaign"
)

// minSpacing is the smallest distance, in the unit box, between a proposal
// and an earlier run: 0.1% of each factor's range when only one differs.
// Small, so the last approach to an optimum is not barred (at 0.5% the
// Branin campaigns stalled 1-2% above the minimum, a run or two away).
const minSpacing = 0.001

// errNoCandidate is returned by maximise when every candidate is barred.
var errNoCandidate = errors.New("planner: no candidate has a finite acquisition value")

// farFrom reports whether u keeps minSpacing from every point of near.
func farFrom(u []float64, near [][]float64) bool {
	return nearest(u, near) >= minSpacing*minSpacing
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
	cands = append(cands, scatter(around[:min(5, len(around))], 20, []float64{0.02, 0.08}, rng)...)
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

// scatter returns per points around each centre at each scale sigma (a
// normal step of that standard deviation in every coordinate, clamped to
// the unit box), scale by scale, centre by centre.
func scatter(centres [][]float64, per int, sigmas []float64, rng *rand.Rand) []campaign.Point {
	var out []campaign.Point
	for _, sigma := range sigmas {
		for _, a := range centres {
			for j := 0; j < per; j++ {
				c := make(campaign.Point, len(a))
				for k := range c {
					c[k] = math.Min(1, math.Max(0, a[k]+sigma*rng.NormFloat64()))
				}
				out = append(out, c)
			}
		}
	}
	return out
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
