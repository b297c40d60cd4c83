package gp

import (
	"errors"
	"fmt"
	"math"

	"benchtender/planner/gp/internal/spdla"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/mat"
)

// ErrNotPositiveDefinite means the covariance matrix could not be
// factorised even with the largest jitter tried.
var ErrNotPositiveDefinite = errors.New("gp: covariance matrix not positive definite")

// Params are the kernel hyperparameters, with inputs in the unit box and
// the response standardised (zero mean, unit variance).
type Params struct {
	Kernel Kernel
	// LengthScales holds one length-scale per input.
	LengthScales []float64
	// SignalVar is the kernel's variance.
	SignalVar float64
	// NoiseVar is the variance of the Gaussian measurement noise.
	NoiseVar float64
	// Mean is the constant prior mean of the standardised response.
	Mean float64
	// Additive is the share w of the signal variance in first-order
	// additive terms (additive.go): the correlation is
	// (1 − w)·k(r) + w·(1/d)Σ_k k(r_k). 0 is the plain kernel.
	Additive float64
}

// Clone returns a deep copy.
func (p Params) Clone() Params {
	p.LengthScales = append([]float64(nil), p.LengthScales...)
	return p
}

func (p Params) valid(d int) error {
	if _, ok := kernelNames[p.Kernel]; !ok {
		return fmt.Errorf("gp: unknown kernel %d", int(p.Kernel))
	}
	if len(p.LengthScales) != d {
		return fmt.Errorf("gp: %d length-scales for %d inputs", len(p.LengthScales), d)
	}
	for _, l := range p.LengthScales {
		if !(l > 0) || math.IsInf(l, 0) {
			return fmt.Errorf("gp: length-scale %v is not a positive number", l)
		}
	}
	if !(p.SignalVar > 0) || math.IsInf(p.SignalVar, 0) {
		return fmt.Errorf("gp: signal variance %v is not a positive number", p.SignalVar)
	}
	if !(p.NoiseVar >= 0) || math.IsInf(p.NoiseVar, 0) {
		return fmt.Errorf("gp: noise variance %v is not a non-negative number", p.NoiseVar)
	}
	if math.IsNaN(p.Mean) || math.IsInf(p.Mean, 0) {
		return fmt.Errorf("gp: mean %v is not finite", p.Mean)
	}
	if !(p.Additive >= 0 && p.Additive < 1) {
		return fmt.Errorf("gp: additive share %v is not in [0, 1)", p.Additive)
	}
	return nil
}

// Model is a Gaussian process conditioned on data.
type Model struct {
	x      [][]float64
	yMean  float64
	yScale float64
	z      []float64 // standardised responses
	p      Params
	invLen []float64
	c      spd       // Cholesky factor of K + σ²I
	alpha  []float64 // (K + σ²I)⁻¹ (z − m)
	jitter float64
	lml    float64
	add    *expTable // the additive terms' exponentials at the runs (additive.go)
}

// New conditions a Gaussian process with fixed parameters on inputs x (in
// the unit box, one row per run) and responses y. It panics when x and y
// differ in length or rows differ in width, and returns an error for data
// it cannot use: no rows, non-finite values, or a matrix that cannot be
// factorised.
func New(x [][]float64, y []float64, p Params) (*Model, error) {
	d, err := checkData(x, y)
	if err != nil {
		return nil, err
	}
	if err := p.valid(d); err != nil {
		return nil, err
	}
	m := &Model{x: x, p: p.Clone()}
	m.yMean, m.yScale = standardise(y)
	m.z = make([]float64, len(y))
	for i, v := range y {
		m.z[i] = (v - m.yMean) / m.yScale
	}
	if err := m.factor(); err != nil {
		return nil, err
	}
	return m, nil
}

// checkData returns the number of inputs. It panics when x and y differ in
// length or rows differ in width (programmer errors) and returns an error
// for data that cannot be used: no rows or non-finite values.
func checkData(x [][]float64, y []float64) (int, error) {
	if len(x) != len(y) {
		panic(fmt.Sprintf("gp: %d inputs for %d responses", len(x), len(y)))
	}
	if len(x) == 0 {
		return 0, errors.New("gp: no data")
	}
	d := len(x[0])
	for i, row := range x {
		if len(row) != d {
			panic(fmt.Sprintf("gp: row %d has %d values, row 0 has %d", i, len(row), d))
		}
		for _, v := range row {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return 0, fmt.Errorf("gp: input row %d is not finite: %v", i, row)
			}
		}
		if math.IsNaN(y[i]) || math.IsInf(y[i], 0) {
			return 0, fmt.Errorf("gp: response %d is not finite: %v", i, y[i])
		}
	}
	return d, nil
}

