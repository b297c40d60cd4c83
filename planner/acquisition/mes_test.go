package acquisition

import (
	"math"
	"testing"
)

// Max-value entropy search's term ln h(γ) against mpmath at 50 digits
// (testdata/gen_vectors.py): within 1e-11 relative across the three forms
// and their switches at 0 and 5, and where φ(γ) underflows (γ = 40, 100,
// 1000) and the direct formula gives −Inf. (Far below 0 the two terms'
// γ²/2 cancel: about γ² machine epsilons, 3e-12 relative at γ = −1000.)
func TestLogMESTermAgainstMpmath(t *testing.T) {
	v := loadVectors(t)
	if len(v.LogMES) == 0 {
		t.Fatal("no log_mes vectors")
	}
	for _, c := range v.LogMES {
		if got := logMESTerm(c[0]); relErr(got, c[1]) > 1e-11 {
			t.Errorf("logMESTerm(%g) = %.17g, mpmath %.17g (rel err %.2g)", c[0], got, c[1], relErr(got, c[1]))
		}
	}
}

// The average over draws: one draw is that draw's term; two equal draws
// are the same; a point whose mean is far above every drawn minimum scores
// far below one near them; no spread, no score.
func TestLogMaxValueEntropy(t *testing.T) {
	if got, want := LogMaxValueEntropy(1, 2, []float64{0}), logMESTerm(0.5); got != want {
		t.Errorf("one draw: %v, want %v", got, want)
	}
	if got, want := LogMaxValueEntropy(1, 2, []float64{0, 0}), logMESTerm(0.5); math.Abs(got-want) > 1e-15 {
		t.Errorf("two equal draws: %v, want %v", got, want)
	}
	two := LogMaxValueEntropy(1, 2, []float64{0, -2})
	if want := math.Log((math.Exp(logMESTerm(0.5)) + math.Exp(logMESTerm(1.5))) / 2); math.Abs(two-want) > 1e-14 {
		t.Errorf("two draws: %v, want %v", two, want)
	}
	if far, near := LogMaxValueEntropy(100, 1, []float64{0, -1}), LogMaxValueEntropy(0.5, 1, []float64{0, -1}); !(far < near-1000) || math.IsInf(far, 0) {
		t.Errorf("far above the minima %v, near them %v: want a finite, much lower score far above", far, near)
	}
	if got := LogMaxValueEntropy(1, 0, []float64{0}); !math.IsInf(got, -1) {
		t.Errorf("sd 0: %v, want -Inf", got)
	}
}
