package gp

import (
	"fmt"
	"math"

	"benchtender/planner/gp/internal/vexp"
)

// Kernel is the correlation function of the process, a function of the
// scaled distance r = sqrt(Σ ((a_k − b_k)/l_k)²).
type Kernel int

// The kernels (Rasmussen and Williams 2006, eqs. 4.9 and 4.17).
const (
	// Matern52 is k(r) = (1 + √5 r + 5r²/3) exp(−√5 r): twice
	// differentiable sample paths, the usual default for physical
	// processes.
	Matern52 Kernel = iota
	// Matern32 is k(r) = (1 + √3 r) exp(−√3 r): rougher paths.
	Matern32
	// SquaredExponential is k(r) = exp(−r²/2): infinitely smooth paths.
	SquaredExponential
)

var kernelNames = map[Kernel]string{Matern52: "matern52", Matern32: "matern32", SquaredExponential: "squared_exponential"}

func (k Kernel) String() string {
	if s, ok := kernelNames[k]; ok {
		return s
	}
	return fmt.Sprintf("Kernel(%d)", int(k))
}

// ParseKernel returns the kernel named by s ("matern52", "matern32" or
// "squared_exponential").
func ParseKernel(s string) (Kernel, error) {
	for k, n := range kernelNames {
		if n == s {
			return k, nil
		}
	}
	return 0, fmt.Errorf("gp: unknown kernel %q (matern52, matern32 or squared_exponential)", s)
}

var (
	sqrt5 = math.Sqrt(5)
	sqrt3 = math.Sqrt(3)
)

// corr returns k(r).
func (k Kernel) corr(r float64) float64 {
	switch k {
	case Matern32:
		s := sqrt3 * r
		return (1 + s) * math.Exp(-s)
	case SquaredExponential:
		return math.Exp(-0.5 * r * r)
	default:
		s := sqrt5 * r
		return (1 + s + s*s/3) * math.Exp(-s)
	}
}

// slope returns g(r) = −(1/r) dk/dr, which turns d(r²)/dθ into dk/dθ:
// dk/dθ = −½ g(r) d(r²)/dθ. It is finite at r = 0.
//
//	Matérn 5/2: g = (5/3)(1 + √5 r) exp(−√5 r)
//	Matérn 3/2: g = 3 exp(−√3 r)
//	squared exponential: g = exp(−r²/2)
func (k Kernel) slope(r float64) float64 {
	switch k {
	case Matern32:
		return 3 * math.Exp(-sqrt3*r)
	case SquaredExponential:
		return math.Exp(-0.5 * r * r)
	default:
		s := sqrt5 * r
		return 5.0 / 3.0 * (1 + s) * math.Exp(-s)
	}
}

// rate returns √(2ν) of a Matérn kernel, the factor of r in its
// exponential (√5 or √3); 0 for the squared exponential, whose exponent
// is −r²/2.
func (k Kernel) rate() float64 {
	switch k {
	case Matern52:
		return sqrt5
	case Matern32:
		return sqrt3
	}
	return 0
}

// expRow writes into arg the exponent of the kernel's exponential for
// each squared scaled distance of r2 (−r²/2, or −√5 r, −√3 r for the
// Matérn kernels) and into e its exponential, the row's computed
// together (vexp). e may be r2; arg must not.
func (k Kernel) expRow(r2, e, arg []float64) {
	if k == SquaredExponential {
		for j, v := range r2 {
			arg[j] = -0.5 * v
		}
	} else {
		c := k.rate()
		for j, v := range r2 {
			arg[j] = -c * math.Sqrt(v)
		}
	}
	vexp.Exp(e, arg)
}

// corrRow turns a row of squared scaled distances r2 into k(r), written
// into kc (which may be r2); arg is scratch as long as r2. The
// correlations are corrSlopeRow's, value for value.
func (k Kernel) corrRow(r2, kc, arg []float64) {
	n := len(r2)
	kc, arg = kc[:n], arg[:n]
	k.expRow(r2, kc, arg)
	if k == SquaredExponential {
		return
	}
	for j, e := range kc {
		s := -arg[j]
		if k == Matern32 {
			kc[j] = (1 + s) * e
		} else {
			kc[j] = (1 + s + s*s/3) * e
		}
	}
}

// corrSlopeRow turns a row of squared scaled distances r2 into k(r),
// written into kc (which may be r2), and g(r) (see slope), into gc, with
// one exponential for both. arg is scratch as long as r2.
func (k Kernel) corrSlopeRow(r2, kc, gc, arg []float64) {
	n := len(r2)
	kc, gc, arg = kc[:n], gc[:n], arg[:n]
	if k == SquaredExponential {
		k.expRow(r2, kc, arg)
		copy(gc, kc)
		return
	}
	k.expRow(r2, gc, arg) // e = exp(−s), into gc for now
	for j, e := range gc {
		s := -arg[j]
		if k == Matern32 {
			kc[j], gc[j] = (1+s)*e, 3*e
		} else {
			kc[j], gc[j] = (1+s+s*s/3)*e, 5.0/3.0*(1+s)*e
		}
	}
}

// scaledDist returns r = sqrt(Σ ((a_k − b_k)/l_k)²), given 1/l_k.
func scaledDist(a, b, invLen []float64) float64 {
	var s float64
	for k := range a {
		d := (a[k] - b[k]) * invLen[k]
		s += d * d
	}
	return math.Sqrt(s)
}