// standardise returns the mean and the standard deviation (divisor n) of
// y; the scale is 1 when y is constant, so a single run or identical
// results still work.
func standardise(y []float64) (mean, scale float64) {
	for _, v := range y {
		mean += v
	}
	mean /= float64(len(y))
	var ss float64
	for _, v := range y {
		ss += (v - mean) * (v - mean)
	}
	scale = math.Sqrt(ss / float64(len(y)))
	if !(scale > 1e-12*math.Max(1, math.Abs(mean))) {
		scale = 1
	}
	return mean, scale
}

// factor builds and factorises K + σ²I, adding jitter when needed
// (Rasmussen and Williams 2006, Algorithm 2.1, lines 2-3 and 8).
func (m *Model) factor() error {
	n := len(m.x)
	m.invLen = make([]float64, len(m.p.LengthScales))
	for k, l := range m.p.LengthScales {
		m.invLen[k] = 1 / l
	}
	m.prepareAdditive()
	a := make([]float64, n*n)
	for i := 0; i < n; i++ {
		for j := i; j < n; j++ {
			a[i*n+j] = m.p.SignalVar * m.corr(m.x[i], m.x[j])
		}
	}
	jitter, err := m.c.factor(a, n, m.p.NoiseVar, m.p.SignalVar, nil)
	if err != nil {
		return err
	}
	m.jitter = jitter
	return m.solve()
}

func dot(a, b []float64) float64 {
	var s float64
	for i, v := range a {
		s += v * b[i]
	}
	return s
}

// Params returns the model's hyperparameters.
func (m *Model) Params() Params { return m.p.Clone() }

// Len is the number of data points.
func (m *Model) Len() int { return len(m.x) }

// Dim is the number of inputs.
func (m *Model) Dim() int { return len(m.p.LengthScales) }

// Jitter is the diagonal jitter that factorisation needed (usually 0).
func (m *Model) Jitter() float64 { return m.jitter }

// LogMarginalLikelihood is log p(z | X, θ) of the standardised responses
// (Rasmussen and Williams 2006, Algorithm 2.1, line 8).
func (m *Model) LogMarginalLikelihood() float64 { return m.lml }

// Standardisation returns the mean and scale used: z = (y − mean)/scale.
func (m *Model) Standardisation() (mean, scale float64) { return m.yMean, m.yScale }

// Predict returns the posterior mean and variance of the latent function
// at x, in the response's units (Rasmussen and Williams 2006, Algorithm
// 2.1, lines 4-6). The variance excludes measurement noise.
func (m *Model) Predict(x []float64) (mean, variance float64) {
	if len(x) != m.Dim() {
		panic(fmt.Sprintf("gp: predict at %d values, model has %d inputs", len(x), m.Dim()))
	}
	ks := make([]float64, len(m.x))
	m.crossCov(ks, x)
	mu := dot(ks, m.alpha)
	// v = U⁻ᵀ k*, so k*ᵀ K⁻¹ k* = vᵀv.
	m.c.halfSolve(ks)
	vv := m.p.SignalVar - dot(ks, ks)
	if vv < 0 {
		vv = 0
	}
	return m.yMean + m.yScale*(m.p.Mean+mu), vv * m.yScale * m.yScale
}

// Mean returns the posterior mean of the latent function at x, in the
// response's units: Predict's mean without its variance, O(N) instead of
// O(N²).
func (m *Model) Mean(x []float64) float64 {
	if len(x) != m.Dim() {
		panic(fmt.Sprintf("gp: predict at %d values, model has %d inputs", len(x), m.Dim()))
	}
	ks := make([]float64, len(m.x))
	m.crossCov(ks, x)
	return m.yMean + m.yScale*(m.p.Mean+dot(ks, m.alpha))
}

// predictBlock is the number of points PredictMany solves for at once.
const predictBlock = 64

