package testfn

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/optimize/functions"
)

// Each function takes its published minimum (Surjanovic and Bingham) at
// its published minimiser, to the digits published (those minimisers are
// rounded, so a tolerance of 1e-4 relative).
func TestPublishedMinima(t *testing.T) {
	for _, f := range All() {
		got := f.F(f.ArgMin)
		if math.Abs(got-f.Min) > 1e-4*math.Abs(f.Min) {
			t.Errorf("%s(%v) = %.6f, published minimum %.6f", f.Name, f.ArgMin, got, f.Min)
		}
		if !f.Space.Contains(f.ArgMin) {
			t.Errorf("%s: minimiser outside the domain", f.Name)
		}
	}
}

// Branin agrees with gonum's BraninHoo at its three minima.
func TestBraninAgreesWithGonum(t *testing.T) {
	b := Branin()
	for _, m := range (functions.BraninHoo{}).Minima() {
		if got, want := b.F(m.X), (functions.BraninHoo{}).Func(m.X); math.Abs(got-want) > 1e-12 {
			t.Errorf("branin(%v) = %.12f, gonum %.12f", m.X, got, want)
		}
	}
}

// No point of a fine grid (or of random points in 6-D) lies below the
// published minimum by more than its rounding.
func TestNothingBelowTheMinimum(t *testing.T) {
	for _, f := range All()[:3] {
		steps := 400
		if f.Space.Dim() == 1 {
			steps = 100000
		}
		x := make([]float64, f.Space.Dim())
		var walk func(k int)
		lowest := math.Inf(1)
		walk = func(k int) {
			if k == len(x) {
				lowest = math.Min(lowest, f.F(x))
				return
			}
			for i := 0; i <= steps; i++ {
				x[k] = f.Space[k].Min + float64(i)/float64(steps)*(f.Space[k].Max-f.Space[k].Min)
				walk(k + 1)
			}
		}
		walk(0)
		if lowest < f.Min-1e-4*math.Abs(f.Min) {
			t.Errorf("%s: grid value %.6f below the published minimum %.6f", f.Name, lowest, f.Min)
		}
		if lowest > f.Min+0.01*math.Abs(f.Min) {
			t.Errorf("%s: grid minimum %.6f far above %.6f", f.Name, lowest, f.Min)
		}
	}
}
