package planner

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"benchtender/planner/gp"
)

// chooseShare keeps the share whose model predicts the runs left out best:
// on a response that is a sum of one effect per factor it chooses at
// least half the variance for the additive terms, on a product of the
// same effects at most a quarter; and its model's leave-one-out density
// is the largest of the six, each worked out afresh.
func TestChooseShareByPrediction(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 10))
	sum := func(x []float64) float64 { return math.Sin(6*x[0]) + math.Cos(5*x[1]) + math.Sin(7*x[2]+1) }
	prod := func(x []float64) float64 { return math.Sin(6*x[0]) * math.Cos(5*x[1]) * math.Sin(7*x[2]+1) }
	for _, tc := range []struct {
		name   string
		f      func([]float64) float64
		lo, hi float64
	}{{"sum", sum, 0.5, 1}, {"product", prod, 0, 0.25}} {
		x := LatinHypercube(30, 3, rng)
		xs, y := make([][]float64, len(x)), make([]float64, len(x))
		for i, u := range x {
			xs[i], y[i] = u, tc.f(u)
		}
		m, err := gp.Fit(xs, y, gp.FitOptions{Kernel: gp.Matern52, Starts: 3, Rand: rng, Additive: true})
		if err != nil {
			t.Fatal(err)
		}
		got := chooseShare(xs, y, m)
		w := got.Params().Additive
		if w < tc.lo || w > tc.hi {
			t.Errorf("%s: share %.2f chosen (fitted %.2f), want %.2f to %.2f", tc.name, w, m.Params().Additive, tc.lo, tc.hi)
		}
		shares := []float64{0.01, 0.1, 0.25, 0.5, 0.75, 0.9}
		if !slices.Contains(shares, w) {
			t.Errorf("%s: share %g is not one of %v", tc.name, w, shares)
		}
		best := got.LeaveOneOut().LogDensity()
		for _, v := range shares {
			p := m.Params()
			p.Additive = v
			mv, err := gp.New(xs, y, p)
			if err != nil {
				t.Fatal(err)
			}
			if l := mv.LeaveOneOut().LogDensity(); l > best {
				t.Errorf("%s: share %g predicts the runs left out better (%.4f) than the chosen %g (%.4f)", tc.name, v, l, w, best)
			}
		}
		t.Logf("%s: fitted share %.2f, chosen %.2f", tc.name, m.Params().Additive, w)
	}
}
