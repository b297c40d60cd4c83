package gp

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

func randomData(rng *rand.Rand, n, d int, f func([]float64) float64, noise float64) ([][]float64, []float64) {
	x := make([][]float64, n)
	y := make([]float64, n)
	for i := range x {
		x[i] = make([]float64, d)
		for k := range x[i] {
			x[i][k] = rng.Float64()
		}
		y[i] = f(x[i]) + noise*rng.NormFloat64()
	}
	return x, y
}

func wave(x []float64) float64 {
	s := 0.0
	for k, v := range x {
		s += math.Sin(3*v+float64(k)) * float64(k+1)
	}
	return s
}

// The analytic gradient of the objective must agree with central finite
// differences (step 1e-6, tolerance 1e-4 relative to the gradient's size).
func TestGradientMatchesFiniteDifferences(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for _, c := range []struct {
		kern Kernel
		d    int
	}{{Matern52, 1}, {Matern52, 3}, {Matern52, 6}, {Matern32, 3}, {SquaredExponential, 3}} {
		kern, d := c.kern, c.d
		x, y := randomData(rng, 25, d, wave, 0.05)
		z := zScores(y)
		o := newObjective(x, z, kern, 1e-6)
		for trial := 0; trial < 3; trial++ {
			th := make([]float64, d+3)
			for k := range th {
				th[k] = -1.5 + rng.Float64()
			}
			checkGradient(t, o, th, fmt.Sprintf("%v d=%d", kern, d))
		}
	}
}

// checkGradient checks o's analytic gradient at θ = th against central
// finite differences (step 1e-6, tolerance 1e-4 relative to its size).
func checkGradient(t *testing.T, o *objective, th []float64, label string) {
	t.Helper()
	g := make([]float64, len(th))
	o.eval(th, g)
	const h = 1e-6
	for k := range th {
		tp := append([]float64(nil), th...)
		tm := append([]float64(nil), th...)
		tp[k] += h
		tm[k] -= h
		fd := (o.eval(tp, nil) - o.eval(tm, nil)) / (2 * h)
		if math.Abs(fd-g[k]) > 1e-4*math.Max(1, math.Abs(fd)) {
			t.Errorf("%s θ[%d]: analytic %.8g, finite difference %.8g", label, k, g[k], fd)
		}
	}
}

// A fit on smooth data predicts held-out points well and does so with a
// variance that shrinks at the data.
func TestFitPredicts(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	x, y := randomData(rng, 40, 2, wave, 0)
	m, err := Fit(x, y, FitOptions{Starts: 2, Rand: rng})
	if err != nil {
		t.Fatal(err)
	}
	var se float64
	for i := 0; i < 200; i++ {
		p := []float64{rng.Float64(), rng.Float64()}
		mu, v := m.Predict(p)
		if math.IsNaN(mu) || v < 0 {
			t.Fatalf("prediction %v %v", mu, v)
		}
		se += (mu - wave(p)) * (mu - wave(p))
	}
	rmse := math.Sqrt(se / 200)
	if rmse > 0.05 {
		t.Errorf("held-out RMSE %.3g, want below 0.05 (range of the function ≈ 4)", rmse)
	}
	_, v := m.Predict(x[0])
	if v > 1e-3 {
		t.Errorf("variance at a data point %.3g, want near 0", v)
	}
}

// With tied length-scales the optimiser's gradient (the per-input
// gradients summed, one prior) matches finite differences of the
// objective over the reduced vector, and a fit returns one length-scale
// repeated.
func TestIsotropicFit(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	for _, d := range []int{2, 5} {
		x, y := randomData(rng, 20, d, wave, 0.05)
		z := zScores(y)
		o := newObjective(x, z, Matern32, 1e-6)
		o.iso = true
		th := make([]float64, d+3)
		for k := range th {
			th[k] = -1.5 + rng.Float64()
		}
		if r, _, _ := o.reduce(th); len(r) != 4 {
			t.Fatalf("d=%d: reduced vector has %d values, want 4", d, len(r))
		}
		checkReducedGradient(t, o, th, fmt.Sprintf("d=%d", d))
		m, err := Fit(x, y, FitOptions{Kernel: Matern32, Isotropic: true, Starts: 2, Rand: rng})
		if err != nil {
			t.Fatal(err)
		}
		ls := m.Params().LengthScales
		for _, l := range ls {
			if l != ls[0] {
				t.Errorf("d=%d: isotropic fit gave length-scales %v", d, ls)
			}
		}
		ard, err := Fit(x, y, FitOptions{Kernel: Matern32, Starts: 2, Rand: rng})
		if err != nil {
			t.Fatal(err)
		}
		if equal := slices.Equal(ard.Params().LengthScales, ls); equal {
			t.Errorf("d=%d: the fit with one length-scale per input gave the tied one, %v", d, ls)
		}
	}
}

// zScores returns y standardised as Fit does.
func zScores(y []float64) []float64 {
	mean, scale := standardise(y)
	z := make([]float64, len(y))
	for i := range y {
		z[i] = (y[i] - mean) / scale
	}
	return z
}

