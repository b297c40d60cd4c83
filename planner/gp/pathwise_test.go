package gp

import (
	"math"
	"math/rand/v2"
	"testing"
)

// Pathwise draws have the posterior's mean and variance: over 2,000 draws,
// at points near and far from the data, the sample mean is within 4
// standard errors and the sample variance within 10% of the exact
// posterior (the random-feature prior adds a small bias, 512 features).
func TestPathsMatchThePosterior(t *testing.T) {
	for _, kern := range []Kernel{Matern52, Matern32, SquaredExponential} {
		rng := rand.New(rand.NewPCG(21, 22))
		x, y := randomData(rng, 12, 2, wave, 0.02)
		m, err := New(x, y, Params{Kernel: kern, LengthScales: []float64{0.3, 0.4}, SignalVar: 1, NoiseVar: 1e-3})
		if err != nil {
			t.Fatal(err)
		}
		paths, err := m.Paths(2000, 512, rand.New(rand.NewPCG(1, 2)))
		if err != nil {
			t.Fatal(err)
		}
		for _, pt := range [][]float64{{0.5, 0.5}, {0.05, 0.95}, {x[3][0] + 0.01, x[3][1]}} {
			mu, v := m.Predict(pt)
			var s, ss float64
			for _, p := range paths {
				f := p.At(pt)
				s += f
				ss += f * f
			}
			n := float64(len(paths))
			sm := s / n
			sv := ss/n - sm*sm
			if math.Abs(sm-mu) > 4*math.Sqrt(v/n)+1e-9 {
				t.Errorf("%v at %v: path mean %.5g, posterior %.5g (sd %.3g)", kern, pt, sm, mu, math.Sqrt(v))
			}
			if math.Abs(sv-v) > 0.1*v+1e-9 {
				t.Errorf("%v at %v: path variance %.5g, posterior %.5g", kern, pt, sv, v)
			}
		}
	}
}

// Kriging believer: the mean is unchanged, the variance at the fantasy
// falls to about the noise.
func TestWithFantasies(t *testing.T) {
	rng := rand.New(rand.NewPCG(23, 24))
	x, y := randomData(rng, 10, 2, wave, 0.02)
	m, err := New(x, y, Params{LengthScales: []float64{0.3, 0.4}, SignalVar: 1, NoiseVar: 1e-4})
	if err != nil {
		t.Fatal(err)
	}
	pt := []float64{0.31, 0.77}
	mu0, v0 := m.Predict(pt)
	f, err := m.WithFantasies([][]float64{pt})
	if err != nil {
		t.Fatal(err)
	}
	mu1, v1 := f.Predict(pt)
	if math.Abs(mu1-mu0) > 1e-6*math.Max(1, math.Abs(mu0)) || v1 > 0.01*v0 {
		t.Errorf("before %.6g ± %.3g, after %.6g ± %.3g", mu0, math.Sqrt(v0), mu1, math.Sqrt(v1))
	}
}
