package gp

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/optimize"
)

// FitOptions control hyperparameter fitting.
type FitOptions struct {
	// Starts is the number of random starts on top of the default start and
	// the warm start (default 2).
	Starts int
	// Warm, when not nil, is tried first: usually the previous fit.
	Warm *Params
	// NoiseFloor is the smallest noise variance (standardised units)
	// allowed; default 1e-6.
	NoiseFloor float64
	// Rand is the source of the random starts; required when Starts > 0.
	Rand *rand.Rand
}

// Weak priors on the log hyperparameters, in unit-box inputs and
// standardised response. They only keep a fit on very few runs from
// collapsing (length-scales to zero, all variation called noise); with a
// few dozen runs the likelihood dominates. Chosen by us, not from a source.
const (
	priorLogLenMean   = -0.6931471805599453 // ln 0.5
	priorLogLenSD     = 1.5
	priorLogSigMean   = 0.0
	priorLogSigSD     = 2.0
	priorLogNoiseMean = -4.605170185988091 // ln 0.01
	priorLogNoiseSD   = 3.0
)

// Fit maximises the log marginal likelihood plus the weak log priors over
// the hyperparameters, with L-BFGS from several starts, and returns the
// model conditioned with the best parameters found.
func Fit(x [][]float64, y []float64, opt FitOptions) (*Model, error) {
	d, err := checkData(x, y)
	if err != nil {
		return nil, err
	}
	if opt.NoiseFloor <= 0 {
		opt.NoiseFloor = 1e-6
	}
	if opt.Starts == 0 {
		opt.Starts = 2
	}
	mean, scale := standardise(y)
	z := make([]float64, len(y))
	for i, v := range y {
		z[i] = (v - mean) / scale
	}
	obj := newObjective(x, z, opt.NoiseFloor)

	var starts [][]float64
	if opt.Warm != nil && opt.Warm.valid(d) == nil {
		starts = append(starts, obj.theta(*opt.Warm))
	}
	starts = append(starts, obj.theta(defaultParams(d)))
	for i := 0; i < opt.Starts; i++ {
		if opt.Rand == nil {
			panic("gp: FitOptions.Rand is nil but Starts > 0")
		}
		t := make([]float64, d+2)
		for k := 0; k < d; k++ {
			t[k] = math.Log(0.05 + 0.95*opt.Rand.Float64())
		}
		t[d] = math.Log(0.5 + 1.5*opt.Rand.Float64())
		t[d+1] = math.Log(1e-4 + 0.1*opt.Rand.Float64())
		starts = append(starts, t)
	}

	best, bestF := []float64(nil), math.Inf(1)
	var lastErr error
	for _, t0 := range starts {
		theta, f, err := obj.minimise(t0)
		if err != nil {
			lastErr = err
			continue
		}
		if f < bestF {
			best, bestF = theta, f
		}
	}
	if best == nil {
		return nil, fmt.Errorf("gp: fit failed from every start: %w", lastErr)
	}
	return New(x, y, obj.params(best))
}

func defaultParams(d int) Params {
	ls := make([]float64, d)
	for i := range ls {
		ls[i] = 0.3
	}
	return Params{LengthScales: ls, SignalVar: 1, NoiseVar: 1e-2}
}

// objective is the negative log posterior over θ = (ln l_1..ln l_d, ln s²,
// ln(σ² − floor)).
type objective struct {
	n, d  int
	z     []float64
	floor float64
	sq    [][]float64 // sq[k][i*n+j] = (x_ik − x_jk)², j ≤ i
	k     *mat.SymDense
	kinv  *mat.SymDense
	chol  mat.Cholesky
	alpha *mat.VecDense
	zv    *mat.VecDense
}

func newObjective(x [][]float64, z []float64, floor float64) *objective {
	n, d := len(x), len(x[0])
	o := &objective{n: n, d: d, z: z, floor: floor,
		k: mat.NewSymDense(n, nil), kinv: mat.NewSymDense(n, nil),
		alpha: mat.NewVecDense(n, nil), zv: mat.NewVecDense(n, z)}
	o.sq = make([][]float64, d)
	for k := 0; k < d; k++ {
		o.sq[k] = make([]float64, n*n)
		for i := 0; i < n; i++ {
			for j := 0; j <= i; j++ {
				dx := x[i][k] - x[j][k]
				o.sq[k][i*n+j] = dx * dx
			}
		}
	}
	return o
}

func (o *objective) theta(p Params) []float64 {
	t := make([]float64, o.d+2)
	for k, l := range p.LengthScales {
		t[k] = math.Log(l)
	}
	t[o.d] = math.Log(p.SignalVar)
	t[o.d+1] = math.Log(math.Max(p.NoiseVar-o.floor, 1e-12))
	return t
}

func (o *objective) params(t []float64) Params {
	ls := make([]float64, o.d)
	for k := range ls {
		ls[k] = math.Exp(t[k])
	}
	return Params{LengthScales: ls, SignalVar: math.Exp(t[o.d]), NoiseVar: o.floor + math.Exp(t[o.d+1])}
}

// thetaBound keeps the search where the kernel is numerically sane:
// length-scales between e^-7 and e^4 of the unit box, variances within
// e^±12. Outside, the objective is +Inf.
const thetaBound = 12.0

