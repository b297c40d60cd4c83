package planner

import (
	"context"
	"math"

	"benchtender/planner/acquisition"
)

var negInf = math.Inf(-1)

// improvement proposes the point of largest expected improvement over the
// best posterior mean at a run (Jones, Schonlau and Welch 1998, "Efficient
// global optimization of expensive black-box functions", J. Global
// Optimization 13), in its log form (acquisition.LogExpectedImprovement),
// weighed by the chance of a usable run (feasibility); with probability
// set, the probability of improvement (Kushner 1964) instead. With a
// shortlist share, the expected-improvement shortlist (shortlist.go)
// may move the point.
type improvement struct {
	probability bool
	shortlist   float64
}

func (e improvement) choose(ctx context.Context, s *situation) (choice, error) {
	p := s.p
	// The probability of improvement falls with the standard deviation
	// where the mean is below the best: no bound for it.
	score := p.byModel(s.model, !e.probability, func(u []float64, mu, sd float64) float64 {
		if e.probability {
			return acquisition.LogProbabilityOfImprovement(mu, sd, s.best) + logFeasibility(s.feasible, u)
		}
		return acquisition.LogExpectedImprovement(mu, sd, s.best) + logFeasibility(s.feasible, u)
	})
	u, sc, err := s.maximise(ctx, score)
	if err != nil {
		return choice{}, err
	}
	if e.probability {
		return choice{u: u, score: sc, method: "probability of improvement", logEI: math.NaN()}, nil
	}
	c := choice{u: u, score: sc, method: MethodImprovement, logEI: sc}
	if e.shortlist > 0 {
		c.method = MethodShortlist
		c.u, c.score, err = p.shortlist(ctx, s.model, s.best, s.feasible, s.allowed, e.shortlist, u, sc, s.around, s.rng)
	}
	return c, err
}
