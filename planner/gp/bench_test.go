package gp

import (
	"fmt"
	"math/rand/v2"
	"testing"
)

// Benchmarks of fitting (hyperparameters by L-BFGS, default start plus one
// random start, no warm start) and of prediction, at the sizes of lab
// campaigns. Run: go test ./planner/gp -run XXX -bench . -benchtime 3x
func BenchmarkFit(b *testing.B) {
	for _, n := range []int{50, 200, 300, 1000} {
		for _, d := range []int{2, 6} {
			b.Run(fmt.Sprintf("N=%d/d=%d", n, d), func(b *testing.B) {
				rng := rand.New(rand.NewPCG(uint64(n), uint64(d)))
				x, y := randomData(rng, n, d, wave, 0.05)
				b.ResetTimer()
				for i := 0; i < b.N; i++ {
					if _, err := Fit(x, y, FitOptions{Starts: 1, Rand: rand.New(rand.NewPCG(1, uint64(i)))}); err != nil {
						b.Fatal(err)
					}
				}
			})
		}
	}
}

// BenchmarkRefit is the refit when one run arrives: warm-started from the
// previous fit, as the planner does.
func BenchmarkRefit(b *testing.B) {
	for _, n := range []int{50, 200, 300, 1000} {
		for _, d := range []int{2, 6} {
			b.Run(fmt.Sprintf("N=%d/d=%d", n, d), func(b *testing.B) {
				rng := rand.New(rand.NewPCG(uint64(n), uint64(d)))
				x, y := randomData(rng, n+1, d, wave, 0.05)
				prev, err := Fit(x[:n], y[:n], FitOptions{Starts: 1, Rand: rng})
				if err != nil {
					b.Fatal(err)
				}
				warm := prev.Params()
				b.ResetTimer()
				for i := 0; i < b.N; i++ {
					if _, err := Fit(x, y, FitOptions{Warm: &warm, Starts: 1, Rand: rand.New(rand.NewPCG(1, uint64(i)))}); err != nil {
						b.Fatal(err)
					}
				}
			})
		}
	}
}

func BenchmarkPredict(b *testing.B) {
	for _, n := range []int{50, 200, 1000} {
		for _, d := range []int{2, 6} {
			b.Run(fmt.Sprintf("N=%d/d=%d", n, d), func(b *testing.B) {
				rng := rand.New(rand.NewPCG(uint64(n), uint64(d)))
				x, y := randomData(rng, n, d, wave, 0.05)
				m, err := New(x, y, defaultParams(Matern52, d))
				if err != nil {
					b.Fatal(err)
				}
				pt := make([]float64, d)
				b.ResetTimer()
				for i := 0; i < b.N; i++ {
					pt[i%d] = float64(i%97) / 97
					m.Predict(pt)
				}
			})
		}
	}
}

// BenchmarkPredictMany is Predict over 2,000 candidate points, one at a
// time against in blocks (PredictMany).
func BenchmarkPredictMany(b *testing.B) {
	for _, n := range []int{30, 80, 200, 1000} {
		rng := rand.New(rand.NewPCG(uint64(n), 6))
		x, y := randomData(rng, n, 6, wave, 0.05)
		m, err := New(x, y, defaultParams(Matern52, 6))
		if err != nil {
			b.Fatal(err)
		}
		pts, _ := randomData(rng, 2000, 6, wave, 0)
		mean, variance := make([]float64, len(pts)), make([]float64, len(pts))
		b.Run(fmt.Sprintf("N=%d/one-by-one", n), func(b *testing.B) {
			for i := 0; i < b.N; i++ {
				for _, pt := range pts {
					m.Predict(pt)
				}
			}
		})
		b.Run(fmt.Sprintf("N=%d/blocks", n), func(b *testing.B) {
			for i := 0; i < b.N; i++ {
				m.PredictMany(pts, mean, variance)
			}
		})
	}
}

// BenchmarkCondition is one more run with the hyperparameters held: the
// factor extended (Condition) against rebuilt (New).
func BenchmarkCondition(b *testing.B) {
	for _, n := range []int{200, 1000} {
		rng := rand.New(rand.NewPCG(uint64(n), 6))
		x, y := randomData(rng, n+1, 6, wave, 0.05)
		prev, err := New(x[:n], y[:n], defaultParams(Matern52, 6))
		if err != nil {
			b.Fatal(err)
		}
		b.Run(fmt.Sprintf("N=%d/extend", n), func(b *testing.B) {
			for i := 0; i < b.N; i++ {
				if _, err := Condition(prev, x, y); err != nil {
					b.Fatal(err)
				}
			}
		})
		b.Run(fmt.Sprintf("N=%d/rebuild", n), func(b *testing.B) {
			for i := 0; i < b.N; i++ {
				if _, err := New(x, y, prev.Params()); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

// BenchmarkPredictManyAdditive is BenchmarkPredictMany's 200 runs × 6
// inputs with an additive share: the cost of the additive terms in the
// candidates' cross-covariances.
func BenchmarkPredictManyAdditive(b *testing.B) {
	rng := rand.New(rand.NewPCG(1, 2))
	x, y := randomData(rng, 200, 6, wave, 0.01)
	for _, w := range []float64{0, 0.3} {
		m, err := New(x, y, Params{Kernel: Matern52, LengthScales: []float64{0.3, 0.4, 0.5, 0.3, 0.6, 0.2}, SignalVar: 1, NoiseVar: 1e-3, Additive: w})
		if err != nil {
			b.Fatal(err)
		}
		xs, _ := randomData(rng, 2000, 6, wave, 0)
		mean, sd := make([]float64, len(xs)), make([]float64, len(xs))
		b.Run(fmt.Sprintf("additive=%g", w), func(b *testing.B) {
			for i := 0; i < b.N; i++ {
				m.MeanBound(xs, mean, sd)
			}
		})
	}
}