func (o *objective) inRange(t []float64) bool {
	for k, v := range t {
		lo, hi := -thetaBound, thetaBound
		if k < o.d {
			lo, hi = -7, 4
		}
		if math.IsNaN(v) || v < lo || v > hi {
			return false
		}
	}
	return true
}

// eval returns the negative log posterior at t and, when grad is not nil,
// writes its gradient (Rasmussen and Williams 2006, eq. 5.9:
// ∂L/∂θ = ½ tr((ααᵀ − K⁻¹) ∂K/∂θ)).
func (o *objective) eval(t, grad []float64) float64 {
	if !o.inRange(t) {
		for i := range grad {
			grad[i] = 0
		}
		return math.Inf(1)
	}
	n, d := o.n, o.d
	inv2 := make([]float64, d)
	for k := 0; k < d; k++ {
		inv2[k] = math.Exp(-2 * t[k])
	}
	s2 := math.Exp(t[d])
	noise := o.floor + math.Exp(t[d+1])
	kraw := o.k.RawSymmetric().Data
	for i := 0; i < n; i++ {
		for j := 0; j <= i; j++ {
			var r2 float64
			for k := 0; k < d; k++ {
				r2 += o.sq[k][i*n+j] * inv2[k]
			}
			kraw[j*n+i] = s2 * matern52(math.Sqrt(r2)) // upper triangle
		}
	}
	if _, err := factorWithJitter(&o.chol, o.k, noise, s2); err != nil {
		for i := range grad {
			grad[i] = 0
		}
		return math.Inf(1)
	}
	if err := o.chol.SolveVecTo(o.alpha, o.zv); err != nil {
		return math.Inf(1)
	}
	var logDet float64
	for i := 0; i < n; i++ {
		logDet += math.Log(o.chol.RawU().At(i, i))
	}
	lml := -0.5*mat.Dot(o.zv, o.alpha) - logDet - 0.5*float64(n)*math.Log(2*math.Pi)
	lp := logNormal(t[d], priorLogSigMean, priorLogSigSD) + logNormal(t[d+1], priorLogNoiseMean, priorLogNoiseSD)
	for k := 0; k < d; k++ {
		lp += logNormal(t[k], priorLogLenMean, priorLogLenSD)
	}
	f := -(lml + lp)
	if grad == nil {
		return f
	}
	if err := o.chol.InverseTo(o.kinv); err != nil {
		return math.Inf(1)
	}
	a := o.alpha.RawVector().Data
	ki := o.kinv.RawSymmetric().Data
	for i := range grad {
		grad[i] = 0
	}
	var gs, gn float64
	for i := 0; i < n; i++ {
		for j := 0; j <= i; j++ {
			w := a[i]*a[j] - ki[j*n+i]
			if i != j {
				w *= 2 // the sum over the full matrix counts (i,j) and (j,i)
			} else {
				gn += w
			}
			var r2 float64
			for k := 0; k < d; k++ {
				r2 += o.sq[k][i*n+j] * inv2[k]
			}
			r := math.Sqrt(r2)
			gs += w * s2 * matern52(r)
			c := w * s2 * matern52dr2(r)
			for k := 0; k < d; k++ {
				grad[k] += c * o.sq[k][i*n+j] * inv2[k]
			}
		}
	}
	for k := 0; k < d; k++ {
		grad[k] = -(0.5*grad[k] + dLogNormal(t[k], priorLogLenMean, priorLogLenSD))
	}
	grad[d] = -(0.5*gs + dLogNormal(t[d], priorLogSigMean, priorLogSigSD))
	grad[d+1] = -(0.5*gn*math.Exp(t[d+1]) + dLogNormal(t[d+1], priorLogNoiseMean, priorLogNoiseSD))
	return f
}

func (o *objective) minimise(t0 []float64) ([]float64, float64, error) {
	f0 := o.eval(t0, nil)
	if math.IsInf(f0, 1) || math.IsNaN(f0) {
		return nil, 0, errors.New("gp: start point not usable")
	}
	p := optimize.Problem{
		Func: func(t []float64) float64 { return o.eval(t, nil) },
		Grad: func(g, t []float64) { o.eval(t, g) },
	}
	res, err := optimize.Minimize(p, t0, &optimize.Settings{
		MajorIterations:   200,
		GradientThreshold: 1e-5,
		Converger:         &optimize.FunctionConverge{Absolute: 1e-7, Relative: 1e-9, Iterations: 20},
	}, &optimize.LBFGS{})
	if res == nil {
		return nil, 0, fmt.Errorf("gp: L-BFGS: %w", err)
	}
	// A line-search failure still leaves the best point so far, which
	// is as good as its value says.
	if math.IsInf(res.F, 0) || math.IsNaN(res.F) {
		return nil, 0, fmt.Errorf("gp: L-BFGS ended at a non-finite value: %v", err)
	}
	if res.F > f0 {
		return t0, f0, nil
	}
	return res.X, res.F, nil
}

func logNormal(x, mu, sd float64) float64 {
	z := (x - mu) / sd
	return -0.5*z*z - math.Log(sd) - 0.5*math.Log(2*math.Pi)
}

func dLogNormal(x, mu, sd float64) float64 { return -(x - mu) / (sd * sd) }
