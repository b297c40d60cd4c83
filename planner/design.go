package planner

import (
	"fmt"
	"math/rand/v2"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distmv"
	"gonum.org/v1/gonum/stat/samplemv"

	"benchtender/campaign"
)

// LatinHypercube returns n points of a Latin-hypercube design in the unit
// box [0,1]^d (McKay, Beckman and Conover 1979): each factor's range is cut
// into n equal strata and every stratum holds exactly one point. It uses
// gonum's samplemv.LatinHypercube.
func LatinHypercube(n, d int, rng rand.Source) []campaign.Point {
	if n == 0 {
		return nil
	}
	batch := mat.NewDense(n, d, nil)
	samplemv.LatinHypercube{Q: distmv.NewUnitUniform(d, rng), Src: rng}.Sample(batch)
	out := make([]campaign.Point, n)
	for i := range out {
		out[i] = campaign.Point(mat.Row(nil, i, batch))
	}
	return out
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
