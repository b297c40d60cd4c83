package planner

import (
	"context"
	"fmt"

	"math"
)

// thompsonFeatures is the number of random features of a Thompson draw,
// as for the optimum's distribution (optimumFeatures).
const thompsonFeatures = optimumFeatures

// thompson proposes the minimiser of one function drawn from the
// posterior (Thompson 1933; for Gaussian-process optimisation see
// Kandasamy et al. 2018, "Parallelised Bayesian optimisation via Thompson
// sampling", AISTATS), among points more likely to give a usable value
// than not. A run then goes to each place with the probability that the
// optimum is there, as the model sees it: the distribution of minimisers
// that the report shows is the one proposals are drawn from. The draw is
// pathwise (gp.Path), so its minimiser can be searched for in any
// dimension.
type thompson struct{}

func (thompson) choose(ctx context.Context, s *situation) (choice, error) {
	paths, err := s.model.Paths(1, thompsonFeatures, s.rng)
	if err != nil {
		return choice{}, fmt.Errorf("planner: thompson draw: %w", err)
	}
	u, sc, err := s.maximise(ctx, pointwise(func(u []float64) float64 {
		if s.feasible != nil && s.feasible(u) < 0.5 {
			return negInf
		}
		return -paths[0].At(s.p.encode(u))
	}))
	return choice{u: u, score: sc, method: MethodThompson, logEI: math.NaN()}, err
}