// PredictMany writes Predict's mean and variance at each of xs into mean
// and variance (each len(xs)). Points go through the triangular solve in
// blocks, so the Cholesky factor is read once per block instead of once
// per point: the same arithmetic as Predict, in a fraction of the time
// when the factor is larger than the processor's cache.
func (m *Model) PredictMany(xs [][]float64, mean, variance []float64) {
	if len(mean) != len(xs) || len(variance) != len(xs) {
		panic(fmt.Sprintf("gp: predict many: %d points, %d means, %d variances", len(xs), len(mean), len(variance)))
	}
	n := len(m.x)
	s2 := m.yScale * m.yScale
	q := min(predictBlock, len(xs))
	buf, tr := make([]float64, n*q), make([]float64, n*q)
	var w spdla.Work
	cols := make([][]float64, q)
	for j := range cols {
		cols[j] = buf[j*n : j*n+n]
	}
	for lo := 0; lo < len(xs); lo += predictBlock {
		block := xs[lo:min(lo+predictBlock, len(xs))]
		vs := cols[:len(block)]
		for j, x := range block {
			if len(x) != m.Dim() {
				panic(fmt.Sprintf("gp: predict at %d values, model has %d inputs", len(x), m.Dim()))
			}
			m.crossCov(vs[j], x)
			mean[lo+j] = m.yMean + m.yScale*(m.p.Mean+dot(vs[j], m.alpha))
		}
		// V = U⁻ᵀ K*, column by column k*ᵀ K⁻¹ k* = ‖v‖².
		m.c.halfSolveMany(vs, tr, &w)
		for j, v := range vs {
			var ss float64
			for _, c := range v {
				ss += c * c
			}
			variance[lo+j] = math.Max(0, m.p.SignalVar-ss) * s2
		}
	}
}

// crossCov fills dst with k(x_i, x) for every data point: s²·corr of
// the scaled distance, as Kernel.corr and scaledDist compute it but with
// vexp's exponential (within a few units in the last place of
// math.Exp's), in two passes: the squared distances, then the kernel
// (Kernel.corrRow, as the fit builds its matrix).
func (m *Model) crossCov(dst []float64, x []float64) {
	inv := m.invLen[:len(x)]
	// Four runs at a time: four independent sums keep the processor busy
	// (each run's sum is the same as one at a time, term by term).
	i := 0
	for ; i+4 <= len(m.x); i += 4 {
		x0, x1, x2, x3 := m.x[i][:len(x)], m.x[i+1][:len(x)], m.x[i+2][:len(x)], m.x[i+3][:len(x)]
		var r0, r1, r2, r3 float64
		for k, v := range x {
			f := inv[k]
			d0, d1, d2, d3 := (x0[k]-v)*f, (x1[k]-v)*f, (x2[k]-v)*f, (x3[k]-v)*f
			r0 += d0 * d0
			r1 += d1 * d1
			r2 += d2 * d2
			r3 += d3 * d3
		}
		dst[i], dst[i+1], dst[i+2], dst[i+3] = r0, r1, r2, r3
	}
	for ; i < len(m.x); i++ {
		xi := m.x[i][:len(x)]
		var r2 float64
		for k, v := range x {
			d := (xi[k] - v) * inv[k]
			r2 += d * d
		}
		dst[i] = r2
	}
	// Then the kernel, a chunk at a time (corrRow's scratch on the stack),
	// with the additive terms (additive.go) mixed in the same way.
	s2, w := m.p.SignalVar, m.p.Additive
	share := w / float64(len(x))
	var arg, one, sum [64]float64 // scratch for the kernel, an input's terms, their sum
	for lo := 0; lo < len(dst); lo += len(arg) {
		ch := dst[lo:min(lo+len(arg), len(dst))]
		m.p.Kernel.corrRow(ch, ch, arg[:])
		if w > 0 {
			m.additiveRow(sum[:len(ch)], one[:len(ch)], arg[:], lo, x)
			for j := range ch {
				ch[j] = (1-w)*ch[j] + share*sum[j]
			}
		}
		for i, v := range ch {
			ch[i] = s2 * v
		}
	}
}

