package gp

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// ErrNotPositiveDefinite means the covariance matrix could not be
// factorised even with the largest jitter tried.
var ErrNotPositiveDefinite = errors.New("gp: covariance matrix not positive definite")

// Params are the kernel hyperparameters, with inputs in the unit box and
// the response standardised (zero mean, unit variance).
type Params struct {
	// LengthScales holds one length-scale per input.
	LengthScales []float64
	// SignalVar is the kernel's variance.
	SignalVar float64
	// NoiseVar is the variance of the Gaussian measurement noise.
	NoiseVar float64
}

// Clone returns a deep copy.
func (p Params) Clone() Params {
	p.LengthScales = append([]float64(nil), p.LengthScales...)
	return p
}

func (p Params) valid(d int) error {
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
	chol   mat.Cholesky
	u      mat.TriDense // the Cholesky factor U, K = UᵀU
	alpha  *mat.VecDense
	jitter float64
	lml    float64
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

// standardise returns the mean and the standard deviation of y (1 when y
// is constant, so a single run or identical results still work).
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

// factor builds and factorises K + σ²I, adding jitter when needed.
func (m *Model) factor() error {
	n := len(m.x)
	m.invLen = make([]float64, len(m.p.LengthScales))
	for k, l := range m.p.LengthScales {
		m.invLen[k] = 1 / l
	}
	k := mat.NewSymDense(n, nil)
	for i := 0; i < n; i++ {
		for j := 0; j <= i; j++ {
			k.SetSym(i, j, m.p.SignalVar*matern52(scaledDist(m.x[i], m.x[j], m.invLen)))
		}
	}
	jitter, err := factorWithJitter(&m.chol, k, m.p.NoiseVar, m.p.SignalVar)
	if err != nil {
		return err
	}
	m.jitter = jitter
	m.chol.UTo(&m.u)
	m.alpha = mat.NewVecDense(n, nil)
	if err := m.chol.SolveVecTo(m.alpha, mat.NewVecDense(n, m.z)); err != nil {
		return fmt.Errorf("gp: solve: %w", err)
	}
	var logDet float64
	for i := 0; i < n; i++ {
		logDet += math.Log(m.u.At(i, i))
	}
	m.lml = -0.5*mat.Dot(mat.NewVecDense(n, m.z), m.alpha) - logDet - 0.5*float64(n)*math.Log(2*math.Pi)
	if math.IsNaN(m.lml) || math.IsInf(m.lml, 0) {
		return fmt.Errorf("gp: log marginal likelihood is %v", m.lml)
	}
	return nil
}

// factorWithJitter factorises k with noise added to the diagonal; when that
// fails it adds jitter of 1e-10 up to 1e-4 times the signal variance, ten
// times more each try. k's diagonal is left with the noise and jitter
// added. It returns the jitter used.
func factorWithJitter(c *mat.Cholesky, k *mat.SymDense, noise, signal float64) (float64, error) {
	n := k.SymmetricDim()
	base := make([]float64, n)
	for i := range base {
		base[i] = k.At(i, i)
	}
	jitter := 0.0
	for {
		for i := 0; i < n; i++ {
			k.SetSym(i, i, base[i]+noise+jitter)
		}
		if c.Factorize(k) {
			return jitter, nil
		}
		switch {
		case jitter == 0:
			jitter = 1e-10 * signal
		case jitter < 1e-4*signal:
			jitter *= 10
		default:
			return jitter, fmt.Errorf("%w (n=%d, jitter up to %.1e)", ErrNotPositiveDefinite, n, jitter)
		}
	}
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
	n := len(m.x)
	ks := mat.NewVecDense(n, nil)
	m.crossCov(ks.RawVector().Data, x)
	mu := mat.Dot(ks, m.alpha)
	v := mat.NewVecDense(n, nil)
	// v = L⁻¹ k*, so k*ᵀ K⁻¹ k* = vᵀv.
	if err := v.SolveVec(m.u.T(), ks); err != nil {
		return math.NaN(), math.NaN()
	}
	vv := m.p.SignalVar - mat.Dot(v, v)
	if vv < 0 {
		vv = 0
	}
	return m.yMean + m.yScale*mu, vv * m.yScale * m.yScale
}

// crossCov fills dst with k(x_i, x) for every data point.
func (m *Model) crossCov(dst []float64, x []float64) {
	for i, xi := range m.x {
		dst[i] = m.p.SignalVar * matern52(scaledDist(xi, x, m.invLen))
	}
}
