package planner

import (
	"cmp"
	"context"
	"fmt"
	"math/rand/v2"
	"slices"

	"benchtender/campaign"
	"benchtender/planner/pareto"
)

// reportDraws is the number of posterior draws behind FrontReport.OnFront.
const reportDraws = 200

// maxReportRuns bounds the runs drawn jointly for FrontReport.OnFront:
// those of the first non-dominated fronts, up to this many. A run behind
// several fronts of others has no real chance of being on the true front,
// and a joint draw costs the cube of the runs drawn.
const maxReportRuns = 300

// FrontReport is the front as a person sees it: its members, how sure the
// model is of each, the reference point and the hypervolume over the runs.
type FrontReport struct {
	// Members holds the indices of the trials on the front, the best in
	// the first response first.
	Members []int
	// OnFront is, for each member, the share of posterior draws of every
	// run's true values (noise left out) in which that member is on the
	// front: near 1, the model is sure it is; lower, a neighbour may well
	// beat it and the difference is within the noise. Nil with fewer runs
	// than a model needs.
	OnFront []float64
	Draws   int
	// Reference is the reference point in the responses' own units.
	Reference []float64
	// Hypervolume holds what the first k+1 trials dominate up to the
	// reference point, in the responses' modelled units (see
	// FrontSummary.Hypervolume).
	Hypervolume []float64
}

// Report summarises the front of the trials (each with Values).
func (fp *FrontPlanner) Report(ctx context.Context, trials []campaign.Trial, rng *rand.Rand) (*FrontReport, error) {
	losses, err := fp.losses(trials)
	if err != nil {
		return nil, err
	}
	r := &FrontReport{}
	if len(losses) == 0 {
		return r, nil
	}
	ref := fp.reference(losses)
	for k, l := range ref {
		r.Reference = append(r.Reference, fp.responses[k].Measured(l))
	}
	for n := 1; n <= len(losses); n++ {
		r.Hypervolume = append(r.Hypervolume, pareto.Hypervolume(losses[:n], ref))
	}
	r.Members = pareto.Front(losses)
	slices.SortStableFunc(r.Members, func(a, b int) int { return cmp.Compare(losses[a][0], losses[b][0]) })
	if len(trials) < minFit {
		return r, nil
	}
	// The runs drawn: the first fronts, members first.
	drawn := firstFronts(losses, maxReportRuns)
	at := map[int]int{}
	for j, i := range drawn {
		at[i] = j
	}
	draws := newDraws(reportDraws, len(drawn), len(fp.responses))
	for i, rp := range fp.per {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		ft, err := rp.fit(responseTrials(trials, i), nil, nil, rng)
		if err != nil {
			return nil, fmt.Errorf("planner: %s: %w", fp.responses[i].Name, err)
		}
		xs := make([][]float64, len(drawn))
		for j, t := range drawn {
			xs[j] = rp.encode(rp.space.ToUnit(nil, trials[t].Point))
		}
		if err := drawInto(draws, i, ft, xs, rng); err != nil {
			return nil, fmt.Errorf("planner: %s: %w", fp.responses[i].Name, err)
		}
	}
	counts := make([]int, len(drawn))
	for _, dr := range draws {
		for _, j := range pareto.Front(dr) {
			counts[j]++
		}
	}
	r.Draws = reportDraws
	for _, m := range r.Members {
		r.OnFront = append(r.OnFront, float64(counts[at[m]])/reportDraws)
	}
	return r, nil
}
