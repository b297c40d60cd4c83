package gp

import "math"

// LOO holds the leave-one-out predictions of every run: what the model,
// fitted to the other runs with the same hyperparameters, predicts for it.
type LOO struct {
	// Mean and SD are the leave-one-out predictive mean and standard
	// deviation of each observation (noise included), in the response's
	// units.
	Mean, SD []float64
	// Residual is observed minus predicted; Standardised is Residual/SD,
	// which should look like draws from N(0, 1) when the model fits.
	Residual, Standardised []float64
}

// LeaveOneOut computes the closed-form leave-one-out predictions
// (Rasmussen and Williams 2006, section 5.4.2, eqs. 5.10-5.12):
//
//	μ_−i = y_i − [K⁻¹y]_i / [K⁻¹]_ii,   σ²_−i = 1 / [K⁻¹]_ii
func (m *Model) LeaveOneOut() LOO {
	n := len(m.x)
	kinv := make([]float64, n*n)
	if !m.c.inverseTo(kinv, nil) {
		nan := make([]float64, n)
		for i := range nan {
			nan[i] = math.NaN()
		}
		return LOO{Mean: nan, SD: nan, Residual: nan, Standardised: nan}
	}
	out := LOO{Mean: make([]float64, n), SD: make([]float64, n), Residual: make([]float64, n), Standardised: make([]float64, n)}
	for i := 0; i < n; i++ {
		d := kinv[i*n+i]
		r := m.alpha[i] / d
		sd := math.Sqrt(1 / d)
		y := m.yMean + m.yScale*m.z[i]
		out.Residual[i] = r * m.yScale
		out.Mean[i] = y - out.Residual[i]
		out.SD[i] = sd * m.yScale
		out.Standardised[i] = r / sd
	}
	return out
}

// LogDensity returns the leave-one-out log predictive density of the
// runs, Σ_i log N(y_i; μ_−i, σ²_−i) (Rasmussen and Williams 2006, eq.
// 5.11), in the response's units: how well the model predicts each run
// from the others. It is NaN when the model could not be inverted.
func (l LOO) LogDensity() float64 {
	s := 0.0
	for i, sd := range l.SD {
		z := l.Standardised[i]
		s += -0.5*z*z - math.Log(sd) - 0.5*math.Log(2*math.Pi)
	}
	return s
}
