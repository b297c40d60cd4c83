package gp

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"

	"benchtender/planner/gp/internal/spdla"
)

// spd is the upper Cholesky factor U of a symmetric positive definite
// n×n matrix A = UᵀU, row-major with stride n. The factorisation and the
// inverse are spdla's, several times faster than gonum's LAPACK at the
// sizes a fit sees (spdla's benchmarks); the solves are gonum's BLAS.
type spd struct {
	n int
	u []float64
}

func (c *spd) tri() blas64.Triangular {
	return blas64.Triangular{Uplo: blas.Upper, Diag: blas.NonUnit, N: c.n, Stride: c.n, Data: c.u}
}

// factor factorises the symmetric matrix whose upper triangle is in a (row
// major, n×n) with noise added to the diagonal; when that fails it adds
// jitter of 1e-10 up to 1e-4 times signal, ten times more each try. It
// returns the jitter used. a is not changed. w is the factorisation's
// scratch, nil for a fresh one.
func (c *spd) factor(a []float64, n int, noise, signal float64, w *spdla.Work) (float64, error) {
	if w == nil {
		w = new(spdla.Work)
	}
	c.n = n
	if cap(c.u) < n*n {
		c.u = make([]float64, n*n)
	}
	c.u = c.u[:n*n]
	jitter := 0.0
	for {
		copy(c.u, a)
		for i := 0; i < n; i++ {
			c.u[i*n+i] += noise + jitter
		}
		if w.Cholesky(c.u, n) {
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

// solveTo writes A⁻¹b into dst: two triangular solves, Uᵀw = b then
// Ux = w (LAPACK's Potrs would treat b as a matrix, at several times the
// cost for one column).
func (c *spd) solveTo(dst, b []float64) {
	copy(dst, b)
	v := blas64.Vector{N: c.n, Inc: 1, Data: dst}
	blas64.Trsv(blas.Trans, c.tri(), v)
	blas64.Trsv(blas.NoTrans, c.tri(), v)
}

// halfSolve overwrites b with U⁻ᵀb, so that bᵀA⁻¹b is the squared norm of
// the result.
func (c *spd) halfSolve(b []float64) {
	blas64.Trsv(blas.Trans, c.tri(), blas64.Vector{N: c.n, Inc: 1, Data: b})
}

// halfSolveMany overwrites each b of bs with U⁻ᵀb, as halfSolve does for
// one: the bs side by side as the columns of one matrix (buf, at least
// n·len(bs) long), solved at once by spdla, whose products in tiles do
// the O(n²) work a point several times faster than one solve a point.
// w is spdla's scratch, kept by the caller from block to block.
func (c *spd) halfSolveMany(bs [][]float64, buf []float64, w *spdla.Work) {
	n, m := c.n, len(bs)
	if m == 0 {
		return
	}
	x := buf[:n*m]
	for j, b := range bs {
		for i, v := range b[:n] {
			x[i*m+j] = v
		}
	}
	w.SolveUT(c.u, n, x, m, m)
	for j, b := range bs {
		for i := range b[:n] {
			b[i] = x[i*m+j]
		}
	}
}

// inverseTo writes the upper triangle of A⁻¹ into dst (n×n, row major).
// w is scratch (n×n of it), kept by a caller that inverts again; nil for
// a fresh one.
func (c *spd) inverseTo(dst []float64, w *spdla.Work) bool {
	if w == nil {
		w = new(spdla.Work)
	}
	return w.Inverse(dst, c.u, c.n)
}

// logDet returns ln det A = 2 Σ ln U_ii.
func (c *spd) logDet() float64 {
	var s float64
	for i := 0; i < c.n; i++ {
		s += math.Log(c.u[i*c.n+i])
	}
	return 2 * s
}

// blasDot is aᵀb through gonum's BLAS (assembly on amd64), for the long
// rows of the fit's O(n²) loops; dot is quicker for a few values.
func blasDot(a, b []float64) float64 {
	return blas64.Dot(blas64.Vector{N: len(a), Inc: 1, Data: a}, blas64.Vector{N: len(a), Inc: 1, Data: b})
}

// axpy adds f·x to y through gonum's BLAS.
func axpy(f float64, x, y []float64) {
	blas64.Axpy(f, blas64.Vector{N: len(x), Inc: 1, Data: x}, blas64.Vector{N: len(x), Inc: 1, Data: y})
}
