package vexp

import (
	"math"
	"math/rand/v2"
	"testing"
)

// Against math.Exp over the range the kernels use (−s ≤ 0 down to the
// floor) and a little above zero, to 4 units in the last place.
func TestAgainstMathExp(t *testing.T) {
	r := rand.New(rand.NewPCG(1, 2))
	src := []float64{0, -0, 1, -1, 0.5 * math.Ln2, -0.5 * math.Ln2, -700, -708.39, -708.4, -709, -745, -800, -1e300, math.Inf(-1), 5, 709}
	for range 100000 {
		switch r.IntN(3) {
		case 0:
			src = append(src, -r.Float64()*4)
		case 1:
			src = append(src, -r.Float64()*720)
		default:
			src = append(src, -math.Exp(r.Float64()*20-10))
		}
	}
	got := make([]float64, len(src))
	Exp(got, src)
	for i, x := range src {
		want := portable(x)
		if want == 0 || got[i] == 0 {
			if got[i] != want {
				t.Errorf("exp(%v) = %v, want %v", x, got[i], want)
			}
			continue
		}
		if ulps := math.Abs(got[i]-want) / (math.Nextafter(want, math.Inf(1)) - want); ulps > 4 {
			t.Errorf("exp(%v) = %v, math.Exp gives %v (%.1f ulp apart)", x, got[i], want, ulps)
		}
	}
}

// In place, and with lengths that leave a tail for math.Exp.
func TestInPlaceAndTails(t *testing.T) {
	for n := 0; n < 11; n++ {
		x := make([]float64, n)
		for i := range x {
			x[i] = -float64(i) / 3
		}
		Exp(x, x)
		for i, v := range x {
			if want := math.Exp(-float64(i) / 3); math.Abs(v-want) > 1e-15*want {
				t.Errorf("n=%d: exp(%v) = %v, want %v", n, -float64(i)/3, v, want)
			}
		}
	}
}

func BenchmarkExp(b *testing.B) {
	src := make([]float64, 1000)
	for i := range src {
		src[i] = -float64(i) / 100
	}
	dst := make([]float64, len(src))
	b.Run("vexp", func(b *testing.B) {
		for b.Loop() {
			Exp(dst, src)
		}
	})
	b.Run("math", func(b *testing.B) {
		for b.Loop() {
			for i, x := range src {
				dst[i] = math.Exp(x)
			}
		}
	})
}
