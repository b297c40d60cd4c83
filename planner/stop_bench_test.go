package planner

import (
	"context"
	"fmt"
	"math/rand/v2"
	"testing"

	"benchtender/campaign"
	"benchtender/planner/testfn"
)

// BenchmarkProposeStopping measures a proposal at 30 and 200 runs of Hartmann 6-D
// with the stopping rule off and with it on and always working out the
// location tests (ei_below so large that the improvement test always
// passes, and the best run's basin set aside and released once, so that
// the search elsewhere has been made): the rule's cost is the difference. Compare the two with
//
//	go test ./planner -run XXX -bench ProposeStopping -count 6 | benchstat -
func BenchmarkProposeStopping(b *testing.B) {
	f := testfn.Hartmann6()
	tol := map[string]float64{}
	for _, fa := range f.Space {
		tol[fa.Name] = 0.01
	}
	for _, n := range []int{30, 200} {
		rng := rand.New(rand.NewPCG(1, 2))
		var trials []campaign.Trial
		for i := 0; i < n; i++ {
			x := make(campaign.Point, 6)
			for k := range x {
				x[k] = rng.Float64()
			}
			trials = append(trials, campaign.Trial{Point: x, Value: f.F(x)})
		}
		best := trials[0]
		for _, t := range trials {
			if t.Value < best.Value {
				best = t
			}
		}
		searched := []Aside{{Run: 0, Centre: best.Point, Scales: []float64{1, 1, 1, 1, 1, 1}, From: n - 1}, {Release: true, From: n - 1}}
		for _, rule := range []string{"off", "on"} {
			b.Run(fmt.Sprintf("N=%d/rule=%s", n, rule), func(b *testing.B) {
				cfg := Default()
				if rule == "on" {
					cfg.Stop = StopConfig{Tolerance: tol, EIBelow: 1e9, SearchElsewhere: true}
				}
				cc := campaign.Config{Name: "b", StateDir: "x", Seed: 1, MaxRuns: 1000, Factors: f.Space,
					Response: campaign.Response{Name: "y", Goal: campaign.Minimise}}
				p := New(cc, cfg)
				res, err := p.Propose(context.Background(), Request{RunID: "R", Index: n, Trials: trials[:n-1], Aside: searched})
				if err != nil {
					b.Fatal(err)
				}
				// One run more than the model had, as when a result
				// arrives: from 100 runs on the model is conditioned on
				// it with its hyperparameters held (hold.go).
				b.ResetTimer()
				for i := 0; i < b.N; i++ {
					if _, err := p.Propose(context.Background(), Request{RunID: "R", Index: n, Trials: trials, Aside: searched, Warm: res.Fit, Previous: res.Surrogate}); err != nil {
						b.Fatal(err)
					}
				}
			})
		}
	}
}
