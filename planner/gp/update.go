package gp

import (
	"fmt"
	"math"
	"slices"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/lapack/lapack64"
)

// Condition returns a Gaussian process with prev's hyperparameters
// conditioned on x and y (standardised afresh), as New(x, y, prev.Params())
// would. When prev's inputs are the first rows of x, prev's Cholesky factor
// is extended by the new rows instead of being rebuilt: with
//
//	A' = [A  B; Bᵀ C],  A = UᵀU,
//
// the factor of A' is [U S; 0 T] with S = U⁻ᵀB and TᵀT = C − SᵀS (the
// bordered Cholesky factorisation; Golub and Van Loan, Matrix
// Computations, 4th ed., section 4.2), so m new runs cost O(N²m) rather
// than O(N³). Otherwise, or when the new block needs jitter, it factorises
// from scratch. Errors are New's.
func Condition(prev *Model, x [][]float64, y []float64) (*Model, error) {
	d, err := checkData(x, y)
	if err != nil {
		return nil, err
	}
	if d != prev.Dim() {
		panic(fmt.Sprintf("gp: condition %d inputs on a model of %d", d, prev.Dim()))
	}
	n0 := len(prev.x)
	if n0 >= len(x) || !samePrefix(prev.x, x) {
		return New(x, y, prev.p)
	}
	m := &Model{x: x, p: prev.p.Clone(), invLen: prev.invLen, jitter: prev.jitter}
	m.prepareAdditive()
	m.yMean, m.yScale = standardise(y)
	m.z = make([]float64, len(y))
	for i, v := range y {
		m.z[i] = (v - m.yMean) / m.yScale
	}
	if !m.c.extend(&prev.c, len(x), m.covBlock(n0), m.p.NoiseVar+prev.jitter, m.p.SignalVar) {
		return New(x, y, prev.p)
	}
	if err := m.solve(); err != nil {
		return nil, err
	}
	return m, nil
}

// samePrefix reports whether the rows of a are the first rows of b.
func samePrefix(a, b [][]float64) bool {
	for i, r := range a {
		if !slices.Equal(r, b[i]) {
			return false
		}
	}
	return true
}

// covBlock returns the covariances of rows n0.. of m's inputs with every
// row, as an (n−n0)×n row-major block: row i−n0 holds k(x_i, x_j) for
// j = 0..n−1 (without noise; extend reads j ≤ i).
func (m *Model) covBlock(n0 int) []float64 {
	n := len(m.x)
	b := make([]float64, (n-n0)*n)
	for i := n0; i < n; i++ {
		m.crossCov(b[(i-n0)*n:(i-n0+1)*n], m.x[i])
	}
	return b
}

// extend makes c the factor of prev's matrix bordered by the new rows:
// n is the new order, cov is (n−n0)×n, row r holding the covariances of new point n0+r with
// points 0..n0+r (later entries unused); diag is added to the new
// diagonal. It reports false when the new block is not positive
// definite or has a pivot whose square is below 1e-10 times floor (the
// signal variance).
func (c *spd) extend(prev *spd, n int, cov []float64, diag, floor float64) bool {
	n0 := prev.n
	if len(cov) != (n-n0)*n {
		panic(fmt.Sprintf("gp: extend to %d rows from %d: covariance block of %d", n, n0, len(cov)))
	}
	k := n - n0
	c.n = n
	c.u = make([]float64, n*n)
	for i := 0; i < n0; i++ {
		copy(c.u[i*n:i*n+n0], prev.u[i*n0:i*n0+n0])
	}
	// S = U⁻ᵀ B, with B the n0×k block of covariances between old and new.
	if n0 > 0 {
		s := blas64.General{Rows: n0, Cols: k, Stride: n, Data: c.u[n0:]}
		for r := 0; r < k; r++ {
			for i := 0; i < n0; i++ {
				s.Data[i*n+r] = cov[r*n+i]
			}
		}
		blas64.Trsm(blas.Left, blas.Trans, 1, prev.tri(), s)
	}
	// C − SᵀS into the new diagonal block, then its own factor.
	t := c.u[n0*n+n0:]
	for r := 0; r < k; r++ {
		for q := r; q < k; q++ {
			v := cov[q*n+n0+r]
			for i := 0; i < n0; i++ {
				v -= c.u[i*n+n0+r] * c.u[i*n+n0+q]
			}
			if q == r {
				v += diag
			}
			t[r*n+q] = v
		}
	}
	if _, ok := lapack64.Potrf(blas64.Symmetric{Uplo: blas.Upper, N: k, Stride: n, Data: t}); !ok {
		return false
	}
	// A pivot near zero (a repeated input without noise) would pass here
	// where the whole matrix, factorised at once, might need jitter: such
	// a block is refused, so the caller rebuilds and decides the jitter
	// as New does.
	for r := 0; r < k; r++ {
		if p := t[r*n+r]; p*p < 1e-10*floor {
			return false
		}
	}
	return true
}

// solve computes α and the log marginal likelihood from the factor.
func (m *Model) solve() error {
	n := len(m.x)
	resid := make([]float64, n)
	for i, v := range m.z {
		resid[i] = v - m.p.Mean
	}
	m.alpha = make([]float64, n)
	m.c.solveTo(m.alpha, resid)
	m.lml = -0.5*dot(resid, m.alpha) - 0.5*m.c.logDet() - 0.5*float64(n)*math.Log(2*math.Pi)
	if math.IsNaN(m.lml) || math.IsInf(m.lml, 0) {
		return fmt.Errorf("gp: log marginal likelihood is %v", m.lml)
	}
	return nil
}
