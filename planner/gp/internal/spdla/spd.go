package spdla

import (
	"math"

	"gonum.org/v1/gonum/blas/blas64"
)

// leaf is the order below which the recursions work row by row; above it
// they halve the problem and hand the coupling between the halves to one
// product, so that all but O(n²) of the arithmetic is in products.
const leaf = 16

// Cholesky overwrites the upper triangle of the n×n symmetric matrix a
// (row major) with U, A = UᵀU. It reports false, leaving a partly
// overwritten, when a pivot is not positive (A is not positive definite,
// or not a number).
func (w *Work) Cholesky(a []float64, n int) bool {
	return w.cholesky(a, n, 0, n)
}

// cholesky factorises the diagonal block a[r0:r1][r0:r1], recursively
// (Gustavson, "Recursion leads to automatic variable blocking for dense
// linear-algebra algorithms", IBM J. Res. Dev. 41(6), 1997): the leading
// half, then the coupling block U12 = U11⁻ᵀA12, then the trailing half less
// U12ᵀU12.
func (w *Work) cholesky(a []float64, n, r0, r1 int) bool {
	if r1-r0 <= leaf {
		for r := r0; r < r1; r++ {
			d := a[r*n+r]
			if !(d > 0) {
				return false
			}
			d = math.Sqrt(d)
			a[r*n+r] = d
			row := a[r*n+r+1 : r*n+r1]
			scale(1/d, row)
			for i := r + 1; i < r1; i++ {
				if f := a[r*n+i]; f != 0 {
					axpy(-f, a[r*n+i:r*n+r1], a[i*n+i:i*n+r1])
				}
			}
		}
		return true
	}
	mid := r0 + split(r1-r0)
	if !w.cholesky(a, n, r0, mid) {
		return false
	}
	w.solveUT(a, n, r0, mid, a, n, mid, r1)
	w.multiply(product{
		m: r1 - mid, n: r1 - mid, k: mid - r0,
		a: a[r0*n+mid:], lda: n, b: a[r0*n+mid:], ldb: n, c: a[mid*n+mid:], ldc: n,
		sign: -1, tri: true,
	})
	return w.cholesky(a, n, mid, r1)
}

// SolveUT overwrites the n×m matrix X (row major, stride ldx) with U⁻ᵀX,
// for the factor U from Cholesky (n×n, stride n): m triangular solves at
// once, for the variances of m points.
func (w *Work) SolveUT(u []float64, n int, x []float64, ldx, m int) {
	w.solveUT(u, n, 0, n, x, ldx, 0, m)
}

// solveUT overwrites the rows r0..r1 of x (stride ldx), columns c0..c1,
// holding B, with X such that U[r0:r1][r0:r1]ᵀX = B; u has stride n.
func (w *Work) solveUT(u []float64, n, r0, r1 int, x []float64, ldx, c0, c1 int) {
	if c1 <= c0 {
		return
	}
	if r1-r0 <= leaf {
		for r := r0; r < r1; r++ {
			row := x[r*ldx+c0 : r*ldx+c1]
			for q := r0; q < r; q++ {
				if f := u[q*n+r]; f != 0 {
					axpy(-f, x[q*ldx+c0:q*ldx+c1], row)
				}
			}
			scale(1/u[r*n+r], row)
		}
		return
	}
	mid := r0 + split(r1-r0)
	w.solveUT(u, n, r0, mid, x, ldx, c0, c1)
	w.multiply(product{
		m: r1 - mid, n: c1 - c0, k: mid - r0,
		a: u[r0*n+mid:], lda: n, b: x[r0*ldx+c0:], ldb: ldx, c: x[mid*ldx+c0:], ldc: ldx,
		sign: -1,
	})
	w.solveUT(u, n, mid, r1, x, ldx, c0, c1)
}

// split returns where to halve an order, on a multiple of the tile's rows.
func split(n int) int { return max(mr, n/2/mr*mr) }

// nb is the width of the block columns of the inversion.
const nb = 64

// Inverse writes the upper triangle of A⁻¹ into dst (n×n, row major),
// given A's factor U from Cholesky in u. It forms V = U⁻ᵀ, lower
// triangular, by block forward substitution, and then A⁻¹ = VᵀV. It
// reports false when U has a zero or NaN on its diagonal.
func (w *Work) Inverse(dst, u []float64, n int) bool {
	for i := 0; i < n; i++ {
		if d := u[i*n+i]; d == 0 || math.IsNaN(d) {
			return false
		}
	}
	if len(w.v) < n*n {
		w.v = make([]float64, n*n)
	}
	v := w.v[:n*n]
	for i0 := 0; i0 < n; i0 += nb {
		i1 := min(i0+nb, n)
		for r := i0; r < i1; r++ {
			clear(v[r*n : r*n+n])
			v[r*n+r] = 1
		}
		// V[I][:i0] −= L[I][:i0]·V[:i0][:i0] with L = Uᵀ, one block column
		// of V at a time (V[q][j] is zero for q < j).
		for j0 := 0; j0 < i0; j0 += nb {
			j1 := min(j0+nb, i0)
			w.multiply(product{
				m: i1 - i0, n: j1 - j0, k: i0 - j0,
				a: u[j0*n+i0:], lda: n, b: v[j0*n+j0:], ldb: n, c: v[i0*n+j0:], ldc: n,
				sign: -1,
			})
		}
		// Then L[I][I]·V[I] = what is there.
		w.solveUT(u, n, i0, i1, v, n, 0, i1)
	}
	// A⁻¹ = VᵀV, block column by block column of its upper triangle:
	// A⁻¹[:j1][J] = V[j0:][:j1]ᵀ·V[j0:][J] (V[q][j] is zero for q < j).
	for j0 := 0; j0 < n; j0 += nb {
		j1 := min(j0+nb, n)
		for i := 0; i < j1; i++ {
			clear(dst[i*n+max(i, j0) : i*n+j1])
		}
		w.multiply(product{
			m: j1, n: j1 - j0, k: n - j0,
			a: v[j0*n:], lda: n, b: v[j0*n+j0:], ldb: n, c: dst[j0:], ldc: n,
			sign: 1, tri: true, shift: j0,
		})
	}
	return true
}

func scale(f float64, x []float64) {
	for i := range x {
		x[i] *= f
	}
}

// axpy adds f·x to y, with gonum's assembly where it has one.
func axpy(f float64, x, y []float64) {
	blas64.Axpy(f, blas64.Vector{N: len(x), Inc: 1, Data: x}, blas64.Vector{N: len(x), Inc: 1, Data: y})
}
