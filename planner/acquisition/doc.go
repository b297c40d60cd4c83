// Package acquisition scores candidate setpoints from a surrogate's
// posterior: expected improvement (in its numerically stable log form) and
// the lower confidence bound, for minimisation.
//
// It depends only on the small Predictor interface it declares, never on a
// particular model, and does no I/O.
package acquisition

// Predictor is what acquisition needs of a surrogate: the posterior mean and
// variance of the latent function at x. Implementations must return a
// finite mean and a non-negative variance, or NaN for both when they
// cannot predict; scores of NaN predictions are −Inf (never chosen).
type Predictor interface {
	Predict(x []float64) (mean, variance float64)
}
