package acquisition

import "math"

const (
	invSqrt2   = 0.7071067811865476
	logSqrt2Pi = 0.9189385332046728 // ln √(2π)
	sqrtHalfPi = 1.2533141373155003 // √(π/2)
)

// NormPDF is the standard normal density φ(z).
func NormPDF(z float64) float64 { return math.Exp(-0.5*z*z - logSqrt2Pi) }

// NormCDF is the standard normal distribution function Φ(z).
func NormCDF(z float64) float64 { return 0.5 * math.Erfc(-z*invSqrt2) }

// ExpectedImprovement is the closed form of E[max(best − f, 0)] for f ~
// N(mean, sd²), for minimisation (Jones, Schonlau and Welch 1998,
// "Efficient global optimization of expensive black-box functions", eq. 15):
//
//	EI = sd · (z Φ(z) + φ(z)),  z = (best − mean)/sd
//
// It underflows to 0 far from the best; use LogExpectedImprovement to rank.
func ExpectedImprovement(mean, sd, best float64) float64 {
	if sd <= 0 {
		return math.Max(best-mean, 0)
	}
	z := (best - mean) / sd
	return sd * (z*NormCDF(z) + NormPDF(z))
}

// LogExpectedImprovement is ln EI, computed without underflow following the
// approach of Ament, Daulton, Eriksson, Balandat and Bakshy (2023),
// "Unexpected improvements to expected improvement for Bayesian
// optimization", NeurIPS, eq. 9: with h(z) = φ(z) + zΦ(z),
//
//	ln h(z) = ln(φ(z) + zΦ(z))                                   for z > −1
//	ln h(z) = −z²/2 − ln√(2π) + ln(1 − |z|·√(π/2)·erfcx(|z|/√2)) for −1000 < z ≤ −1
//	ln h(z) = −z²/2 − ln√(2π) − 2 ln|z| + ln(1 − 3/z² + 15/z⁴)   below
//
// The middle form loses about z² machine epsilons to cancellation (at most
// 2e-10 relative at z = −1000); below that the asymptotic series of the
// Mills ratio (Abramowitz and Stegun 1964, eq. 26.2.12) is exact to double
// precision once its z⁻⁶ term is dropped.
//
// and ln EI = ln sd + ln h(z). It returns −Inf only when sd is 0 and mean is
// not better than best, or when a prediction is NaN.
func LogExpectedImprovement(mean, sd, best float64) float64 {
	if math.IsNaN(mean) || math.IsNaN(sd) || math.IsNaN(best) {
		return math.Inf(-1)
	}
	if sd <= 0 {
		return math.Log(math.Max(best-mean, 0))
	}
	z := (best - mean) / sd
	return math.Log(sd) + logH(z)
}

// logH is ln(φ(z) + zΦ(z)).
func logH(z float64) float64 {
	const zTail = -1000
	switch {
	case z > -1:
		return math.Log(NormPDF(z) + z*NormCDF(z))
	case z > zTail:
		// zΦ(z)/φ(z) = −|z|·√(π/2)·erfcx(|z|/√2), so
		// h(z) = φ(z)·(1 − |z|√(π/2) erfcx(|z|/√2)).
		a := -z
		return -0.5*z*z - logSqrt2Pi + math.Log1p(-a*sqrtHalfPi*Erfcx(a*invSqrt2))
	default:
		w := 1 / (z * z)
		return -0.5*z*z - logSqrt2Pi + math.Log(w) + math.Log1p(-3*w+15*w*w)
	}
}

// LowerConfidenceBound is mean − beta·sd: small where the function may be
// small. Minimising it (or maximising its negative) trades exploitation
// against exploration through beta.
func LowerConfidenceBound(mean, sd, beta float64) float64 { return mean - beta*sd }

// LogNormCDF is ln Φ(z), accurate far into the lower tail, where Φ(z)
// underflows: for z < −5 it uses Φ(z) = ½ erfcx(−z/√2) exp(−z²/2).
func LogNormCDF(z float64) float64 {
	if z < -5 {
		return math.Log(0.5*Erfcx(-z*invSqrt2)) - 0.5*z*z
	}
	return math.Log(NormCDF(z))
}

// LogProbabilityOfImprovement is ln P(f < best) for f ~ N(mean, sd²)
// (Kushner 1964): ln Φ((best − mean)/sd).
func LogProbabilityOfImprovement(mean, sd, best float64) float64 {
	if math.IsNaN(mean) || math.IsNaN(sd) || math.IsNaN(best) {
		return math.Inf(-1)
	}
	if sd <= 0 {
		if mean < best {
			return 0
		}
		return math.Inf(-1)
	}
	return LogNormCDF((best - mean) / sd)
}
