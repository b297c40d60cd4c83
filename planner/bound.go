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
	score := s.p.byModel(s.model, true, func(_ []float64, mu, sd float64) float64 {
		return -acquisition.LowerConfidenceBound(mu, sd, b.beta)
	})
	u, sc, err := s.maximise(ctx, score.where(func(u []float64) bool { return s.feasible == nil || s.feasible(u) >= 0.5 }))
	return choice{u: u, score: sc, method: fmt.Sprintf("confidence bound (beta %g)", b.beta), logEI: math.NaN()}, err
}