// A warm-only refit after one more run starts from the previous fit
// alone: it needs no random source (a full fit with random starts panics
// without one), and it reaches a likelihood within 1 of a full fit's on
// the same data, since the previous fit is close to the new optimum.
func TestWarmOnlyRefit(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	x, y := randomData(rng, 41, 3, wave, 0.01)
	prev, err := Fit(x[:40], y[:40], FitOptions{Kernel: Matern32, Starts: 2, Rand: rng})
	if err != nil {
		t.Fatal(err)
	}
	warm := prev.Params()
	quick, err := Fit(x, y, FitOptions{Kernel: Matern32, Starts: 2, Warm: &warm, WarmOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	full, err := Fit(x, y, FitOptions{Kernel: Matern32, Starts: 2, Warm: &warm, Rand: rng})
	if err != nil {
		t.Fatal(err)
	}
	if quick.LogMarginalLikelihood() < full.LogMarginalLikelihood()-1 {
		t.Errorf("warm-only refit LML %.3f, full fit %.3f", quick.LogMarginalLikelihood(), full.LogMarginalLikelihood())
	}
}

// The fit's kernel row (exponentials four at a time) against the kernels'
// own k(r) and g(r), point by point.
func TestCorrSlopeRowMatchesKernel(t *testing.T) {
	var r2 []float64
	for i := 0; i < 203; i++ {
		r := float64(i) * 0.05
		r2 = append(r2, r*r)
	}
	r2 = append(r2, 1e6, 1e8) // far apart: the correlation underflows to 0
	for _, k := range []Kernel{Matern52, Matern32, SquaredExponential} {
		kc, gc, arg := make([]float64, len(r2)), make([]float64, len(r2)), make([]float64, len(r2))
		k.corrSlopeRow(r2, kc, gc, arg)
		for i, v := range r2 {
			r := math.Sqrt(v)
			if want := k.corr(r); math.Abs(kc[i]-want) > 1e-14*math.Max(want, 1e-300) {
				t.Errorf("%v: k(%v) = %v, want %v", k, r, kc[i], want)
			}
			if want := k.slope(r); math.Abs(gc[i]-want) > 1e-14*math.Max(want, 1e-300) {
				t.Errorf("%v: g(%v) = %v, want %v", k, r, gc[i], want)
			}
		}
	}
}

// With the mean profiled out (the fit's default), the optimiser's gradient
// over the reduced vector matches finite differences of the profile: at
// the best mean for the rest of θ, the log posterior's derivative in the
// mean is zero, so its gradient in the others is the profile's. A mean
// that is not the best for θ (here, off by a hundredth) breaks this and
// the test fails.
func TestProfiledMeanGradient(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	for _, c := range []struct {
		kern Kernel
		d    int
		iso  bool
	}{{Matern52, 1, false}, {Matern52, 3, false}, {Matern32, 6, false}, {Matern32, 3, true}} {
		x, y := randomData(rng, 25, c.d, wave, 0.05)
		z := zScores(y)
		for i := range z {
			z[i] += 0.7 // a mean away from 0, where the prior pulls
		}
		o := newObjective(x, z, c.kern, 1e-6)
		o.iso, o.profile = c.iso, true
		for trial := 0; trial < 3; trial++ {
			th := make([]float64, c.d+3)
			for k := range th {
				th[k] = -1.5 + rng.Float64()
			}
			if r, _, _ := o.reduce(th); !c.iso && len(r) != len(th)-1 {
				t.Fatalf("reduced vector has %d values, want %d (no mean)", len(r), len(th)-1)
			}
			checkReducedGradient(t, o, th, fmt.Sprintf("%v d=%d iso=%v", c.kern, c.d, c.iso))
		}
	}
}

// The profiled mean is the best mean for the rest of θ: the joint
// objective (mean searched for) at that mean is no higher than a hundredth
// either side of it.
func TestProfiledMeanIsBest(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 10))
	x, y := randomData(rng, 30, 2, wave, 0.05)
	z := zScores(y)
	for i := range z {
		z[i] -= 1.3
	}
	prof := newObjective(x, z, Matern52, 1e-6)
	prof.profile = true
	joint := newObjective(x, z, Matern52, 1e-6)
	for trial := 0; trial < 5; trial++ {
		th := make([]float64, 5)
		for k := range th {
			th[k] = -1.5 + rng.Float64()
		}
		fp := prof.value(th)
		m := prof.mean
		at := func(mean float64) float64 {
			tt := slices.Clone(th)
			tt[4] = mean
			return joint.value(tt)
		}
		if f := at(m); math.Abs(f-fp) > 1e-9*math.Max(1, math.Abs(f)) {
			t.Errorf("profile %.12g, joint objective at its mean %.12g", fp, f)
		}
		if lo, hi := at(m-0.01), at(m+0.01); lo < fp || hi < fp {
			t.Errorf("mean %.4f is not the best: %.10g there, %.10g and %.10g a hundredth either side", m, fp, lo, hi)
		}
	}
}

// checkReducedGradient checks the optimiser's gradient over o's reduced
// vector at θ = th (eval's, folded) against central finite differences of
// the objective (step 1e-6, tolerance 1e-4 relative to the gradient's
// size).
func checkReducedGradient(t *testing.T, o *objective, th []float64, label string) {
	t.Helper()
	r, expand, fold := o.reduce(th)
	full, g := make([]float64, len(th)), make([]float64, len(r))
	o.eval(expand(r), full)
	fold(g, full)
	const h = 1e-6
	for k := range r {
		rp, rm := slices.Clone(r), slices.Clone(r)
		rp[k] += h
		rm[k] -= h
		fd := (o.eval(expand(rp), nil) - o.eval(expand(rm), nil)) / (2 * h)
		if math.Abs(fd-g[k]) > 1e-4*math.Max(1, math.Abs(fd)) {
			t.Errorf("%s r[%d]: analytic %.8g, finite difference %.8g", label, k, g[k], fd)
		}
	}
}
