package gp

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"
)

// closeTo fails when got and want differ by more than tol relative to
// max(1, |want|).
func closeTo(t *testing.T, what string, got, want, tol float64) {
	t.Helper()
	if math.Abs(got-want) > tol*math.Max(1, math.Abs(want)) || math.IsNaN(got) != math.IsNaN(want) {
		t.Errorf("%s: got %.12g, want %.12g", what, got, want)
	}
}

// Conditioning a model on more runs by extending its factor must give the
// model a full factorisation gives: the same predictions and log marginal
// likelihood, to 1e-9 relative. Cases: runs added at the end (the factor
// is extended), none added (it panicked, slicing an empty block, until
// the new search's model came to condition on runs that may all lie in
// regions set aside), a run inserted before the end (rebuilt), and
// duplicate inputs with no noise (the new block needs jitter).
func TestConditionMatchesNew(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	x, y := randomData(rng, 60, 3, wave, 0.05)
	p := defaultParams(Matern52, 3)
	probe, _ := randomData(rng, 20, 3, wave, 0)
	dup := append(append([][]float64(nil), x[:40]...), x[5], x[6])
	dupY := append(append([]float64(nil), y[:40]...), y[5]+0.01, y[6])
	inserted := append(append(append([][]float64(nil), x[:20]...), x[50]), x[20:40]...)
	insertedY := append(append(append([]float64(nil), y[:20]...), y[50]), y[20:40]...)
	for _, c := range []struct {
		name  string
		noise float64
		n0    int
		x     [][]float64
		y     []float64
	}{
		{"one more run", 1e-2, 59, x, y},
		{"twenty more runs", 1e-2, 40, x, y},
		{"from one run", 1e-2, 1, x, y},
		{"no new run", 1e-2, 60, x, y},
		{"a run inserted", 1e-2, 40, inserted, insertedY},
		{"repeated inputs, no noise", 0, 40, dup, dupY},
	} {
		t.Run(c.name, func(t *testing.T) {
			p := p.Clone()
			p.NoiseVar = c.noise
			prev, err := New(x[:c.n0], y[:c.n0], p)
			if err != nil {
				t.Fatal(err)
			}
			got, err := Condition(prev, c.x, c.y)
			if err != nil {
				t.Fatal(err)
			}
			want, err := New(c.x, c.y, p)
			if err != nil {
				t.Fatal(err)
			}
			if c.noise > 0 {
				closeTo(t, "log marginal likelihood", got.LogMarginalLikelihood(), want.LogMarginalLikelihood(), 1e-9)
			}
			tol := 1e-9
			if c.noise == 0 {
				// Jitter decides the answer on repeated inputs; it
				// must still be the same model to a few digits.
				tol = 1e-4
			}
			for i, pt := range probe {
				gm, gv := got.Predict(pt)
				wm, wv := want.Predict(pt)
				closeTo(t, fmt.Sprintf("mean at probe %d", i), gm, wm, tol)
				closeTo(t, fmt.Sprintf("variance at probe %d", i), gv, wv, tol)
			}
		})
	}
}

// PredictMany and Mean must agree with Predict point by point (1e-12
// relative), across block boundaries.
func TestPredictManyMatchesPredict(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	x, y := randomData(rng, 80, 4, wave, 0.05)
	m, err := New(x, y, defaultParams(Matern32, 4))
	if err != nil {
		t.Fatal(err)
	}
	pts, _ := randomData(rng, 2*predictBlock+7, 4, wave, 0)
	mean, variance := make([]float64, len(pts)), make([]float64, len(pts))
	m.PredictMany(pts, mean, variance)
	for i, pt := range pts {
		wm, wv := m.Predict(pt)
		closeTo(t, fmt.Sprintf("mean %d", i), mean[i], wm, 1e-12)
		closeTo(t, fmt.Sprintf("variance %d", i), variance[i], wv, 1e-12)
		closeTo(t, fmt.Sprintf("Mean %d", i), m.Mean(pt), wm, 1e-12)
	}
}

// WithFantasies extends the factor; it must match conditioning from
// scratch on the same data and standardisation.
func TestWithFantasiesMatchesRefactor(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	x, y := randomData(rng, 50, 2, wave, 0.05)
	m, err := New(x, y, defaultParams(Matern52, 2))
	if err != nil {
		t.Fatal(err)
	}
	pend, _ := randomData(rng, 3, 2, wave, 0)
	f, err := m.WithFantasies(pend)
	if err != nil {
		t.Fatal(err)
	}
	ref := &Model{x: f.x, z: f.z, p: f.p, yMean: f.yMean, yScale: f.yScale}
	if err := ref.factor(); err != nil {
		t.Fatal(err)
	}
	probe, _ := randomData(rng, 10, 2, wave, 0)
	for i, pt := range append(probe, pend...) {
		gm, gv := f.Predict(pt)
		wm, wv := ref.Predict(pt)
		closeTo(t, fmt.Sprintf("mean %d", i), gm, wm, 1e-9)
		closeTo(t, fmt.Sprintf("variance %d", i), gv, wv, 1e-9)
	}
}

// MeanBound's mean is Predict's and its bound is never below Predict's
// standard deviation, with and without noise and fantasies.
func TestMeanBoundBoundsPredict(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 12))
	x, y := randomData(rng, 120, 3, wave, 0.05)
	for _, noise := range []float64{0, 1e-4, 0.05} {
		p := defaultParams(Matern52, 3)
		p.NoiseVar = noise
		m, err := New(x, y, p)
		if err != nil {
			t.Fatal(err)
		}
		pts, _ := randomData(rng, 300, 3, wave, 0)
		pts = append(pts, x[:20]...) // at the runs, where the bound is tightest
		mean, up := make([]float64, len(pts)), make([]float64, len(pts))
		m.MeanBound(pts, mean, up)
		tight := 0
		for i, pt := range pts {
			wm, wv := m.Predict(pt)
			closeTo(t, fmt.Sprintf("noise %g: mean %d", noise, i), mean[i], wm, 1e-12)
			if sd := math.Sqrt(wv); sd > up[i] {
				t.Errorf("noise %g: point %d: sd %.15g above its bound %.15g", noise, i, sd, up[i])
			} else if sd > 0.5*up[i] {
				tight++
			}
		}
		t.Logf("noise %g: bound within a factor 2 of the sd at %d of %d points", noise, tight, len(pts))
	}
}

// crossCov, four runs at a time and with vexp's exponentials, must give
// what the kernel gives run by run (Kernel.corr of scaledDist), for every
// kernel and a number of runs that leaves a remainder after the fours.
func TestCrossCovMatchesKernel(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 12))
	x, y := randomData(rng, 83, 5, wave, 0.05)
	for _, k := range []Kernel{Matern32, Matern52, SquaredExponential} {
		m, err := New(x, y, defaultParams(k, 5))
		if err != nil {
			t.Fatal(err)
		}
		pts, _ := randomData(rng, 20, 5, wave, 0)
		got := make([]float64, len(x))
		for _, pt := range pts {
			m.crossCov(got, pt)
			for i, xi := range x {
				want := m.p.SignalVar * k.corr(scaledDist(xi, pt, m.invLen))
				closeTo(t, fmt.Sprintf("%v run %d", k, i), got[i], want, 1e-14)
			}
		}
	}
}
