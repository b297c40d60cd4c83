package planner

import (
	"fmt"
	"math"
	"math/rand/v2"

	"benchtender/campaign"
	"benchtender/planner/acquisition"
	"benchtender/planner/gp"
)

// logFeasibility is the log of the chance of success at u that weighs EI
// and PI: where failure is more likely than success (or on a nil
// feasibility, no failed runs: 0) nothing is proposed, −Inf.
func logFeasibility(feasible func([]float64) float64, u []float64) float64 {
	if feasible == nil {
		return 0
	}
	pf := feasible(u)
	if pf < 0.5 {
		return math.Inf(-1)
	}
	return math.Log(pf)
}

// feasibility returns the probability that a run at u gives a usable
// value (the expected-improvement-with-constraints idea of Gardner et al.
// 2014, "Bayesian optimization with inequality constraints", ICML), from a least-squares classifier over the completed and failed
// runs (labels +1 and −1; Rasmussen and Williams 2006, section 6.5), as
// Φ(μ/√(1+σ²)). It returns nil when no run has failed.
func (p *Planner) feasibility(trials []campaign.Trial, failed []campaign.Point, rng *rand.Rand) (func([]float64) float64, error) {
	if len(failed) == 0 {
		return nil, nil
	}
	var x [][]float64
	var y []float64
	for _, t := range trials {
		x = append(x, p.encode(p.space.ToUnit(nil, t.Point)))
		y = append(y, 1)
	}
	for _, f := range failed {
		x = append(x, p.encode(p.space.ToUnit(nil, f)))
		y = append(y, -1)
	}
	c, err := fitCapped(x, y, gp.FitOptions{Kernel: gp.Matern52, Starts: 1, Rand: rng, NoiseFloor: 1e-3})
	if err != nil {
		return nil, fmt.Errorf("planner: feasibility model: %w", err)
	}
	return func(u []float64) float64 {
		mu, v := c.Predict(p.encode(u))
		return acquisition.NormCDF(mu / math.Sqrt(1+v))
	}, nil
}
