// Package spdla factorises symmetric positive definite matrices, inverts
// them from their factor and solves with the factor for many right-hand
// sides at once: the two O(n³) steps of fitting a Gaussian process, which
// every evaluation of the marginal likelihood and its gradient pays, and
// the O(n²)-a-point step of predicting its variance at many points.
//
// Matrices are row major, n×n with stride n, and only their upper
// triangles are read and written as values; the strict lower triangle is
// scratch that these routines may overwrite. The factor is the upper
// triangular U with A = UᵀU (LAPACK's dpotrf with uplo 'U' in column-major
// terms, the same numbers).
//
// The factorisation and the solves are recursive (Gustavson, "Recursion
// leads to automatic variable blocking for dense linear-algebra
// algorithms", IBM J. Res. Dev. 41(6), 1997) and the inversion blocked
// (Golub and Van Loan, Matrix Computations, 4th ed., §3.2.11), so that
// all but O(n²) of their arithmetic is one product, C ± AᵀB, done in 4×8
// tiles of C held in registers (the register tile of Goto and van de
// Geijn, "Anatomy of high-performance matrix multiplication", ACM TOMS
// 34(3), 2008; A and B are read in place, not packed, except for the
// narrow last strips). On amd64 processors with AVX-512, or with AVX2 and
// FMA, the tile is computed by a few lines of assembly; elsewhere by the
// same loop in Go. The AVX-512 tile sums in a different order, so results
// can differ in the last bits from one processor to another.
// Results agree with LAPACK's to rounding (tested against gonum's).
package spdla
