package acquisition

import "math"

// LogMaxValueEntropy is ln of max-value entropy search's acquisition for
// minimisation (Wang and Jegelka 2017, "Max-value entropy search for
// efficient Bayesian optimization", ICML, eq. 6, with the signs turned for
// a minimum): the expected fall in the entropy of the minimum's value from
// a run at a point where f ~ N(mean, sd²), averaged over draws y* of that
// minimum,
//
//	α = (1/K) Σ_k [ γ_k φ(γ_k) / (2 Φ(γ_k)) − ln Φ(γ_k) ],  γ_k = (mean − y*_k)/sd.
//
// Each term is computed in a form that neither underflows nor cancels
// (logMESTerm), so points far above every y* still rank. It returns −Inf when
// sd is not positive or a value is NaN.
func LogMaxValueEntropy(mean, sd float64, minima []float64) float64 {
	if !(sd > 0) || math.IsNaN(mean) || len(minima) == 0 {
		return math.Inf(-1)
	}
	// ln of the mean of the terms, summed relative to the largest so far
	// (a running log-sum-exp), so that no term underflows.
	top, sum := math.Inf(-1), 0.0
	for _, m := range minima {
		t := logMESTerm((mean - m) / sd)
		switch {
		case math.IsInf(t, -1): // a NaN draw: it adds nothing
		case t > top:
			sum = sum*math.Exp(top-t) + 1
			top = t
		default:
			sum += math.Exp(t - top)
		}
	}
	if math.IsInf(top, -1) {
		return top
	}
	return top + math.Log(sum/float64(len(minima)))
}

// logMESTerm is ln h(γ), h(γ) = γφ(γ)/(2Φ(γ)) − ln Φ(γ) ≥ 0, the entropy a
// run removes from N(0,1) truncated above γ.
//
//	γ < 0:     φ/Φ is 1/M(−γ), M the Mills ratio √(π/2)·erfcx(a/√2), and
//	           ln Φ is LogNormCDF (no underflow)
//	0 ≤ γ < 5: directly (Φ ≥ ½, both terms positive)
//	γ ≥ 5:     with the tail Q = 1 − Φ = φ·M(γ) and −ln Φ = −log1p(−Q),
//	           h = φ·(γ/(2(1 − Q)) + M·(−log1p(−Q))/Q), so ln h = ln φ + ln(…)
//	           without forming φ, which underflows beyond γ ≈ 38.
func logMESTerm(g float64) float64 {
	switch {
	case math.IsNaN(g):
		return math.Inf(-1)
	case g < 0:
		a := -g
		mills := sqrtHalfPi * Erfcx(a*invSqrt2)
		return math.Log(g/(2*mills) - LogNormCDF(g))
	case g < 5:
		phi, cdf := NormPDF(g), NormCDF(g)
		return math.Log(g*phi/(2*cdf) - math.Log(cdf))
	}
	mills := sqrtHalfPi * Erfcx(g*invSqrt2)
	logPhi := -0.5*g*g - logSqrt2Pi
	q := math.Exp(logPhi) * mills
	ratio := 1 + q/2 // −log1p(−q)/q for tiny q
	if q > 1e-8 {
		ratio = -math.Log1p(-q) / q
	}
	return logPhi + math.Log(g/(2*(1-q))+mills*ratio)
}
