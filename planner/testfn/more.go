package testfn

import (
	"fmt"
	"math"

	"benchtender/campaign"
)

// Every definition below is from Surjanovic and Bingham, Virtual Library
// of Simulation Experiments (sfu.ca/~ssurjano), on the page named beside
// it, with that page's domain and global minimum. Minima of functions
// whose page gives no value say where theirs comes from.

// cube returns d factors x1..xd on [lo, hi].
func cube(d int, lo, hi float64) campaign.Space {
	s := make(campaign.Space, d)
	for i := range s {
		s[i] = campaign.Factor{Name: fmt.Sprintf("x%d", i+1), Min: lo, Max: hi}
	}
	return s
}

func repeat(d int, v float64) []float64 {
	x := make([]float64, d)
	for i := range x {
		x[i] = v
	}
	return x
}

// GramacyLee is f(x) = sin(10πx)/(2x) + (x − 1)⁴ on [0.5, 2.5] (Gramacy
// and Lee 2012; page grlee12). The page gives no minimum: −0.869011 at
// x = 0.548563 is from a grid of 10⁶ points refined by golden section
// (ours; TestPublishedMinima and TestNothingBelowTheMinimum check it).
func GramacyLee() Function {
	return Function{
		Name:   "gramacy-lee",
		Space:  campaign.Space{{Name: "x", Min: 0.5, Max: 2.5}},
		F:      func(x []float64) float64 { return math.Sin(10*math.Pi*x[0])/(2*x[0]) + math.Pow(x[0]-1, 4) },
		Min:    -0.869011,
		ArgMin: []float64{0.548563},
	}
}

// Michalewicz is f(x) = −Σ sin(xᵢ) sin²ᵐ(i·xᵢ²/π), m = 10, on [0, π]ᵈ: a
// flat plateau cut by narrow valleys (page michal). Minima: −1.8013 at
// (2.20, 1.57) for d = 2, −4.687658 for d = 5 (the page gives no minimiser
// for d = 5; 2.202906, 1.570796, 1.284992, 1.923058, 1.720470 is from
// local refinement, ours).
func Michalewicz(d int) Function {
	f := Function{
		Name:  fmt.Sprintf("michalewicz %d", d),
		Space: cube(d, 0, math.Pi),
		F: func(x []float64) float64 {
			var s float64
			for i, v := range x {
				s += math.Sin(v) * math.Pow(math.Sin(float64(i+1)*v*v/math.Pi), 20)
			}
			return -s
		},
	}
	switch d {
	case 2:
		f.Min, f.ArgMin = -1.8013, []float64{2.20, 1.57}
	case 5:
		f.Min, f.ArgMin = -4.687658, []float64{2.202906, 1.570796, 1.284992, 1.923058, 1.720470}
	default:
		panic("testfn: Michalewicz is defined here for 2 and 5 factors")
	}
	return f
}

// Rosenbrock is f(x) = Σ [100(xᵢ₊₁ − xᵢ²)² + (xᵢ − 1)²] on [−2.048,
// 2.048]ᵈ, the page's second domain: a curved, narrow valley whose values
// span five orders of magnitude (page rosen); minimum 0 at (1, …, 1).
func Rosenbrock(d int) Function {
	return Function{
		Name:  fmt.Sprintf("rosenbrock %d", d),
		Space: cube(d, -2.048, 2.048),
		F: func(x []float64) float64 {
			var s float64
			for i := 0; i+1 < len(x); i++ {
				a, b := x[i+1]-x[i]*x[i], x[i]-1
				s += 100*a*a + b*b
			}
			return s
		},
		Min:    0,
		ArgMin: repeat(d, 1),
	}
}

// Levy is the Levy function on [−10, 10]ᵈ, w = 1 + (x − 1)/4 (page levy):
//
//	f = sin²(πw₁) + Σᵢ₌₁ᵈ⁻¹ (wᵢ − 1)²[1 + 10 sin²(πwᵢ + 1)] + (w_d − 1)²[1 + sin²(2πw_d)]
//
// many local minima; minimum 0 at (1, …, 1).
func Levy(d int) Function {
	return Function{
		Name:  fmt.Sprintf("levy %d", d),
		Space: cube(d, -10, 10),
		F: func(x []float64) float64 {
			w := func(i int) float64 { return 1 + (x[i]-1)/4 }
			s := math.Pow(math.Sin(math.Pi*w(0)), 2)
			for i := 0; i+1 < len(x); i++ {
				s += (w(i) - 1) * (w(i) - 1) * (1 + 10*math.Pow(math.Sin(math.Pi*w(i)+1), 2))
			}
			wd := w(len(x) - 1)
			return s + (wd-1)*(wd-1)*(1+math.Pow(math.Sin(2*math.Pi*wd), 2))
		},
		Min:    0,
		ArgMin: repeat(d, 1),
	}
}

// StyblinskiTang is f(x) = ½ Σ (xᵢ⁴ − 16xᵢ² + 5xᵢ) on [−5, 5]ᵈ: 2ᵈ
// wells, one of them the deepest (page stybtang); minimum −39.16599·d at
// xᵢ = −2.903534.
func StyblinskiTang(d int) Function {
	return Function{
		Name:   fmt.Sprintf("styblinski-tang %d", d),
		Space:  cube(d, -5, 5),
		F:      stybTang,
		Min:    -39.16599 * float64(d),
		ArgMin: repeat(d, -2.903534),
	}
}

func stybTang(x []float64) float64 {
	var s float64
	for _, v := range x {
		s += v*v*v*v - 16*v*v + 5*v
	}
	return s / 2
}

