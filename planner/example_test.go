package planner_test

import (
	"context"
	"fmt"

	"benchtender/campaign"
	"benchtender/planner"
)

func Example() {
	cc := campaign.Config{
		Name: "example", StateDir: "state", Seed: 3, MaxRuns: 20, InitialRuns: 4,
		Factors:  campaign.Space{{Name: "temp", Unit: "degC", Min: 20, Max: 80}},
		Response: campaign.Response{Name: "loss", Goal: campaign.Minimise},
	}
	p := planner.New(cc, planner.Default())
	f := func(x campaign.Point) float64 { return (x[0] - 47) * (x[0] - 47) }
	var trials []campaign.Trial
	for i := 0; i < 12; i++ {
		res, err := p.Propose(context.Background(), planner.Request{RunID: fmt.Sprintf("R%d", i), Index: i, Trials: trials})
		if err != nil {
			panic(err)
		}
		trials = append(trials, campaign.Trial{Point: res.Proposal.Point, Value: f(res.Proposal.Point)})
	}
	best := trials[0]
	for _, t := range trials {
		if t.Value < best.Value {
			best = t
		}
	}
	fmt.Printf("best temp after 12 runs: %.0f degC\n", best.Point[0])
	// Output:
	// best temp after 12 runs: 47 degC
}