// PredictJoint returns the posterior mean vector and covariance matrix of
// the latent function at the points xs, in the response's units:
// Cov = K** − K*ᵀ K⁻¹ K* (Rasmussen and Williams 2006, eq. 2.24).
func (m *Model) PredictJoint(xs [][]float64) ([]float64, *mat.SymDense) {
	n, q := len(m.x), len(xs)
	// Row j of w is v_j = U⁻ᵀ k*_j, so K*ᵀ K⁻¹ K* = w wᵀ.
	w := blas64.General{Rows: q, Cols: n, Stride: n, Data: make([]float64, q*n)}
	rows := make([][]float64, q)
	mean := make([]float64, q)
	for j, x := range xs {
		if len(x) != m.Dim() {
			panic(fmt.Sprintf("gp: predict at %d values, model has %d inputs", len(x), m.Dim()))
		}
		rows[j] = w.Data[j*n : j*n+n]
		m.crossCov(rows[j], x)
		mean[j] = m.yMean + m.yScale*(m.p.Mean+dot(rows[j], m.alpha))
	}
	m.c.halfSolveMany(rows, make([]float64, n*q), new(spdla.Work))
	vtv := blas64.Symmetric{Uplo: blas.Upper, N: q, Stride: q, Data: make([]float64, q*q)}
	blas64.Syrk(blas.NoTrans, 1, w, 0, vtv)
	cov := mat.NewSymDense(q, nil)
	s2 := m.yScale * m.yScale
	for i := 0; i < q; i++ {
		for j := i; j < q; j++ {
			c := m.p.SignalVar*m.corr(xs[i], xs[j]) - vtv.Data[i*q+j]
			cov.SetSym(i, j, c*s2)
		}
	}
	return mean, cov
}

// Covariance returns the posterior covariance of the latent function
// between a and b, in the response's units squared.
func (m *Model) Covariance(a, b []float64) float64 {
	_, cov := m.PredictJoint([][]float64{a, b})
	return cov.At(0, 1)
}

// LogPosterior is the objective Fit maximises, evaluated at the model's
// hyperparameters: the log marginal likelihood plus the weak log priors
// (fit.go), with a prior on every length-scale, the noise measured above
// Fit's default floor, and the additive share's prior when it is not 0.
// It lets two sets of hyperparameters (ours, or another library's) be
// compared on the same objective.
func (m *Model) LogPosterior() float64 {
	lp := m.lml + logNormal(math.Log(m.p.SignalVar), priorLogSigMean, priorLogSigSD) + logNormal(m.p.Mean, 0, priorMeanSD) +
		logNormal(math.Log(math.Max(m.p.NoiseVar-1e-6, 1e-12)), priorLogNoiseMean, priorLogNoiseSD)
	for _, l := range m.p.LengthScales {
		lp += logNormal(math.Log(l), priorLogLenMean, priorLogLenSD)
	}
	if w := m.p.Additive; w > 0 {
		lp += logNormal(math.Log(w/(1-w)), priorLogitAddMean, priorLogitAddSD)
	}
	return lp
}

// MeanBound writes the posterior mean at each of xs into mean, as Predict
// gives it, and into sdUpper an upper bound on the posterior standard
// deviation there, both in the response's units, at O(N) a point instead
// of Predict's O(N²). The bound is the standard deviation given the one
// run most correlated with the point: conditioning on more data never
// raises the variance, since for the positive definite A = K + σ²I and
// any run i, k*ᵀA⁻¹k* ≥ k_i²/A_ii (Cauchy-Schwarz), so
//
//	σ²(x) = s² − k*ᵀA⁻¹k* ≤ s² − max_i k_i² / A_ii.
//
// It lets a search skip the exact variance where even the bound cannot
// make a point competitive.
func (m *Model) MeanBound(xs [][]float64, mean, sdUpper []float64) {
	if len(mean) != len(xs) || len(sdUpper) != len(xs) {
		panic(fmt.Sprintf("gp: mean bound: %d points, %d means, %d bounds", len(xs), len(mean), len(sdUpper)))
	}
	s2 := m.p.SignalVar
	diag := s2 + m.p.NoiseVar + m.jitter
	ks := make([]float64, len(m.x))
	for j, x := range xs {
		if len(x) != m.Dim() {
			panic(fmt.Sprintf("gp: predict at %d values, model has %d inputs", len(x), m.Dim()))
		}
		m.crossCov(ks, x)
		var kmax float64
		for _, c := range ks {
			if c > kmax { // c is never NaN: the inputs are finite
				kmax = c
			}
		}
		mean[j] = m.yMean + m.yScale*(m.p.Mean+dot(ks, m.alpha))
		// A relative margin covers rounding in the exact variance.
		v := math.Max(0, s2-kmax*kmax/diag)*(1+1e-9) + 1e-15*s2
		sdUpper[j] = math.Sqrt(v) * m.yScale
	}
}
