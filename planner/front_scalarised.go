package planner

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"

	"benchtender/campaign"
)

// scalarised plans the augmented Chebyshev scalarisation of the losses,
// each scaled to [0, 1] between the best seen and the reference point,
// with weights drawn from the simplex for this run.
func (fp *FrontPlanner) scalarised(ctx context.Context, req Request, losses [][]float64, ref []float64) (Result, error) {
	rng := rand.New(rand.NewPCG(fp.folded.seed, uint64(req.Index)+0x5ca1))
	k := len(fp.responses)
	// Uniform on the simplex: normalised exponential draws.
	w := make([]float64, k)
	sum := 0.0
	for i := range w {
		w[i] = rng.ExpFloat64()
		sum += w[i]
	}
	for i := range w {
		w[i] /= sum
	}
	lo := make([]float64, k)
	for i := range lo {
		lo[i] = math.Inf(1)
		for _, l := range losses {
			lo[i] = math.Min(lo[i], l[i])
		}
	}
	// ρ = 0.05 as Knowles.
	const rho = 0.05
	values := make([]float64, len(losses))
	for j, l := range losses {
		worst, total := math.Inf(-1), 0.0
		for i := range l {
			s := (l[i] - lo[i]) / math.Max(ref[i]-lo[i], 1e-12)
			worst = math.Max(worst, w[i]*s)
			total += w[i] * s
		}
		values[j] = worst + rho*total
	}
	r, err := fp.folded.Propose(ctx, fp.single(req, values))
	if err != nil {
		return Result{}, err
	}
	r.Proposal.Method = fmt.Sprintf("%s (%s; weights %s)", MethodScalarised, r.Proposal.Method, weightsText(fp.responses, w))
	// What the result says of one response's model does not apply.
	return Result{Proposal: r.Proposal}, nil
}

func weightsText(rs []campaign.Response, w []float64) string {
	s := ""
	for i, r := range rs {
		if i > 0 {
			s += ", "
		}
		s += fmt.Sprintf("%s %.2f", r.Name, w[i])
	}
	return s
}
