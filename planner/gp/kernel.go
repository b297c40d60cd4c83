package gp

import "math"

// sqrt5 is √5, used by the Matérn 5/2 kernel.
var sqrt5 = math.Sqrt(5)

// matern52 returns the Matérn 5/2 correlation at scaled distance r
// (Rasmussen and Williams 2006, eq. 4.17 with ν = 5/2):
//
//	k(r) = (1 + √5 r + 5r²/3) exp(−√5 r)
func matern52(r float64) float64 {
	s := sqrt5 * r
	return (1 + s + s*s/3) * math.Exp(-s)
}

// matern52dr2 returns −dk/dr divided by r, the factor that turns
// d(r²)/dθ into dk/dθ:
//
//	−(1/r) dk/dr = (5/3)(1 + √5 r) exp(−√5 r)
//
// so dk/dθ = −½ · (5/3)(1 + √5 r) exp(−√5 r) · d(r²)/dθ.
func matern52dr2(r float64) float64 {
	s := sqrt5 * r
	return 5.0 / 3.0 * (1 + s) * math.Exp(-s)
}

// scaledDist returns r = sqrt(Σ ((a_k − b_k)/l_k)²).
func scaledDist(a, b, invLen []float64) float64 {
	var s float64
	for k := range a {
		d := (a[k] - b[k]) * invLen[k]
		s += d * d
	}
	return math.Sqrt(s)
}
