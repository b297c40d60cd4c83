package acquisition

import "math"

// Erfcx is the scaled complementary error function exp(x²)·erfc(x), which
// Go's math package lacks. It stays finite and accurate for large positive
// x, where erfc underflows.
//
// For x < 10 it is computed as exp(x²)·math.Erfc(x) (relative error about
// x² machine epsilons from rounding x²); for x ≥ 10 by the continued
// fraction of Abramowitz and Stegun (1964), Handbook of Mathematical
// Functions, eq. 7.1.14:
//
//	2 e^{x²} ∫_x^∞ e^{−t²} dt = 1/(x + (1/2)/(x + 1/(x + (3/2)/(x + 2/(x + …)))))
//
// so erfcx(x) = (1/√π) · that fraction. For x < 0, erfcx(x) = 2e^{x²} −
// erfcx(−x), which overflows to +Inf below about −26.6.
func Erfcx(x float64) float64 {
	switch {
	case math.IsNaN(x):
		return math.NaN()
	case x < 0:
		return 2*math.Exp(x*x) - Erfcx(-x)
	case x < 10:
		return math.Exp(x*x) * math.Erfc(x)
	case math.IsInf(x, 1):
		return 0
	}
	// Evaluate the continued fraction from the bottom up; 60 levels are
	// far more than needed for double precision at x ≥ 10.
	f := x
	for k := 60; k >= 1; k-- {
		f = x + (float64(k)/2)/f
	}
	return 1 / (math.SqrtPi * f)
}
