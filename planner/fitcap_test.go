package planner

import (
	"math"
	"math/rand/v2"
	"testing"

	"benchtender/planner/gp"
)

func TestFitSubset(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	y := make([]float64, 1000)
	for i := range y {
		y[i] = rng.NormFloat64()
	}
	idx := fitSubset(y, fitCap)
	if len(idx) != fitCap {
		t.Fatalf("%d indices, want %d", len(idx), fitCap)
	}
	in := map[int]bool{}
	for k, i := range idx {
		if k > 0 && i <= idx[k-1] {
			t.Fatalf("indices not ascending and distinct at %d: %d after %d", k, i, idx[k-1])
		}
		in[i] = true
	}
	for i := len(y) - fitCap/3; i < len(y); i++ {
		if !in[i] {
			t.Errorf("latest run %d left out", i)
		}
	}
	best := 0
	for i := range y {
		if y[i] < y[best] {
			best = i
		}
	}
	if !in[best] {
		t.Errorf("best run %d left out", best)
	}
}

// Beyond fitCap runs the hyperparameters come from a subset but the model
// holds every run, and predicts about as well as one fitted to all.
func TestFitCappedHoldsEveryRun(t *testing.T) {
	f := func(u []float64) float64 { return math.Sin(6*u[0]) + math.Cos(4*u[1]) + u[0]*u[1] }
	rng := rand.New(rand.NewPCG(3, 4))
	n := 2 * fitCap
	x := make([][]float64, n)
	y := make([]float64, n)
	for i := range x {
		x[i] = []float64{rng.Float64(), rng.Float64()}
		y[i] = f(x[i]) + 0.01*rng.NormFloat64()
	}
	opt := gp.FitOptions{Kernel: gp.Matern52, Starts: 1, Rand: rand.New(rand.NewPCG(5, 6)), NoiseFloor: 1e-8}
	capped, err := fitCapped(x, y, opt)
	if err != nil {
		t.Fatal(err)
	}
	if capped.Len() != n {
		t.Fatalf("capped model holds %d runs, want %d", capped.Len(), n)
	}
	full, err := gp.Fit(x, y, opt)
	if err != nil {
		t.Fatal(err)
	}
	rmse := func(m *gp.Model) float64 {
		r := rand.New(rand.NewPCG(7, 8))
		var s float64
		for i := 0; i < 500; i++ {
			u := []float64{r.Float64(), r.Float64()}
			mu, _ := m.Predict(u)
			s += (mu - f(u)) * (mu - f(u))
		}
		return math.Sqrt(s / 500)
	}
	rc, rf := rmse(capped), rmse(full)
	t.Logf("RMSE at 500 random points: capped %.4f, full %.4f (noise sd 0.01)", rc, rf)
	// The function spans about 4; both should be within a few noise sds.
	if rc > 0.05 || rc > 2*rf+0.005 {
		t.Errorf("capped fit predicts with RMSE %.4f against the full fit's %.4f", rc, rf)
	}
}
