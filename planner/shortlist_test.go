package planner

import (
	"context"
	"fmt"
	"math"
	"slices"
	"testing"

	"benchtender/campaign"
	"benchtender/planner/acquisition"
)

// The shortlist's point has at least κ of the largest expected improvement
// and a confidence bound no higher than the plain expected-improvement
// point's; it differs from that point in some campaigns, or the test
// would hold for a shortlist that did nothing.
func TestShortlistKeepsImprovementAndLowersBound(t *testing.T) {
	moved := 0
	for seed := uint64(1); seed <= 6; seed++ {
		cc := braninCampaign(seed, 40)
		plain := Default()
		plain.Shortlist = 0
		// Runs from the plain planner, so both see the same campaign.
		p0 := New(cc, plain)
		trials := braninTrials(t, p0, 9)
		req := Request{RunID: "R", Index: len(trials), Trials: trials}
		r0, err := p0.Propose(context.Background(), req)
		if err != nil {
			t.Fatal(err)
		}
		p1 := New(cc, Default())
		r1, err := p1.Propose(context.Background(), req)
		if err != nil {
			t.Fatal(err)
		}
		if r0.Proposal.Method != "expected improvement" || r1.Proposal.Method != MethodShortlist {
			t.Fatalf("methods %q and %q", r0.Proposal.Method, r1.Proposal.Method)
		}
		// Both fits are the same (same seed and runs); score on r0's.
		m := r0.Model
		var best float64 = math.Inf(1)
		for _, tr := range trials {
			mu, _ := m.Predict(p0.encode(p0.space.ToUnit(nil, tr.Point)))
			best = math.Min(best, mu)
		}
		at := func(pt campaign.Point) (logEI, bound float64) {
			mu, v := m.Predict(p0.encode(p0.space.ToUnit(nil, pt)))
			return acquisition.LogExpectedImprovement(mu, math.Sqrt(v), best), acquisition.LowerConfidenceBound(mu, math.Sqrt(v), shortlistBeta)
		}
		e0, b0 := at(r0.Proposal.Point)
		e1, b1 := at(r1.Proposal.Point)
		name := fmt.Sprintf("seed %d", seed)
		if e1 < e0+math.Log(Default().Shortlist)-1e-9 {
			t.Errorf("%s: shortlisted point's ln EI %.4f is below ln κ + %.4f", name, e1, e0)
		}
		if b1 > b0+1e-12 {
			t.Errorf("%s: shortlisted point's bound %.5f is above the plain point's %.5f", name, b1, b0)
		}
		if math.Abs(r1.Proposal.Score-e1) > 1e-9 {
			t.Errorf("%s: score %.6f, want the point's ln EI %.6f", name, r1.Proposal.Score, e1)
		}
		if !slices.Equal(r0.Proposal.Point, r1.Proposal.Point) {
			moved++
		}
	}
	if moved == 0 {
		t.Error("the shortlist chose the plain expected-improvement point in every campaign")
	}
}