// StyblinskiTangMixed is StyblinskiTang(3) with its last factor whole
// numbers from −5 to 5: a mixed-factor variant (ours). The best whole
// value is −3, where the term is (81 − 144 − 15)/2 = −39, so the minimum
// is 2·(−39.16599) − 39 = −117.33198.
func StyblinskiTangMixed() Function {
	s := cube(3, -5, 5)
	s[2].Kind = campaign.Integer
	return Function{
		Name:   "styblinski-tang mixed 3",
		Space:  s,
		F:      stybTang,
		Min:    2*-39.16599 - 39,
		ArgMin: []float64{-2.903534, -2.903534, -3},
	}
}

// McCormick is f(x) = sin(x₁ + x₂) + (x₁ − x₂)² − 1.5x₁ + 2.5x₂ + 1 on
// [−1.5, 4] × [−3, 4] (page mccorm); minimum −1.9133 at (−0.54719,
// −1.54719).
func McCormick() Function {
	return Function{
		Name:  "mccormick",
		Space: campaign.Space{{Name: "x1", Min: -1.5, Max: 4}, {Name: "x2", Min: -3, Max: 4}},
		F: func(x []float64) float64 {
			a, b := x[0], x[1]
			return math.Sin(a+b) + (a-b)*(a-b) - 1.5*a + 2.5*b + 1
		},
		Min:    -1.9133,
		ArgMin: []float64{-0.54719, -1.54719},
	}
}

// Beale is f(x) = (1.5 − x₁ + x₁x₂)² + (2.25 − x₁ + x₁x₂²)² + (2.625 − x₁ +
// x₁x₂³)² on [−4.5, 4.5]²: sharp ridges at the corners, values from 0 to
// about 10⁵ (page beale); minimum 0 at (3, 0.5).
func Beale() Function {
	return Function{
		Name:  "beale",
		Space: cube(2, -4.5, 4.5),
		F: func(x []float64) float64 {
			a, b := x[0], x[1]
			t1, t2, t3 := 1.5-a+a*b, 2.25-a+a*b*b, 2.625-a+a*b*b*b
			return t1*t1 + t2*t2 + t3*t3
		},
		Min:    0,
		ArgMin: []float64{3, 0.5},
	}
}

// HolderTable is f(x) = −|sin x₁ cos x₂ exp(|1 − √(x₁² + x₂²)/π|)| on
// [−10, 10]² (page holder); minimum −19.2085 at (±8.05502, ±9.66459).
func HolderTable() Function {
	return Function{
		Name:  "holder table",
		Space: cube(2, -10, 10),
		F: func(x []float64) float64 {
			r := math.Hypot(x[0], x[1])
			return -math.Abs(math.Sin(x[0]) * math.Cos(x[1]) * math.Exp(math.Abs(1-r/math.Pi)))
		},
		Min:    -19.2085,
		ArgMin: []float64{8.05502, 9.66459},
	}
}

// CrossInTray is f(x) = −0.0001(|sin x₁ sin x₂ exp(|100 − √(x₁² +
// x₂²)/π|)| + 1)^0.1 on [−10, 10]² (page crossit); minimum −2.06261 at
// (±1.3491, ±1.3491).
func CrossInTray() Function {
	return Function{
		Name:  "cross-in-tray",
		Space: cube(2, -10, 10),
		F: func(x []float64) float64 {
			r := math.Hypot(x[0], x[1])
			return -0.0001 * math.Pow(math.Abs(math.Sin(x[0])*math.Sin(x[1])*math.Exp(math.Abs(100-r/math.Pi)))+1, 0.1)
		},
		Min:    -2.06261,
		ArgMin: []float64{1.3491, 1.3491},
	}
}

// Trid is f(x) = Σ (xᵢ − 1)² − Σᵢ₌₂ᵈ xᵢxᵢ₋₁ on [−d², d²]ᵈ, a quadratic
// bowl whose axes are not the factors' (page trid); minimum −d(d + 4)(d −
// 1)/6 at xᵢ = i(d + 1 − i).
func Trid(d int) Function {
	arg := make([]float64, d)
	for i := range arg {
		arg[i] = float64((i + 1) * (d - i))
	}
	dd := float64(d)
	return Function{
		Name:  fmt.Sprintf("trid %d", d),
		Space: cube(d, -dd*dd, dd*dd),
		F: func(x []float64) float64 {
			var s float64
			for i, v := range x {
				s += (v - 1) * (v - 1)
				if i > 0 {
					s -= v * x[i-1]
				}
			}
			return s
		},
		Min:    -dd * (dd + 4) * (dd - 1) / 6,
		ArgMin: arg,
	}
}

// Powell is Powell's singular function on [−4, 5]ᵈ, d a multiple of 4
// (page powell): for each block of four factors
//
//	(x₁ + 10x₂)² + 5(x₃ − x₄)² + (x₂ − 2x₃)⁴ + 10(x₁ − x₄)⁴,
//
// a convex bowl whose Hessian is doubly singular at the minimum (Steihaug
// and Suleiman, "Global convergence and the Powell singular function",
// J. Global Optim.), its values spanning five orders of magnitude over the
// box; minimum 0 at the origin. The page's domain and minimum are as we
// recall them; the benchmarkfcns documentation (powellsingular) gives the
// same.
func Powell(d int) Function {
	return Function{
		Name:  fmt.Sprintf("powell %d", d),
		Space: cube(d, -4, 5),
		F: func(x []float64) float64 {
			var s float64
			for i := 0; i+3 < len(x); i += 4 {
				a, b, c, e := x[i]+10*x[i+1], x[i+2]-x[i+3], x[i+1]-2*x[i+2], x[i]-x[i+3]
				s += a*a + 5*b*b + c*c*c*c + 10*e*e*e*e
			}
			return s
		},
		Min:    0,
		ArgMin: repeat(d, 0),
	}
}
