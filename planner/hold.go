package planner

import (
	"math"

	"benchtender/campaign"
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
// and the model is conditioned on the new runs, and fitted again (every
// start) when
//
//   - the runs have grown by holdGrowth since the last fit, so fits come
//     ever rarer and their cost per run stays O(N²) on average; or
//   - a new result lies more than surpriseSD predictive standard
//     deviations (noise included) from what the held model predicted
//     there: the model was wrong about it, and its hyperparameters may be
//     (the sequential form of the marginal likelihood: log p(y | X) is
//     the sum of each run's predictive log density given those before, so
//     a run the model found implausible is where the held fit's
//     likelihood falls); or
//   - the fit changes form (one shared length-scale to one per factor),
//     the configuration changed, or there is no previous model (a restart).
//
// The growth and the 3-SD test are ours, not from a source; 3 SD is the
// common control-chart limit.
const (
	holdGrowth = 0.1
	surpriseSD = 3.0
)

// Surrogate is a proposal's model of every run, handed back with the next
// request (Request.Previous) so that it can be conditioned on the new runs
// instead of fitted again. It is opaque to the caller.
type Surrogate struct {
	fitted *Fitted
	// fittedAt is the number of runs when the hyperparameters were last
	// fitted.
	fittedAt int
	kernel   string
	noiseSD  float64
	width    int
}

// held returns the model of the trials conditioned on prev with its
// hyperparameters held, or nil when they must be fitted again (see the
// rules above). x are the trials in the unit box, gx encoded, yw the
// modelled, warped values.
func (p *Planner) held(prev *Surrogate, trials []campaign.Trial, x, gx [][]float64, y, yw []float64) *gp.Model {
	n := len(trials)
	if p.cfg.HoldFitFrom == 0 || prev == nil || prev.fitted == nil || n < p.cfg.HoldFitFrom {
		return nil
	}
	if prev.kernel != p.cfg.Kernel || prev.noiseSD != p.cfg.NoiseSD || prev.width != len(gx[0]) {
		return nil
	}
	if sharedLength(n, len(gx[0])) != sharedLength(prev.fittedAt, len(gx[0])) {
		return nil
	}
	if float64(n) >= float64(prev.fittedAt)*(1+holdGrowth) {
		return nil
	}
	// The runs the previous model did not have: those after the longest
	// common prefix (results can come back out of order in a batch).
	pf := prev.fitted
	k := 0
	for k < len(pf.x) && k < n && samePoint(pf.x[k], x[k]) && pf.y[k] == y[k] {
		k++
	}
	pm := pf.Model
	_, scale := pm.Standardisation()
	noise := pm.Params().NoiseVar * scale * scale
	for i := k; i < n; i++ {
		mu, v := pm.Predict(gx[i])
		if z := math.Abs(pf.w.to(y[i])-mu) / math.Sqrt(v+noise); !(z <= surpriseSD) {
			return nil
		}
	}
	m, err := gp.Condition(pm, gx, yw)
	if err != nil {
		return nil
	}
	return m
}

func samePoint(a, b []float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}
