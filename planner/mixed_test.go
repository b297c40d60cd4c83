package planner

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"benchtender/campaign"
)

// randomCampaign builds a campaign of 2-5 factors of every kind with a
// constraint over two continuous factors and one tying a category to a
// continuous factor.
func randomCampaign(rng *rand.Rand, seed uint64) campaign.Config {
	space := campaign.Space{
		{Name: "a", Min: 0, Max: 1},
		{Name: "b", Min: 0, Max: 1},
	}
	extra := []campaign.Factor{
		{Name: "n", Kind: campaign.Integer, Min: 1, Max: float64(2 + rng.IntN(6))},
		{Name: "vol", Kind: campaign.Levels, Levels: []float64{5, 10, 20}},
		{Name: "cat", Kind: campaign.Categorical, Categories: []string{"Pd", "Pt", "Ni"}},
	}
	rng.Shuffle(len(extra), func(i, j int) { extra[i], extra[j] = extra[j], extra[i] })
	space = append(space, extra[:1+rng.IntN(3)]...)
	cons := []campaign.Constraint{{Name: "sum", Expression: fmt.Sprintf("a + b <= %.2f", 0.6+0.6*rng.Float64())}}
	if space.Index("cat") >= 0 {
		cons = append(cons, campaign.Constraint{Name: "nickel_cool", Expression: `cat != "Ni" or a < 0.5`})
	}
	return campaign.Config{Name: "mixed", StateDir: "x", Seed: seed, MaxRuns: 30, InitialRuns: 5,
		Factors: space, Response: campaign.Response{Name: "y", Goal: campaign.Minimise}, Constraints: cons}
}

// Property: whatever the factors and constraints, every proposal is a
// valid setpoint (whole numbers, listed levels, existing categories, inside
// the bounds) and breaks no constraint: 30 random campaigns, 12 proposals
// each, through the design and the model phases.
func TestMixedAndConstrainedProposalsAreAlwaysValid(t *testing.T) {
	rng := rand.New(rand.NewPCG(31, 32))
	cfg := Default()
	cfg.Candidates = 300
	for c := 0; c < 30; c++ {
		cc := randomCampaign(rng, uint64(c))
		p := New(cc, cfg)
		var trials []campaign.Trial
		for i := 0; i < 12; i++ {
			res, err := p.Propose(context.Background(), Request{RunID: "R", Index: i, Trials: trials})
			if err != nil {
				t.Fatalf("campaign %d proposal %d: %v", c, i, err)
			}
			pt := res.Proposal.Point
			assertValid(t, p, c, i, res)
			y := math.Sin(5*pt[0]) + pt[1]*pt[1]
			for k := 2; k < len(pt); k++ {
				y += 0.1 * pt[k]
			}
			trials = append(trials, campaign.Trial{Point: pt, Value: y})
		}
	}
}

// assertValid fails the test unless proposal i of campaign c is a valid
// setpoint that breaks no constraint.
func assertValid(t *testing.T, p *Planner, c, i int, res Result) {
	t.Helper()
	pt := res.Proposal.Point
	if !p.space.Contains(pt) {
		t.Fatalf("campaign %d proposal %d (%s): %v is not valid for %+v", c, i, res.Proposal.Method, pt, p.space)
	}
	if v := p.Violated(pt); v != "" {
		t.Fatalf("campaign %d proposal %d (%s): %v breaks %s", c, i, res.Proposal.Method, pt, v)
	}
}

func TestConstraintErrorsNameTheKey(t *testing.T) {
	space := campaign.Space{{Name: "a", Min: 0, Max: 1}}
	_, ps := CompileConstraints(space, []campaign.Constraint{{Name: "x", Expression: "a + c <= 1"}, {Name: "y", Expression: "a + 1"}})
	if len(ps) != 2 || ps[0].Key != "constraint[0].expression" || ps[1].Key != "constraint[1].expression" {
		t.Fatalf("problems %v", ps)
	}
}

// A batch of proposals made with the earlier ones pending is spread out:
// no two closer than the minimum spacing, none on a completed run.
func TestBatchProposalsAreDistinct(t *testing.T) {
	cc := braninCampaign(8, 40)
	p := New(cc, Default())
	trials := braninTrials(t, p, 10)
	var pending []campaign.Point
	for q := 0; q < 6; q++ {
		res, err := p.Propose(context.Background(), Request{RunID: "R", Index: 10 + q, Trials: trials, Pending: pending})
		if err != nil {
			t.Fatal(err)
		}
		u := p.space.ToUnit(nil, res.Proposal.Point)
		for _, o := range append(append([]campaign.Point(nil), pending...), trialPoints(trials)...) {
			if math.Sqrt(dist2(u, p.space.ToUnit(nil, o))) < minSpacing {
				t.Fatalf("batch member %d at %v is on top of %v", q, res.Proposal.Point, o)
			}
		}
		pending = append(pending, res.Proposal.Point)
	}
}

func trialPoints(ts []campaign.Trial) []campaign.Point {
	out := make([]campaign.Point, len(ts))
	for i, t := range ts {
		out[i] = t.Point
	}
	return out
}

// Runs that failed (no usable value) are never modelled as numbers but
// steer proposals away: with every run at a > 0.7 failed and the best
// results just below that edge, the next proposals stay out of the failed
// region.
func TestFailedRunsSteerProposalsAway(t *testing.T) {
	for _, additive := range []bool{true, false} {
		t.Run(fmt.Sprintf("additive=%v", additive), func(t *testing.T) {
			cc := campaign.Config{Name: "f", StateDir: "x", Seed: 3, MaxRuns: 40, InitialRuns: 3,
				Factors:  campaign.Space{{Name: "a", Min: 0, Max: 1}, {Name: "b", Min: 0, Max: 1}},
				Response: campaign.Response{Name: "y", Goal: campaign.Minimise}}
			cfg := Default()
			cfg.Additive = additive
			p := New(cc, cfg)
			// The function decreases towards a = 1, so without the
			// failures the planner would go there.
			f := func(pt campaign.Point) float64 { return -2*pt[0] + 0.3*math.Sin(6*pt[1]) }
			var trials []campaign.Trial
			var failed []campaign.Point
			for _, u := range LatinHypercube(24, 2, rand.NewPCG(7, 7)) {
				pt := campaign.Point(u)
				if pt[0] > 0.7 {
					failed = append(failed, pt)
				} else {
					trials = append(trials, campaign.Trial{Point: pt, Value: f(pt)})
				}
			}
			for q := 0; q < 4; q++ {
				res, err := p.Propose(context.Background(), Request{RunID: "R", Index: 10 + q, Trials: trials, Failed: failed})
				if err != nil {
					t.Fatal(err)
				}
				if a := res.Proposal.Point[0]; a > 0.78 {
					t.Errorf("proposal %d at a = %.3f, inside the failed region", q, a)
				}
				// As the instrument would: a run beyond the edge fails too.
				if pt := res.Proposal.Point; pt[0] > 0.7 {
					failed = append(failed, pt)
				} else {
					trials = append(trials, campaign.Trial{Point: pt, Value: f(pt)})
				}
			}
		})
	}
}
