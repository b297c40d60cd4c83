package spdla

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/lapack/lapack64"
)

// randomSPD returns the upper triangle of BᵀB/n + I/10 for a random n×n
// B, with the lower triangle filled with a marker that must not leak into
// the results.
func randomSPD(n int, r *rand.Rand) []float64 {
	b := make([]float64, n*n)
	for i := range b {
		b[i] = r.NormFloat64()
	}
	a := make([]float64, n*n)
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			if j < i {
				a[i*n+j] = math.NaN()
				continue
			}
			var s float64
			for k := 0; k < n; k++ {
				s += b[k*n+i] * b[k*n+j]
			}
			a[i*n+j] = s / float64(n)
			if i == j {
				a[i*n+j] += 0.1
			}
		}
	}
	return a
}

func nanSlice(n int) []float64 {
	s := make([]float64, n)
	for i := range s {
		s[i] = math.NaN()
	}
	return s
}

func upperMaxDiff(n int, x, y []float64) (float64, float64) {
	var d, m float64
	for i := 0; i < n; i++ {
		for j := i; j < n; j++ {
			d = math.Max(d, math.Abs(x[i*n+j]-y[i*n+j]))
			m = math.Max(m, math.Abs(y[i*n+j]))
		}
	}
	return d, m
}

// Against gonum's LAPACK (dpotrf and dpotri, upper): the sizes cover one
// row, sizes off the tile (4×8) and block (64) sizes, and more than one
// slice of the product's blocking (kc 256, mc 128, nc 512).
func TestAgainstLAPACK(t *testing.T) {
	r := rand.New(rand.NewPCG(1, 2))
	for _, tiles := range tilers() {
		for _, n := range []int{1, 2, 3, 5, 8, 9, 31, 63, 64, 65, 127, 130, 257, 300, 530} {
			t.Run(fmt.Sprintf("n=%d,tiles=%v", n, tiles), func(t *testing.T) {
				a := randomSPD(n, r)
				want := append([]float64(nil), a...)
				if _, ok := lapack64.Potrf(blas64.Symmetric{Uplo: blas.Upper, N: n, Stride: n, Data: want}); !ok {
					t.Fatal("gonum: not positive definite")
				}
				// Scratch left over from a larger problem: what Inverse does
				// not clear must not be read.
				w := &Work{tiles: tiles, v: nanSlice(n*n + 7*n + 3)}
				got := append([]float64(nil), a...)
				if !w.Cholesky(got, n) {
					t.Fatal("Cholesky reported not positive definite")
				}
				if d, m := upperMaxDiff(n, got, want); d > 1e-12*m || math.IsNaN(d) {
					t.Errorf("factor differs from dpotrf by %.3g (largest entry %.3g)", d, m)
				}
				wantInv := append([]float64(nil), want...)
				if _, ok := lapack64.Potri(blas64.Triangular{Uplo: blas.Upper, Diag: blas.NonUnit, N: n, Stride: n, Data: wantInv}); !ok {
					t.Fatal("gonum: singular")
				}
				inv := make([]float64, n*n)
				for i := range inv {
					inv[i] = math.NaN() // every upper entry must be written
				}
				if !w.Inverse(inv, got, n) {
					t.Fatal("Inverse reported a zero pivot")
				}
				if d, m := upperMaxDiff(n, inv, wantInv); d > 1e-10*m || math.IsNaN(d) {
					t.Errorf("inverse differs from dpotri by %.3g (largest entry %.3g)", d, m)
				}
			})
		}
	}
}

// SolveUT against gonum's triangular solve with many right-hand sides.
func TestSolveUTAgainstTrsm(t *testing.T) {
	r := rand.New(rand.NewPCG(9, 10))
	for _, tiles := range tilers() {
		for _, n := range []int{1, 7, 40, 129, 300} {
			for _, m := range []int{1, 5, 64, 70} {
				u := randomSPD(n, r)
				w := &Work{tiles: tiles}
				w.Cholesky(u, n)
				ldx := m + 3 // a stride wider than the block
				x := make([]float64, n*ldx)
				for i := range x {
					x[i] = r.NormFloat64()
				}
				want := append([]float64(nil), x...)
				blas64.Trsm(blas.Left, blas.Trans, 1,
					blas64.Triangular{Uplo: blas.Upper, Diag: blas.NonUnit, N: n, Stride: n, Data: u},
					blas64.General{Rows: n, Cols: m, Stride: ldx, Data: want})
				w.SolveUT(u, n, x, ldx, m)
				var d, big float64
				for i := 0; i < n; i++ {
					for j := 0; j < ldx; j++ {
						if j >= m && x[i*ldx+j] != want[i*ldx+j] {
							t.Fatalf("n=%d m=%d: column %d past the block was changed", n, m, j)
						}
						d = math.Max(d, math.Abs(x[i*ldx+j]-want[i*ldx+j]))
						big = math.Max(big, math.Abs(want[i*ldx+j]))
					}
				}
				if d > 1e-12*big || math.IsNaN(d) {
					t.Errorf("n=%d m=%d tiles=%v: differs from Trsm by %.3g (largest %.3g)", n, m, tiles, d, big)
				}
			}
		}
	}
}

