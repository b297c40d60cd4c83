package agent

import (
	"context"
	"fmt"
	"math/rand/v2"
	"testing"

	"benchtender/campaign"
	"benchtender/planner"
	"benchtender/safety"
)

// The best move inside every limit always passes the gate. For random
// limits (a review box, ramp limits on both factors, a rule over the two),
// a random previous setpoint and random runs so far, the planner confined
// by insideLimits proposes a move that the gate passes as it would be
// written; when it finds none, no move in the box passes either.
func TestAlternativeAlwaysPassesTheGate(t *testing.T) {
	tc := newTestCampaign(t, "40", passLimits)
	space := tc.cfg.Campaign.Factors
	seeds := 40
	if testing.Short() {
		seeds = 10
	}
	for seed := uint64(1); seed <= uint64(seeds); seed++ {
		rng := rand.New(rand.NewPCG(seed, 99))
		u := func(lo, hi float64) float64 { return lo + rng.Float64()*(hi-lo) }
		rmin := u(20, 60)
		rmax := u(rmin+5, 80)
		tempStep, flowStep := u(2, 20), u(0.2, 2)
		cfg := tc.cfg
		cfg.Safety = safety.Default()
		cfg.Safety.Limits = map[string]safety.Limit{
			"temp": {HardMin: ptr(20), HardMax: ptr(80), ReviewMin: ptr(rmin), ReviewMax: ptr(rmax), MaxStep: ptr(tempStep)},
			"flow": {HardMin: ptr(1), HardMax: ptr(5), MaxStep: ptr(flowStep)},
		}
		cfg.Safety.Rules = []safety.Rule{{Name: "hot_fast", When: fmt.Sprintf("temp > %.1f && flow > %.2f", u(30, 70), u(1.5, 4.5)), Action: "hold", Message: "hot and fast"}}
		if ps := cfg.Safety.Validate(space); len(ps) > 0 {
			t.Fatalf("seed %d: limits do not validate: %v", seed, ps)
		}
		gate := safety.NewGate(cfg.Safety, space)
		prev := campaign.Point{u(20, 80), u(1, 5)}
		var trials []campaign.Trial
		for i := 0; i < 6+int(seed%5); i++ {
			trials = append(trials, campaign.Trial{Point: campaign.Point{u(20, 80), u(1, 5)}, Value: u(0, 100)})
		}
		box, passes := insideLimits(cfg, gate, prev)
		pl := planner.New(cfg.Campaign, cfg.Planner)
		res, err := pl.Propose(context.Background(), planner.Request{RunID: "R0099", Index: len(trials), Trials: trials, Region: box, Allowed: passes})
		if err != nil {
			for i := 0; i < 20000; i++ {
				if p := (campaign.Point{u(20, 80), u(1, 5)}); passes(p) {
					t.Fatalf("seed %d: no alternative (%v), yet %v passes the gate", seed, err, p)
				}
			}
			continue
		}
		alt := roundPoint(space, res.Proposal.Point)
		if d := gate.Check(campaign.Setpoint{RunID: "R0099", Point: alt}, prev); d.Verdict != safety.Pass {
			t.Fatalf("seed %d: the alternative %v from %v is %s by the gate: %s", seed, alt, prev, d.Verdict, d.Summary())
		}
	}
}

func ptr(v float64) *float64 { return &v }
