package planner

import (
	"context"
	"math"
	"math/rand/v2"
	"testing"

	"benchtender/campaign"
	"benchtender/planner/acquisition"
)

// Scoring candidates in the order of their bound and stopping early must
// find the same best candidates, with the same scores, as scoring every
// one; and it must score fewer of them.
func TestBoundedSearchFindsTheSameCandidates(t *testing.T) {
	cc := unitCampaign(4, 500)
	p := New(cc, Default())
	rng := rand.New(rand.NewPCG(2, 3))
	var trials []campaign.Trial
	for i := 0; i < 150; i++ {
		pt := campaign.Point{rng.Float64(), rng.Float64(), rng.Float64(), rng.Float64()}
		y := math.Sin(5*pt[0]) + (pt[1]-0.4)*(pt[1]-0.4) + math.Cos(4*pt[2]*pt[3])
		trials = append(trials, campaign.Trial{Point: pt, Value: y})
	}
	ft, err := p.fit(trials, nil, nil, rand.New(rand.NewPCG(1, 1)))
	if err != nil {
		t.Fatal(err)
	}
	best := p.bestMean(ft.Model, ft.x)
	for _, c := range []struct {
		name string
		f    func(u []float64, mu, sd float64) float64
	}{
		{"expected improvement", func(_ []float64, mu, sd float64) float64 { return acquisition.LogExpectedImprovement(mu, sd, best) }},
		{"confidence bound", func(_ []float64, mu, sd float64) float64 { return -acquisition.LowerConfidenceBound(mu, sd, 2) }},
	} {
		t.Run(c.name, func(t *testing.T) {
			bounded := p.byModel(ft.Model, true, c.f)
			full := bounded
			full.bound = nil
			cands := LatinHypercube(2000, 4, rand.New(rand.NewPCG(4, 5)))
			us := make([][]float64, len(cands))
			for i, u := range cands {
				us[i] = u
			}
			const k = 5
			want, err := p.topCandidates(context.Background(), full, us, k)
			if err != nil {
				t.Fatal(err)
			}
			got, err := p.topCandidates(context.Background(), bounded, us, k)
			if err != nil {
				t.Fatal(err)
			}
			for j := 0; j < k; j++ {
				if got[j] != want[j] {
					t.Errorf("candidate %d: got %+v, scoring all gives %+v", j, got[j], want[j])
				}
			}
			t.Logf("scored %d of %d candidates", len(got), len(us))
			if len(got) >= len(us) {
				t.Errorf("the bound saved nothing: scored %d of %d", len(got), len(us))
			}
		})
	}
}

// A cancelled context ends the lockstep refinements promptly with the
// context's error, every goroutine finished.
func TestRefineStopsWhenCancelled(t *testing.T) {
	cc := unitCampaign(2, 10)
	p := New(cc, Default())
	ctx, cancel := context.WithCancel(context.Background())
	calls := 0
	score := pointwise(func(u []float64) float64 {
		calls++
		if calls == 20 {
			cancel()
		}
		return -(u[0]-0.3)*(u[0]-0.3) - (u[1]-0.6)*(u[1]-0.6)
	})
	_, err := p.refine(ctx, score, [][]float64{{0.1, 0.1}, {0.9, 0.9}, {0.5, 0.5}})
	if err != context.Canceled {
		t.Fatalf("got %v, want context.Canceled", err)
	}
	if calls > 25 {
		t.Errorf("%d points scored after cancelling at the 20th", calls)
	}
}