func TestNotPositiveDefinite(t *testing.T) {
	for _, n := range []int{3, 70, 200} {
		a := randomSPD(n, rand.New(rand.NewPCG(3, uint64(n))))
		// Make the last pivot negative: A[n-1][n-1] far below what the rest needs.
		a[(n-1)*n+n-1] = -1
		var w Work
		if w.Cholesky(a, n) {
			t.Errorf("n=%d: a matrix with a negative diagonal entry was factorised", n)
		}
		b := randomSPD(n, rand.New(rand.NewPCG(4, uint64(n))))
		b[n/2*n+n/2] = math.NaN()
		if w.Cholesky(b, n) {
			t.Errorf("n=%d: a matrix with NaN on its diagonal was factorised", n)
		}
	}
}

// The assembly tile and the Go loop agree on every depth up to a few
// hundred, to rounding (the assembly fuses multiply and add).
func TestTileMatchesGo(t *testing.T) {
	if !hasFMA {
		t.Skip("no AVX2 and FMA here: only the Go tile runs")
	}
	r := rand.New(rand.NewPCG(5, 6))
	for _, tiles := range tilers() {
		if tiles == portable {
			continue
		}
		for k := 1; k < 300; k += 7 {
			// Strides wider than the tile, as inside a matrix.
			lda, ldb, ldc := mr+3, nr+5, nr+2
			a, b := make([]float64, k*lda), make([]float64, k*ldb)
			for i := range a {
				a[i] = r.NormFloat64()
			}
			for i := range b {
				b[i] = r.NormFloat64()
			}
			got, want := make([]float64, mr*ldc), make([]float64, mr*ldc)
			for i := range got {
				got[i] = float64(i)
				want[i] = float64(i)
			}
			(&Work{tiles: tiles}).tile(k, a, lda, b, ldb, got, ldc, -1)
			tileGo(k, a, lda, b, ldb, want, ldc, -1)
			for i := range got {
				if math.Abs(got[i]-want[i]) > 1e-12*float64(k) {
					t.Fatalf("%v, k=%d: entry %d is %v, the Go loop gives %v", tiles, k, i, got[i], want[i])
				}
			}
		}
	}
}

// The benchmarks run each way of computing a tile that this processor
// has (ours/avx512, ours/avx2, ours/go) beside gonum's LAPACK.
func BenchmarkCholesky(b *testing.B) {
	for _, n := range []int{200, 300, 1000} {
		a := randomSPD(n, rand.New(rand.NewPCG(7, uint64(n))))
		work := make([]float64, n*n)
		for _, tiles := range tilers() {
			b.Run(fmt.Sprintf("ours/%v/n=%d", tiles, n), func(b *testing.B) {
				w := Work{tiles: tiles}
				for b.Loop() {
					copy(work, a)
					w.Cholesky(work, n)
				}
			})
		}
		b.Run(fmt.Sprintf("gonum/n=%d", n), func(b *testing.B) {
			for b.Loop() {
				copy(work, a)
				lapack64.Potrf(blas64.Symmetric{Uplo: blas.Upper, N: n, Stride: n, Data: work})
			}
		})
	}
}

func BenchmarkInverse(b *testing.B) {
	for _, n := range []int{200, 300, 1000} {
		u := randomSPD(n, rand.New(rand.NewPCG(8, uint64(n))))
		(&Work{}).Cholesky(u, n)
		dst := make([]float64, n*n)
		for _, tiles := range tilers() {
			b.Run(fmt.Sprintf("ours/%v/n=%d", tiles, n), func(b *testing.B) {
				w := Work{tiles: tiles}
				for b.Loop() {
					w.Inverse(dst, u, n)
				}
			})
		}
		b.Run(fmt.Sprintf("gonum/n=%d", n), func(b *testing.B) {
			for b.Loop() {
				copy(dst, u)
				lapack64.Potri(blas64.Triangular{Uplo: blas.Upper, Diag: blas.NonUnit, N: n, Stride: n, Data: dst})
			}
		})
	}
}
