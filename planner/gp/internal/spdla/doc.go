// Package spdla factorises symmetric positive definite matrices and
// inverts them from their factor: the two O(n³) steps of fitting a
// Gaussian process, which every evaluation of the marginal likelihood and
// its gradient pays.
//
// Matrices are row major, n×n with stride n, and only their upper
// triangles are read and written as values; the strict lower triangle is
// scratch that these routines may overwrite. The factor is the upper
// triangular U with A = UᵀU (LAPACK's dpotrf with uplo 'U' in column-major
// terms, the same numbers).
//
// Both routines are blocked (Golub and Van Loan, Matrix Computations, 4th
// ed., §4.2.9 and §3.2.11: right-looking Cholesky and block triangular
// inversion) so that nearly all of their arithmetic is one product,
// C ± AᵀB, done in packed 4×8 tiles (the layout of Goto and van de Geijn,
// "Anatomy of high-performance matrix multiplication", ACM TOMS 34(3),
// 2008). On amd64 processors with AVX2 and FMA the tile is computed by a
// few lines of assembly; elsewhere by the same loop in Go. Results agree
// with LAPACK's to rounding (tested against gonum's).
package spdla
