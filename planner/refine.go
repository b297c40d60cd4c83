package planner

import (
	"context"
	"math"
)

// refine improves each start by Nelder-Mead (simplex.go, with every trial
// point projected onto the box) within 60 evaluations per factor, and
// returns the refined points, nil where a refinement gave nothing.
//
// The refinements run side by side in lockstep: the points they ask for
// are scored together, in one batch, at every step. Each refinement sees
// exactly the scores it would see alone (a point's score does not depend
// on the others in its batch), so the result is the same as refining one
// start after another; only a model's Cholesky factor is read once per
// step instead of once per refinement and step.
func (p *Planner) refine(ctx context.Context, score scorer, starts [][]float64) ([][]float64, error) {
	d := p.space.Dim()
	searches := make([]*simplex, len(starts))
	for i, start := range starts {
		searches[i] = newSimplex(start, 0.02, 60*d, 1e-6, 15)
	}
	var us [][]float64
	var asking []*simplex
	for {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		us, asking = us[:0], asking[:0]
		for _, x := range searches {
			if u := x.ask(); u != nil {
				us = append(us, clampUnit(u))
				asking = append(asking, x)
			}
		}
		if len(us) == 0 {
			break
		}
		s := make([]float64, len(us))
		score.exact(us, s)
		for i, x := range asking {
			if math.IsInf(s[i], -1) || math.IsNaN(s[i]) {
				x.tell(math.MaxFloat64)
			} else {
				x.tell(-s[i])
			}
		}
	}
	out := make([][]float64, len(starts))
	for i, x := range searches {
		out[i] = x.result()
	}
	return out, nil
}
