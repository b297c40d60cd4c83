package planner

import (
	"context"
	"math"

	"gonum.org/v1/gonum/optimize"
)

// refine improves each start by Nelder-Mead (with every trial point
// projected onto the box) within 60 evaluations per factor, and returns
// the refined points, nil where a refinement gave nothing.
//
// The refinements run side by side, one goroutine each, in lockstep: the
// points they ask for are scored together, in one batch, whenever every
// refinement still running is waiting for its score. Each refinement sees
// exactly the scores it would see alone (a point's score does not depend
// on the others in its batch), so the result is the same as refining one
// start after another; only a model's Cholesky factor is read once per
// step instead of once per refinement and step.
func (p *Planner) refine(ctx context.Context, score scorer, starts [][]float64) ([][]float64, error) {
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	d := p.space.Dim()
	type ask struct {
		u     []float64
		reply chan float64
	}
	type done struct {
		i int
		x []float64
	}
	asks := make(chan ask)
	finished := make(chan done)
	for i, start := range starts {
		go func() {
			prob := optimize.Problem{Func: func(u []float64) float64 {
				r := make(chan float64, 1)
				asks <- ask{clampUnit(u), r}
				s := <-r
				if math.IsInf(s, -1) || math.IsNaN(s) {
					return math.MaxFloat64
				}
				return -s
			}}
			res, _ := optimize.Minimize(prob, start, &optimize.Settings{FuncEvaluations: 60 * d, Converger: &optimize.FunctionConverge{Absolute: 1e-6, Iterations: 15}}, &optimize.NelderMead{SimplexSize: 0.02})
			if res == nil {
				finished <- done{i, nil}
				return
			}
			finished <- done{i, res.X}
		}()
	}
	out := make([][]float64, len(starts))
	running := len(starts)
	var batch []ask
	for running > 0 {
		select {
		case a := <-asks:
			batch = append(batch, a)
		case f := <-finished:
			out[f.i] = f.x
			running--
		}
		if len(batch) > 0 && len(batch) == running {
			us := make([][]float64, len(batch))
			for i, a := range batch {
				us[i] = a.u
			}
			s := make([]float64, len(batch))
			if ctx.Err() == nil {
				score.exact(us, s)
			} else {
				// Cancelled: every point is barred, so each refinement
				// converges at once and the goroutines end.
				for i := range s {
					s[i] = negInf
				}
			}
			for i, a := range batch {
				a.reply <- s[i]
			}
			batch = batch[:0]
		}
	}
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	return out, nil
}
