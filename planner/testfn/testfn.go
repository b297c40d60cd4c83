// Package testfn holds published test functions for global optimisation,
// with their domains and known minima, for the planner's tests and the
// runs-to-optimum benchmark. Constants and minima are those of Surjanovic
// and Bingham, Virtual Library of Simulation Experiments: Test Functions
// and Datasets (sfu.ca/~ssurjano), pages forretal08, branin, camel6 and
// hart6.
package testfn

import (
	"math"

	"benchtender/campaign"
)

// Function is a test function with its domain and global minimum.
type Function struct {
	Name   string
	Space  campaign.Space
	F      func(x []float64) float64
	Min    float64   // the published global minimum
	ArgMin []float64 // one published minimiser
}

// Forrester is f(x) = (6x − 2)² sin(12x − 4) on [0, 1] (Forrester, Sóbester
// and Keane 2008, Engineering Design via Surrogate Modelling, p. 83);
// minimum −6.02074 at x = 0.75725 (Surjanovic and Bingham, forretal08).
func Forrester() Function {
	return Function{
		Name:   "forrester",
		Space:  campaign.Space{{Name: "x", Min: 0, Max: 1}},
		F:      func(x []float64) float64 { u := 6*x[0] - 2; return u * u * math.Sin(12*x[0]-4) },
		Min:    -6.02074,
		ArgMin: []float64{0.75725},
	}
}

// Branin with a=1, b=5.1/(4π²), c=5/π, r=6, s=10, t=1/(8π) on
// [−5, 10] × [0, 15]; minimum 0.397887 at (−π, 12.275), (π, 2.275) and
// (9.42478, 2.475) (Surjanovic and Bingham, branin).
func Branin() Function {
	return Function{
		Name:  "branin",
		Space: campaign.Space{{Name: "x1", Min: -5, Max: 10}, {Name: "x2", Min: 0, Max: 15}},
		F: func(x []float64) float64 {
			a, b, c, r, s, t := 1.0, 5.1/(4*math.Pi*math.Pi), 5/math.Pi, 6.0, 10.0, 1/(8*math.Pi)
			u := x[1] - b*x[0]*x[0] + c*x[0] - r
			return a*u*u + s*(1-t)*math.Cos(x[0]) + s
		},
		Min:    0.397887,
		ArgMin: []float64{math.Pi, 2.275},
	}
}

// SixHumpCamel is f(x) = (4 − 2.1x₁² + x₁⁴/3)x₁² + x₁x₂ + (−4 + 4x₂²)x₂² on
// [−3, 3] × [−2, 2]; minimum −1.0316 at (0.0898, −0.7126) and (−0.0898,
// 0.7126) (Surjanovic and Bingham, camel6).
func SixHumpCamel() Function {
	return Function{
		Name:  "six-hump camel",
		Space: campaign.Space{{Name: "x1", Min: -3, Max: 3}, {Name: "x2", Min: -2, Max: 2}},
		F: func(x []float64) float64 {
			a, b := x[0], x[1]
			return (4-2.1*a*a+a*a*a*a/3)*a*a + a*b + (-4+4*b*b)*b*b
		},
		Min:    -1.0316,
		ArgMin: []float64{0.0898, -0.7126},
	}
}

// Hartmann6 is the six-dimensional Hartmann function on [0, 1]⁶; minimum
// −3.32237 at (0.20169, 0.150011, 0.476874, 0.275332, 0.311652, 0.6573)
// (Surjanovic and Bingham, hart6).
func Hartmann6() Function {
	alpha := [4]float64{1.0, 1.2, 3.0, 3.2}
	a := [4][6]float64{
		{10, 3, 17, 3.5, 1.7, 8},
		{0.05, 10, 17, 0.1, 8, 14},
		{3, 3.5, 1.7, 10, 17, 8},
		{17, 8, 0.05, 10, 0.1, 14},
	}
	p := [4][6]float64{
		{1312, 1696, 5569, 124, 8283, 5886},
		{2329, 4135, 8307, 3736, 1004, 9991},
		{2348, 1451, 3522, 2883, 3047, 6650},
		{4047, 8828, 8732, 5743, 1091, 381},
	}
	space := make(campaign.Space, 6)
	for i := range space {
		space[i] = campaign.Factor{Name: "x" + string(rune('1'+i)), Min: 0, Max: 1}
	}
	return Function{
		Name:  "hartmann 6-D",
		Space: space,
		F: func(x []float64) float64 {
			var s float64
			for i := 0; i < 4; i++ {
				var in float64
				for j := 0; j < 6; j++ {
					d := x[j] - 1e-4*p[i][j]
					in += a[i][j] * d * d
				}
				s += alpha[i] * math.Exp(-in)
			}
			return -s
		},
		Min:    -3.32237,
		ArgMin: []float64{0.20169, 0.150011, 0.476874, 0.275332, 0.311652, 0.6573},
	}
}

// All returns the benchmark's functions.
func All() []Function { return []Function{Forrester(), Branin(), SixHumpCamel(), Hartmann6()} }
