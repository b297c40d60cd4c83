package planner

import (
	"math"

	"benchtender/planner/gp"
)

// A scorer scores points of the unit box many at a time: out[i] is the
// score of us[i], larger is better, −Inf bars the point. Scoring in
// batches lets a model predict a block of candidates with one triangular
// solve (gp.Model.PredictMany) instead of one per point.
type scorer func(us [][]float64, out []float64)

// pointwise makes a scorer of a function of one point.
func pointwise(f func(u []float64) float64) scorer {
	return func(us [][]float64, out []float64) {
		for i, u := range us {
			out[i] = f(u)
		}
	}
}

// where scores only the points ok accepts, in one batch, and bars the
// rest without scoring them.
func (s scorer) where(ok func(u []float64) bool) scorer {
	return func(us [][]float64, out []float64) {
		kept := make([][]float64, 0, len(us))
		at := make([]int, 0, len(us))
		for i, u := range us {
			if ok(u) {
				kept = append(kept, u)
				at = append(at, i)
			} else {
				out[i] = negInf
			}
		}
		if len(kept) == 0 {
			return
		}
		sub := make([]float64, len(kept))
		s(kept, sub)
		for j, i := range at {
			out[i] = sub[j]
		}
	}
}

// one scores a single point.
func (s scorer) one(u []float64) float64 {
	var out [1]float64
	s([][]float64{u}, out[:])
	return out[0]
}

// byModel scores each point with f of the point and m's posterior mean
// and standard deviation there, predicted in blocks.
func (p *Planner) byModel(m *gp.Model, f func(u []float64, mu, sd float64) float64) scorer {
	return func(us [][]float64, out []float64) {
		enc := make([][]float64, len(us))
		for i, u := range us {
			enc[i] = p.encode(u)
		}
		mu, v := make([]float64, len(us)), make([]float64, len(us))
		m.PredictMany(enc, mu, v)
		for i, u := range us {
			out[i] = f(u, mu[i], math.Sqrt(v[i]))
		}
	}
}
