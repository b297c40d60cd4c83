package testfn

import (
	"math"
	"testing"

	"benchtender/planner/pareto"
)

// Each pair's FrontHV is the hypervolume of points along its true front,
// and the functions give the published values at points worked by hand.
func TestPairFronts(t *testing.T) {
	for _, c := range []struct {
		p   Pair
		n   int
		tol float64 // the front's points dominate a staircase just under FrontHV
	}{
		{ZDT1(3), 100000, 1e-4}, {ZDT2(3), 100000, 1e-4}, {ZDT3(3), 100000, 1e-4}, {DTLZ2(3), 100000, 1e-4},
		{BraninCurrin(), 200, 0.003},
	} {
		hv := pareto.Hypervolume(c.p.Front(c.n), c.p.Ref[:])
		if gap := (c.p.FrontHV - hv) / c.p.FrontHV; gap < -1e-5 || gap > c.tol {
			t.Errorf("%s: %d points along the front dominate %v; FrontHV is %v", c.p.Name, c.n, hv, c.p.FrontHV)
		}
	}
	for _, c := range []struct {
		p    Pair
		x    []float64
		want [2]float64
	}{
		{ZDT1(3), []float64{0.25, 0, 0}, [2]float64{0.25, 0.5}},                          // 1 − √0.25
		{ZDT2(3), []float64{0.5, 0, 0}, [2]float64{0.5, 0.75}},                           // 1 − 0.5²
		{ZDT3(3), []float64{0.25, 0, 0}, [2]float64{0.25, 0.25}},                         // 1 − 0.5 − 0.25·sin(2.5π)
		{DTLZ2(3), []float64{0.5, 0.5, 0.5}, [2]float64{math.Sqrt2 / 2, math.Sqrt2 / 2}}, // on the circle
		// Currin at (0.5, 0.5): (1 − e⁻¹)·1868.5/159.5; Branin at its
		// minimiser (π, 2.275), here ((π+5)/15, 2.275/15).
		{BraninCurrin(), []float64{0.5, 0.5}, [2]float64{Branin().F([]float64{2.5, 7.5}), (1 - math.Exp(-1)) * 1868.5 / 159.5}},
		{BraninCurrin(), []float64{(math.Pi + 5) / 15, 2.275 / 15}, [2]float64{0.397887, math.NaN()}},
	} {
		got := c.p.F(c.x)
		for k := range got {
			if !math.IsNaN(c.want[k]) && math.Abs(got[k]-c.want[k]) > 1e-5 {
				t.Errorf("%s at %v: %v, want %v", c.p.Name, c.x, got, c.want)
			}
		}
	}
}
