package gp

import (
	"math"
	"math/rand/v2"
	"testing"
)

// The closed-form leave-one-out predictions and their log density (Rasmussen and Williams 2006,
// eqs. 5.10-5.12) equal refitting without each point, with the same
// hyperparameters, to 1e-9 relative; the predictive variance includes the
// noise.
func TestLeaveOneOutMatchesRefitting(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	x, y := randomData(rng, 20, 3, wave, 0.05)
	p := Params{LengthScales: []float64{0.4, 0.6, 0.5}, SignalVar: 1.2, NoiseVar: 0.01}
	m, err := New(x, y, p)
	if err != nil {
		t.Fatal(err)
	}
	loo := m.LeaveOneOut()
	mean, scale := m.Standardisation()
	density := 0.0
	for i := range x {
		xs := append(append([][]float64(nil), x[:i]...), x[i+1:]...)
		ys := append(append([]float64(nil), y[:i]...), y[i+1:]...)
		// Same standardisation as the full model, so that the two
		// models are the same process: condition on standardised
		// values and map back.
		zs := make([]float64, len(ys))
		for j, v := range ys {
			zs[j] = (v - mean) / scale
		}
		mi := &Model{x: xs, p: p.Clone(), yMean: 0, yScale: 1, z: zs}
		if err := mi.factor(); err != nil {
			t.Fatal(err)
		}
		mu, v := mi.Predict(x[i])
		mu = mean + scale*mu
		sd := scale * math.Sqrt(v+p.NoiseVar)
		if rel(loo.Mean[i], mu) > 1e-9 || rel(loo.SD[i], sd) > 1e-9 {
			t.Errorf("point %d: closed form %.12g ± %.12g, refit %.12g ± %.12g", i, loo.Mean[i], loo.SD[i], mu, sd)
		}
		if rel(loo.Residual[i], y[i]-mu) > 1e-8 || rel(loo.Standardised[i], (y[i]-mu)/sd) > 1e-8 {
			t.Errorf("point %d: residual %g, standardised %g", i, loo.Residual[i], loo.Standardised[i])
		}
		density += math.Log(normalDensity(y[i], mu, sd))
	}
	if got := loo.LogDensity(); rel(got, density) > 1e-9 {
		t.Errorf("log predictive density %.12g, by refitting %.12g", got, density)
	}
}

// normalDensity is the density of N(mu, sd²) at v.
func normalDensity(v, mu, sd float64) float64 {
	z := (v - mu) / sd
	return math.Exp(-z*z/2) / (sd * math.Sqrt(2*math.Pi))
}

// Joint posterior samples have the posterior mean and covariance: with
// 20,000 draws the sample mean lies within 4 standard errors and the sample
// covariance within 0.05 of the prior variance.
func TestSamplesHaveThePosteriorMoments(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	x, y := randomData(rng, 10, 2, wave, 0.01)
	m, err := New(x, y, Params{LengthScales: []float64{0.3, 0.3}, SignalVar: 1, NoiseVar: 1e-4})
	if err != nil {
		t.Fatal(err)
	}
	pts := [][]float64{{0.1, 0.1}, {0.12, 0.1}, {0.5, 0.5}, {0.9, 0.2}, x[0]}
	mean, cov := m.PredictJoint(pts)
	const n = 20000
	s, _, err := m.Sample(pts, n, rand.New(rand.NewPCG(1, 1)))
	if err != nil {
		t.Fatal(err)
	}
	_, scale := m.Standardisation()
	for i := range pts {
		var sm float64
		for k := 0; k < n; k++ {
			sm += s.At(k, i)
		}
		sm /= n
		se := math.Sqrt(cov.At(i, i)/n) + 1e-9
		if math.Abs(sm-mean[i]) > 4*se {
			t.Errorf("point %d: sample mean %g, posterior mean %g (se %g)", i, sm, mean[i], se)
		}
		for j := range pts {
			var c float64
			for k := 0; k < n; k++ {
				c += (s.At(k, i) - mean[i]) * (s.At(k, j) - mean[j])
			}
			c /= n
			if math.Abs(c-cov.At(i, j)) > 0.05*scale*scale {
				t.Errorf("cov[%d][%d]: sample %g, posterior %g", i, j, c, cov.At(i, j))
			}
		}
	}
	if c := m.Covariance(pts[0], pts[1]); math.Abs(c-cov.At(0, 1)) > 1e-12 {
		t.Errorf("Covariance %g, PredictJoint %g", c, cov.At(0, 1))
	}
}

// Replicated runs (the same input several times, as when a setpoint is
// repeated to measure repeatability) fit without a singular matrix, and
// the noise is learned from their spread.
func TestReplicatesFit(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 10))
	var x [][]float64
	var y []float64
	for i := 0; i < 8; i++ {
		p := []float64{rng.Float64(), rng.Float64()}
		for r := 0; r < 3; r++ {
			x = append(x, p)
			y = append(y, wave(p)+0.2*rng.NormFloat64())
		}
	}
	m, err := Fit(x, y, FitOptions{Starts: 2, Rand: rng})
	if err != nil {
		t.Fatal(err)
	}
	_, scale := m.Standardisation()
	noiseSD := math.Sqrt(m.Params().NoiseVar) * scale
	if noiseSD < 0.08 || noiseSD > 0.5 {
		t.Errorf("fitted noise sd %.3g, true 0.2", noiseSD)
	}
	for _, xi := range x {
		if mu, v := m.Predict(xi); math.IsNaN(mu) || math.IsNaN(v) {
			t.Fatal("NaN prediction")
		}
	}
	// Noise-free duplicates need jitter but still factorise.
	dup := [][]float64{{0.5, 0.5}, {0.5, 0.5}, {0.2, 0.7}}
	md, err := New(dup, []float64{1, 1, 2}, Params{LengthScales: []float64{0.3, 0.3}, SignalVar: 1, NoiseVar: 0})
	if err != nil {
		t.Fatal(err)
	}
	if md.Jitter() == 0 {
		t.Error("exact duplicates without noise factorised without jitter")
	}
}

// A fixed noise (the instrument's known repeatability) is kept, in the
// response's units.
func TestFixedNoise(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 12))
	x, y := randomData(rng, 25, 2, wave, 0.1)
	m, err := Fit(x, y, FitOptions{FixedNoise: 0.01, Starts: 1, Rand: rng})
	if err != nil {
		t.Fatal(err)
	}
	_, scale := m.Standardisation()
	if got := m.Params().NoiseVar * scale * scale; math.Abs(got-0.01) > 1e-12 {
		t.Errorf("noise variance %g, want 0.01", got)
	}
}

// Non-finite data is an error, never a NaN prediction.
func TestBadDataIsAnError(t *testing.T) {
	if _, err := Fit([][]float64{{0.1}, {0.2}}, []float64{1, math.NaN()}, FitOptions{}); err == nil {
		t.Error("NaN response accepted")
	}
	if _, err := Fit([][]float64{{math.Inf(1)}}, []float64{1}, FitOptions{}); err == nil {
		t.Error("infinite input accepted")
	}
	if _, err := Fit(nil, nil, FitOptions{}); err == nil {
		t.Error("no data accepted")
	}
}
