package planner

import (
	"context"
	"math"
	"sort"

	"benchtender/planner/gp"
)

// A scorer scores points of the unit box many at a time (larger is
// better, −Inf bars a point). Scoring in batches lets a model predict a
// block of candidates with one triangular solve (gp.Model.PredictMany)
// instead of one per point.
type scorer struct {
	// exact writes the score of us[i] into out[i].
	exact func(us [][]float64, out []float64)
	// bound, when not nil, writes an upper bound of each point's score,
	// much cheaper than the score itself: a search need not score a point
	// whose bound is below what it already has (maximise).
	bound func(us [][]float64, out []float64)
}

// pointwise makes a scorer of a function of one point.
func pointwise(f func(u []float64) float64) scorer {
	return scorer{exact: func(us [][]float64, out []float64) {
		for i, u := range us {
			out[i] = f(u)
		}
	}}
}

// where scores only the points ok accepts, in one batch, and bars the
// rest without scoring them; so does the bound.
func (s scorer) where(ok func(u []float64) bool) scorer {
	filter := func(f func([][]float64, []float64)) func([][]float64, []float64) {
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
			f(kept, sub)
			for j, i := range at {
				out[i] = sub[j]
			}
		}
	}
	w := scorer{exact: filter(s.exact)}
	if s.bound != nil {
		w.bound = filter(s.bound)
	}
	return w
}

// mapped scores each point at f(point) (f snaps a point to valid values,
// for example).
func (s scorer) mapped(f func(u []float64) []float64) scorer {
	m := func(g func([][]float64, []float64)) func([][]float64, []float64) {
		return func(us [][]float64, out []float64) {
			vs := make([][]float64, len(us))
			for i, u := range us {
				vs[i] = f(u)
			}
			g(vs, out)
		}
	}
	w := scorer{exact: m(s.exact)}
	if s.bound != nil {
		w.bound = m(s.bound)
	}
	return w
}

// one scores a single point.
func (s scorer) one(u []float64) float64 {
	var out [1]float64
	s.exact([][]float64{u}, out[:])
	return out[0]
}

// byModel scores each point with f of the point and m's posterior mean
// and standard deviation there, predicted in blocks. With rising (f never
// falls as the standard deviation grows, as expected improvement and a
// confidence bound), the scorer has a bound: f at the mean and an upper
// bound of the standard deviation (gp.Model.MeanBound), O(N) a point.
func (p *Planner) byModel(m *gp.Model, rising bool, f func(u []float64, mu, sd float64) float64) scorer {
	s := scorer{exact: func(us [][]float64, out []float64) {
		mu, v := make([]float64, len(us)), make([]float64, len(us))
		m.PredictMany(encodeAll(p, us), mu, v)
		for i, u := range us {
			out[i] = f(u, mu[i], math.Sqrt(v[i]))
		}
	}}
	if rising {
		s.bound = func(us [][]float64, out []float64) {
			mu, up := make([]float64, len(us)), make([]float64, len(us))
			m.MeanBound(encodeAll(p, us), mu, up)
			for i, u := range us {
				out[i] = f(u, mu[i], up[i])
			}
		}
	}
	return s
}

// ranked is a candidate's index and score.
type ranked struct {
	i int
	s float64
}

// topCandidates scores the candidates and returns, best first (ties in
// candidate order), at least the k best of them with their scores: every
// candidate when the scorer has no bound. With a bound, candidates are
// scored in order of their bound, a block at a time, until the next bound
// is below the k-th best score so far; the candidates never scored could
// not have been among the k best, so the answer is the one scoring all of
// them would give.
func (p *Planner) topCandidates(ctx context.Context, score scorer, cands [][]float64, k int) ([]ranked, error) {
	const block = 256
	out := make([]ranked, 0, len(cands))
	if score.bound == nil {
		s := make([]float64, len(cands))
		for lo := 0; lo < len(cands); lo += block {
			if err := ctx.Err(); err != nil {
				return nil, err
			}
			hi := min(lo+block, len(cands))
			score.exact(cands[lo:hi], s[lo:hi])
		}
		for i, v := range s {
			out = append(out, ranked{i, v})
		}
	} else {
		b := make([]float64, len(cands))
		for lo := 0; lo < len(cands); lo += block {
			hi := min(lo+block, len(cands))
			score.bound(cands[lo:hi], b[lo:hi])
		}
		order := make([]int, len(cands))
		for i := range order {
			order[i] = i
		}
		sort.SliceStable(order, func(x, y int) bool { return b[order[x]] > b[order[y]] })
		best := make([]float64, 0, k+block) // the k best finite scores so far, descending
		const step = 64
		for lo := 0; lo < len(order); lo += step {
			if err := ctx.Err(); err != nil {
				return nil, err
			}
			if len(best) == k && b[order[lo]] < best[k-1] {
				break
			}
			hi := min(lo+step, len(order))
			us := make([][]float64, hi-lo)
			for j, i := range order[lo:hi] {
				us[j] = cands[i]
			}
			s := make([]float64, len(us))
			score.exact(us, s)
			for j, i := range order[lo:hi] {
				out = append(out, ranked{i, s[j]})
				if !math.IsInf(s[j], -1) && !math.IsNaN(s[j]) {
					best = append(best, s[j])
				}
			}
			sort.Sort(sort.Reverse(sort.Float64Slice(best)))
			best = best[:min(k, len(best))]
		}
		sort.Slice(out, func(x, y int) bool { return out[x].i < out[y].i })
	}
	sort.SliceStable(out, func(x, y int) bool { return out[x].s > out[y].s })
	return out, nil
}
