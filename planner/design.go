package planner

import (
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
