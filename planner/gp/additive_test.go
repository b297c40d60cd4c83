package gp

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"
)

// With the additive share fitted, the analytic gradient still agrees with
// central finite differences, the share's logit included (θ's last entry).
func TestAdditiveGradientMatchesFiniteDifferences(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	for _, c := range []struct {
		kern Kernel
		d    int
	}{{Matern52, 1}, {Matern52, 3}, {Matern32, 4}, {SquaredExponential, 3}} {
		x, y := randomData(rng, 25, c.d, wave, 0.05)
		o := newObjective(x, zScores(y), c.kern, 1e-6)
		o.additive = true
		for trial := 0; trial < 3; trial++ {
			th := make([]float64, c.d+4)
			for k := range th {
				th[k] = -1.5 + rng.Float64()
			}
			th[c.d+3] = -3 + 4*rng.Float64()
			checkGradient(t, o, th, fmt.Sprintf("%v d=%d additive", c.kern, c.d))
		}
	}
}

// The objective's matrix is the model's: a model made with the fitted
// share has the log marginal likelihood the objective computed, and its
// covariance between two points is the mixture worked out by hand.
func TestAdditiveModelMatchesObjective(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	x, y := randomData(rng, 30, 3, wave, 0.01)
	p := Params{Kernel: Matern52, LengthScales: []float64{0.3, 0.5, 0.2}, SignalVar: 1.3, NoiseVar: 1e-3, Additive: 0.4}
	m, err := New(x, y, p)
	if err != nil {
		t.Fatal(err)
	}
	o := newObjective(x, m.z, Matern52, 1e-6)
	o.additive = true
	th := o.theta(p)
	// compute is minus the log posterior (the mean is θ's, p.Mean): take
	// the priors back out.
	lml := -o.compute(th) - logNormal(th[3], priorLogSigMean, priorLogSigSD) - logNormal(th[4], priorLogNoiseMean, priorLogNoiseSD) -
		logNormal(0, 0, priorMeanSD) - logNormal(th[6], priorLogitAddMean, priorLogitAddSD)
	for k := 0; k < 3; k++ {
		lml -= logNormal(th[k], priorLogLenMean, priorLogLenSD)
	}
	if math.Abs(lml-m.LogMarginalLikelihood()) > 1e-8*math.Abs(lml) {
		t.Errorf("log marginal likelihood: objective %.10g, model %.10g", lml, m.LogMarginalLikelihood())
	}
	a, b := []float64{0.1, 0.5, 0.9}, []float64{0.3, 0.4, 0.6}
	k := func(r float64) float64 { s := math.Sqrt(5) * r; return (1 + s + s*s/3) * math.Exp(-s) }
	full := k(math.Sqrt(math.Pow(0.2/0.3, 2) + math.Pow(0.1/0.5, 2) + math.Pow(0.3/0.2, 2)))
	add := (k(0.2/0.3) + k(0.1/0.5) + k(0.3/0.2)) / 3
	if got, want := m.corr(a, b), 0.6*full+0.4*add; math.Abs(got-want) > 1e-12 {
		t.Errorf("correlation %.12g, want %.12g", got, want)
	}
	ks := make([]float64, len(x))
	m.crossCov(ks, a)
	for i, xi := range x {
		if want := 1.3 * m.corr(xi, a); math.Abs(ks[i]-want) > 1e-9 {
			t.Fatalf("cross-covariance %d: %.12g, want %.12g", i, ks[i], want)
		}
	}
}

// On a response that is a sum of one effect per input, the fit gives most
// of the variance to the additive terms; on a product of the inputs'
// effects, little. (The likelihood decides the share.)
func TestAdditiveShareFollowsTheData(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	sum := func(x []float64) float64 { return math.Sin(6*x[0]) + math.Cos(5*x[1]) + math.Sin(7*x[2]+1) }
	prod := func(x []float64) float64 { return math.Sin(6*x[0]) * math.Cos(5*x[1]) * math.Sin(7*x[2]+1) }
	share := func(f func([]float64) float64) float64 {
		x, y := randomData(rng, 60, 3, f, 0)
		m, err := Fit(x, y, FitOptions{Kernel: Matern52, Starts: 3, Rand: rng, Additive: true})
		if err != nil {
			t.Fatal(err)
		}
		return m.Params().Additive
	}
	if w := share(sum); w < 0.8 {
		t.Errorf("additive response: share %.3f, want above 0.8", w)
	}
	if w := share(prod); w > 0.2 {
		t.Errorf("response with interactions: share %.3f, want below 0.2", w)
	}
}

// Pathwise draws of an additive model have the model's covariance: the
// sample covariance of many draws' prior parts at two points matches the
// kernel's mixture.
func TestAdditivePathsPriorCovariance(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 10))
	x, y := randomData(rng, 5, 2, wave, 0.01)
	m, err := New(x, y, Params{Kernel: Matern52, LengthScales: []float64{0.2, 0.3}, SignalVar: 1, NoiseVar: 1e-2, Additive: 0.7})
	if err != nil {
		t.Fatal(err)
	}
	a, b := []float64{0.2, 0.5}, []float64{0.25, 0.9} // close along input 0, far along 1
	paths, err := m.Paths(4000, 256, rng)
	if err != nil {
		t.Fatal(err)
	}
	var sab, saa float64
	for _, p := range paths {
		fa, fb := p.prior(a), p.prior(b)
		sab += fa * fb
		saa += fa * fa
	}
	n := float64(len(paths))
	if got, want := sab/n, m.corr(a, b); math.Abs(got-want) > 0.05 {
		t.Errorf("prior covariance %.3f, kernel %.3f", got, want)
	}
	if got := saa / n; math.Abs(got-1) > 0.08 {
		t.Errorf("prior variance %.3f, want 1", got)
	}
}

// The cross-covariances, worked out from the table of exponentials where
// it holds and directly where it would overflow (a length scale of 0.001,
// a point outside the box), agree with the correlation computed term by
// term, for every kernel.
func TestAdditiveCrossCovAgreesWithCorr(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 12))
	x, y := randomData(rng, 70, 3, wave, 0.01)
	for _, kern := range []Kernel{Matern52, Matern32, SquaredExponential} {
		m, err := New(x, y, Params{Kernel: kern, LengthScales: []float64{0.2, 0.001, 0.7}, SignalVar: 0.8, NoiseVar: 1e-2, Additive: 0.6})
		if err != nil {
			t.Fatal(err)
		}
		if kern != SquaredExponential && (m.add == nil || !m.add.ok[0] || m.add.ok[1]) {
			t.Fatalf("%v: table %+v, want inputs 0 and 2 in it and 1 (length scale 0.001) left out", kern, m.add)
		}
		ks := make([]float64, len(x))
		for _, a := range [][]float64{{0.1, 0.5, 0.9}, x[3], {1.2, -0.1, 0.5}, {0.4, 0.4, 250}} {
			m.crossCov(ks, a)
			for i, xi := range x {
				if want := 0.8 * m.corr(xi, a); math.Abs(ks[i]-want) > 1e-12+1e-12*math.Abs(want) {
					t.Fatalf("%v at %v, run %d: %.15g, want %.15g", kern, a, i, ks[i], want)
				}
			}
		}
	}
}
