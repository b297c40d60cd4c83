package planner

import (
	"benchtender/planner/gp"
)

// Holding the hyperparameters between fits.
//
// A fit of the hyperparameters costs O(N³) per step of the optimiser and
// some dozens of steps from each start; conditioning a model whose
// hyperparameters are held on one more run costs O(N²) (gp.Condition
// extends the Cholesky factor). Early in a campaign every run can move
// the hyperparameters a lot and a fit is cheap, so each run is fitted
// afresh; from Config.HoldFitFrom runs on, the hyperparameters are held
// and the model is conditioned on the new runs (its mean and variance
// take in every result at once), and they are fitted again (every start)
// when
//
//   - the runs have grown by holdGrowth since the last fit, so a fit
//     comes every 10 runs at 100, every 100 at 1,000, and its cost per
//     run stays O(N²) on average; or
//   - the fit changes form (one shared length-scale to one per factor),
//     the configuration changed, or there is no previous model (a
//     restart).
//
// Tried and left out: a refit whenever a new result lay more than 3
// predictive standard deviations from the held model's prediction. On
// the arrival benchmark it fired at nearly every run (3.5 to 17 SD): the
// acquisition picks the points where the model is most optimistic, so a
// chosen point's residual is biased and large residuals there say little
// about the hyperparameters. The growth rule is ours, not from a source.
const holdGrowth = 0.1

// Surrogate is a proposal's model of every run, handed back with the next
// request (Request.Previous) so that it can be conditioned on the new runs
// instead of fitted again. It is opaque to the caller.
type Surrogate struct {
	fitted *Fitted
	// kernel and noiseSD are the configuration it was fitted under.
	kernel  string
	noiseSD float64
	// parts, for a campaign with several responses, are each response's
	// model, in the order of the responses (fitted is then nil).
	parts []*Surrogate
}

// held returns the model of the trials conditioned on prev with its
// hyperparameters held, or nil when they must be fitted again (see the
// rules above). gx are the runs in the unit box, encoded, and yw their
// modelled, warped values.
func (p *Planner) held(prev *Surrogate, gx [][]float64, yw []float64) *gp.Model {
	n := len(gx)
	if p.cfg.HoldFitFrom == 0 || prev == nil || prev.fitted == nil || n < p.cfg.HoldFitFrom {
		return nil
	}
	at := prev.fitted.fittedAt
	if prev.kernel != p.cfg.Kernel || prev.noiseSD != p.cfg.NoiseSD || prev.fitted.Model.Dim() != len(gx[0]) {
		return nil
	}
	if sharedLength(n, len(gx[0])) != sharedLength(at, len(gx[0])) {
		return nil
	}
	if float64(n) >= float64(at)*(1+holdGrowth) {
		return nil
	}
	m, err := gp.Condition(prev.fitted.Model, gx, yw)
	if err != nil {
		return nil
	}
	return m
}
