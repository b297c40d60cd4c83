package gp

import (
	"fmt"
	"math/rand/v2"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/mat"
)

// Sample draws count joint samples of the latent function at the points xs
// from the posterior, with the random source rng, and returns them as rows
// of a count × len(xs) matrix, in the response's units. The posterior
// covariance is factorised with the same jitter escalation as fitting; the
// jitter used (needed because posterior covariances at close points are
// nearly singular) is returned.
func (m *Model) Sample(xs [][]float64, count int, rng *rand.Rand) (*mat.Dense, float64, error) {
	mean, cov := m.PredictJoint(xs)
	q := len(xs)
	a := make([]float64, q*q)
	for i := 0; i < q; i++ {
		for j := i; j < q; j++ {
			a[i*q+j] = cov.At(i, j)
		}
	}
	var c spd
	jitter, err := c.factor(a, q, 0, m.p.SignalVar*m.yScale*m.yScale, nil)
	if err != nil {
		return nil, 0, fmt.Errorf("gp: sample: %w", err)
	}
	out := mat.NewDense(count, q, nil)
	eps := make([]float64, q)
	for s := 0; s < count; s++ {
		for i := range eps {
			eps[i] = rng.NormFloat64()
		}
		// f = mean + Uᵀ ε has covariance UᵀU.
		blas64.Trmv(blas.Trans, c.tri(), blas64.Vector{N: q, Inc: 1, Data: eps})
		for i := 0; i < q; i++ {
			out.Set(s, i, mean[i]+eps[i])
		}
	}
	return out, jitter, nil
}
