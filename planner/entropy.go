package planner

import (
	"context"
	"fmt"
	"math"

	"benchtender/planner/acquisition"
)

// entropyDraws is how many minimum values max-value entropy search draws
// per proposal.
const entropyDraws = 16

// entropy proposes the point where a run would tell most about the
// minimum's value (max-value entropy search, Wang and Jegelka 2017, ICML):
// the minimum is drawn entropyDraws times from the posterior, jointly at
// the candidates the optimum's distribution is drawn at
// (jointCandidates), and each point is scored by
// acquisition.LogMaxValueEntropy, weighed by the chance of a usable run.
// Where expected improvement asks how much a run may beat the best so far,
// this asks how much it narrows where the minimum's value lies, so a well
// the model cannot yet rule out keeps its pull after the best well is
// known.
type entropy struct{}

func (entropy) choose(ctx context.Context, s *situation) (choice, error) {
	cands := s.p.jointCandidates(s.around, s.around, s.rng)
	draws, _, err := s.model.Sample(encodeAll(s.p, cands), entropyDraws, s.rng)
	if err != nil {
		return choice{}, fmt.Errorf("planner: draws of the minimum: %w", err)
	}
	// A draw's minimum over a finite set lies above the path's own, so
	// each is capped at the best run's mean, which the minimum cannot
	// exceed.
	minima := make([]float64, entropyDraws)
	for k := range minima {
		minima[k] = s.best
		for _, v := range draws.RawRowView(k) {
			minima[k] = math.Min(minima[k], v)
		}
	}
	score := s.p.byModel(s.model, false, func(u []float64, mu, sd float64) float64 {
		return acquisition.LogMaxValueEntropy(mu, sd, minima) + logFeasibility(s.feasible, u)
	})
	u, sc, err := s.maximise(ctx, score)
	return choice{u: u, score: sc, method: MethodEntropy, logEI: math.NaN()}, err
}
