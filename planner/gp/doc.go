// Package gp is a Gaussian-process regression model: a Matérn 5/2, Matérn
// 3/2 or squared-exponential kernel with one length-scale per input (or
// one shared by all, FitOptions.Isotropic), a signal variance and Gaussian
// noise, fitted by maximising the log marginal likelihood (plus weak
// priors) with analytic gradients and L-BFGS from several starts. A share
// of the signal variance can go to one-factor additive terms
// (FitOptions.Additive, additive.go), fitted with the rest.
//
// A fitted model can be conditioned on more runs with its hyperparameters
// held (Condition) at O(N²) a run, by extending its Cholesky factor
// instead of rebuilding it; many points are predicted in blocks
// (PredictMany), and MeanBound bounds the standard deviation from above
// at O(N) a point, so a search can skip points that cannot compete.
//
// Inputs are expected in the unit box and the model standardises the
// response itself. The package does no I/O and keeps no global state; every
// random choice takes an explicit source. It must never return a NaN as a
// prediction: a model that cannot be factorised is an error.
//
// References: C. E. Rasmussen and C. K. I. Williams (2006), Gaussian
// Processes for Machine Learning, MIT Press: eq. 4.17 (Matérn class),
// Algorithm 2.1 (prediction and log marginal likelihood) and eq. 5.9
// (gradient of the log marginal likelihood).
package gp
