package planner

import (
	"context"
	"fmt"
	"math"

	"benchtender/planner/acquisition"
)

// bound proposes the point of lowest confidence bound, mean − beta·sd
// (Srinivas, Krause, Kakade and Seeger 2010, "Gaussian process
// optimization in the bandit setting", ICML), among points more likely to
// give a usable value than not.
type bound struct{ beta float64 }

func (b bound) choose(ctx context.Context, s *situation) (choice, error) {
	u, sc, err := s.maximise(ctx, func(u []float64) float64 {
		if s.feasible != nil && s.feasible(u) < 0.5 {
			return negInf
		}
		mu, v := s.model.Predict(s.p.encode(u))
		return -acquisition.LowerConfidenceBound(mu, math.Sqrt(v), b.beta)
	})
	return choice{u: u, score: sc, method: fmt.Sprintf("confidence bound (beta %g)", b.beta), logEI: math.NaN()}, err
}
