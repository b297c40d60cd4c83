package planner

import (
	"math"
	"math/rand/v2"
	"testing"
)

// Check values from the normal distribution's table (any statistics text;
// e.g. Abramowitz and Stegun 1964, table 26.1): the central 90% of a
// normal is mean ± 1.645 sd, and for a symmetric unimodal density the
// highest-density region is that central interval. A mixture of two
// equal, well-separated normals N(-3, 0.5²) and N(3, 0.5²) has its 90%
// highest-density region in two pieces, each 90% of its own component:
// ±1.645 × 0.5 = ±0.82 around -3 and 3 (Hyndman 1996, section 2).
func TestHighestDensityOnKnownDistributions(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	normal := make([]float64, 20000)
	for i := range normal {
		normal[i] = rng.NormFloat64()
	}
	pieces, err := HighestDensity(normal, -6, 6, 0.9)
	if err != nil {
		t.Fatal(err)
	}
	if len(pieces) != 1 || math.Abs(pieces[0].Lo+1.645) > 0.06 || math.Abs(pieces[0].Hi-1.645) > 0.06 || math.Abs(pieces[0].Mode) > 0.15 || math.Abs(pieces[0].Mass-0.9) > 0.01 {
		t.Errorf("standard normal: %+v; want one piece ±1.645 holding 0.9, mode 0", pieces)
	}
	mix := make([]float64, 20000)
	for i := range mix {
		c := -3.0
		if i%2 == 1 {
			c = 3
		}
		mix[i] = c + 0.5*rng.NormFloat64()
	}
	pieces, err = HighestDensity(mix, -6, 6, 0.9)
	if err != nil {
		t.Fatal(err)
	}
	if len(pieces) != 2 {
		t.Fatalf("mixture: %v, want two pieces", pieces)
	}
	for i, c := range []float64{-3, 3} {
		if math.Abs(pieces[i].Lo-(c-0.82)) > 0.06 || math.Abs(pieces[i].Hi-(c+0.82)) > 0.06 || math.Abs(pieces[i].Mass-0.45) > 0.01 {
			t.Errorf("mixture piece %d = %v, want %.2f to %.2f", i, pieces[i], c-0.82, c+0.82)
		}
	}
	// Mass piled at a bound stays inside the range: half-normal on [0, 4]
	// has its 90% region [0, 1.645] (the normal's 95% quantile).
	half := make([]float64, 20000)
	for i := range half {
		half[i] = math.Abs(rng.NormFloat64())
	}
	pieces, _ = HighestDensity(half, 0, 4, 0.9)
	if len(pieces) != 1 || pieces[0].Lo != 0 || math.Abs(pieces[0].Hi-1.645) > 0.08 {
		t.Errorf("half-normal: %+v, want [0, 1.645]", pieces)
	}
	// A few dozen draws, a fifth of them piled at the upper bound: the
	// heaviest piece is the one around the bulk, not the bound's peak.
	few := make([]float64, 64)
	for i := range few {
		few[i] = 5.5 + 0.3*rng.NormFloat64()
		if i%5 == 0 {
			few[i] = 7.5
		}
	}
	pieces, _ = HighestDensity(few, 4, 7.5, 0.9)
	if h := Heaviest(pieces); h.Lo > 5.2 || h.Hi < 5.8 || math.Abs(h.Mode-5.5) > 0.3 {
		t.Errorf("64 draws: %+v, heaviest %+v", pieces, h)
	}
}
