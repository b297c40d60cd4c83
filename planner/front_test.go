package planner

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"sort"
	"strings"
	"testing"

	"benchtender/campaign"
	"benchtender/planner/pareto"
	"benchtender/planner/testfn"
)

// frontCampaign runs a closed-loop campaign of n runs on a two-response
// test problem and returns the trials and the last result.
func frontCampaign(t *testing.T, p testfn.Pair, responses []campaign.Response, worst []float64, values func([2]float64) []float64, n int, cfg Config) ([]campaign.Trial, Result) {
	t.Helper()
	fp := NewFront(frontConfig(p.Space, 1, n, responses, worst), cfg)
	var trials []campaign.Trial
	var res Result
	for i := range n {
		var err error
		res, err = fp.Propose(t.Context(), Request{RunID: fmt.Sprintf("R%04d", i+1), Index: i, Trials: trials})
		if err != nil {
			t.Fatalf("run %d: %v", i+1, err)
		}
		if !p.Space.Contains(res.Proposal.Point) {
			t.Fatalf("run %d: %v is outside the box", i+1, res.Proposal.Point)
		}
		trials = append(trials, campaign.Trial{Point: res.Proposal.Point, Values: values(p.F(res.Proposal.Point))})
	}
	return trials, res
}

// frontConfig is a campaign trading the responses off, each with its
// worst acceptable value (NaN for none).
func frontConfig(space campaign.Space, seed uint64, maxRuns int, responses []campaign.Response, worst []float64) campaign.Config {
	rs := append([]campaign.Response(nil), responses...)
	for i := range rs {
		if !math.IsNaN(worst[i]) {
			rs[i].Worst = &worst[i]
		}
	}
	cc := campaign.Config{Name: "front", StateDir: "x", Seed: seed, MaxRuns: maxRuns, Factors: space, Responses: rs}
	cc.Normalise()
	return cc
}

// On ZDT1 in three factors (true front's hypervolume 2/3 up to (1, 1);
// Zitzler, Deb and Thiele 2000) both ways of choosing runs find most of
// the front in 30 runs, where a Latin hypercube of 40 finds a tenth
// (docs/planner-figures.md); the result reports the front and its
// hypervolume as the runs show them.
func TestFrontFindsZDT1(t *testing.T) {
	p := testfn.ZDT1(3)
	min2 := []campaign.Response{{Name: "f1", Goal: campaign.Minimise}, {Name: "f2", Goal: campaign.Minimise}}
	for _, method := range []string{FrontHypervolume, FrontScalarised} {
		cfg := Default()
		cfg.Front.Acquisition = method
		trials, res := frontCampaign(t, p, min2, []float64{1, 1}, func(v [2]float64) []float64 { return v[:] }, 30, cfg)
		var pts [][]float64
		for _, tr := range trials {
			pts = append(pts, tr.Values)
		}
		share := pareto.Hypervolume(pts, p.Ref[:]) / p.FrontHV
		t.Logf("%s: %.3f of the front in 30 runs", method, share)
		if share < 0.85 {
			t.Errorf("%s: %.3f of the front's hypervolume in 30 runs, want at least 0.85", method, share)
		}
		if !strings.Contains(res.Proposal.Method, map[string]string{FrontHypervolume: MethodHypervolume, FrontScalarised: MethodScalarised}[method]) {
			t.Errorf("%s: the last proposal says %q", method, res.Proposal.Method)
		}
		// The result's figures are of the runs before the last proposal.
		before := pts[:len(pts)-1]
		if got := res.Front.Hypervolume; math.Abs(got-pareto.Hypervolume(before, p.Ref[:])) > 1e-12 {
			t.Errorf("%s: reported hypervolume %v, the runs dominate %v", method, got, pareto.Hypervolume(before, p.Ref[:]))
		}
		if fmt.Sprint(res.Front.Members) != fmt.Sprint(pareto.Front(before)) {
			t.Errorf("%s: reported front %v, want %v", method, res.Front.Members, pareto.Front(before))
		}
	}
}

// A response to be made large is the same campaign as its negative made
// small: the same runs, one by one.
func TestFrontMaximisedResponse(t *testing.T) {
	p := testfn.ZDT1(3)
	cfg := Default()
	a, _ := frontCampaign(t, p, []campaign.Response{{Name: "f1", Goal: campaign.Minimise}, {Name: "f2", Goal: campaign.Minimise}},
		[]float64{1, 1}, func(v [2]float64) []float64 { return v[:] }, 12, cfg)
	b, _ := frontCampaign(t, p, []campaign.Response{{Name: "f1", Goal: campaign.Minimise}, {Name: "g", Goal: campaign.Maximise}},
		[]float64{1, -1}, func(v [2]float64) []float64 { return []float64{v[0], -v[1]} }, 12, cfg)
	for i := range a {
		if fmt.Sprint(a[i].Point) != fmt.Sprint(b[i].Point) {
			t.Fatalf("run %d: %v made small, %v with the response made large", i+1, a[i].Point, b[i].Point)
		}
	}
}

// Proposals stay inside a region and away from pending runs; a trial with
// the wrong number of values, or a value the model cannot take, is an
// error naming it.
func TestFrontRequestChecks(t *testing.T) {
	p := testfn.ZDT1(2)
	responses := []campaign.Response{{Name: "f1", Goal: campaign.Minimise}, {Name: "f2", Goal: campaign.Minimise, Transform: campaign.TransformLog}}
	fp := NewFront(frontConfig(p.Space, 3, 20, responses, []float64{math.NaN(), math.NaN()}), Default())
	var trials []campaign.Trial
	for i := range 8 {
		u := campaign.Point{float64(i) / 7, float64(i%3) / 2}
		v := p.F(u)
		trials = append(trials, campaign.Trial{Point: u, Values: []float64{v[0], v[1] + 0.01}})
	}
	region := [][2]float64{{0.2, 0.4}, {0, 0.1}}
	pending := []campaign.Point{{0.3, 0.05}}
	res, err := fp.Propose(t.Context(), Request{RunID: "R0009", Index: 8, Trials: trials, Region: region, Pending: pending})
	if err != nil {
		t.Fatal(err)
	}
	pt := res.Proposal.Point
	if pt[0] < 0.2 || pt[0] > 0.4 || pt[1] < 0 || pt[1] > 0.1 {
		t.Errorf("proposal %v is outside the region %v", pt, region)
	}
	if d := math.Hypot(pt[0]-0.3, pt[1]-0.05); d < minSpacing {
		t.Errorf("proposal %v on the pending run", pt)
	}
	if len(res.Front.Models) != 2 || math.IsNaN(res.Front.Improvement) {
		t.Errorf("models %d, improvement %v", len(res.Front.Models), res.Front.Improvement)
	}
	bad := append([]campaign.Trial(nil), trials...)
	bad[2] = campaign.Trial{Point: bad[2].Point, Values: []float64{1}}
	if _, err := fp.Propose(context.Background(), Request{RunID: "R0009", Index: 8, Trials: bad}); err == nil || !strings.Contains(err.Error(), "trial 2 has 1 values for 2 responses") {
		t.Errorf("a trial with one value: %v", err)
	}
	bad[2] = campaign.Trial{Point: bad[2].Point, Values: []float64{0.5, -1}}
	if _, err := fp.Propose(context.Background(), Request{RunID: "R0009", Index: 8, Trials: bad}); err == nil || !strings.Contains(err.Error(), "f2 = -1") {
		t.Errorf("a negative value of a logged response: %v", err)
	}
}

// BenchmarkFrontPropose times one proposal of a two-response campaign in
// 6 factors with 200 runs (issue 24's goal: under a second) and with
// 1,000, the runs spread over ZDT1's box.
func BenchmarkFrontPropose(b *testing.B) {
	p := testfn.ZDT1(6)
	responses := []campaign.Response{{Name: "f1", Goal: campaign.Minimise}, {Name: "f2", Goal: campaign.Minimise}}
	cc := frontConfig(p.Space, 1, 2000, responses, []float64{1, 1})
	for _, n := range []int{200, 1000} {
		for _, method := range []string{FrontHypervolume, FrontScalarised} {
			b.Run(fmt.Sprintf("%s/runs=%d", method, n), func(b *testing.B) {
				cfg := Default()
				cfg.Front.Acquisition = method
				fp := NewFront(cc, cfg)
				var trials []campaign.Trial
				for _, u := range LatinHypercube(n, 6, rand.New(rand.NewPCG(1, 2))) {
					v := p.F(u)
					trials = append(trials, campaign.Trial{Point: u, Values: v[:]})
				}
				b.ResetTimer()
				for b.Loop() {
					if _, err := fp.Propose(b.Context(), Request{RunID: "R", Index: n, Trials: trials}); err != nil {
						b.Fatal(err)
					}
				}
			})
		}
		// From hold_fit_from runs on, a proposal after the first holds
		// each response's hyperparameters and conditions its model on one
		// more run.
		b.Run(fmt.Sprintf("hypervolume held/runs=%d", n), func(b *testing.B) {
			fp := NewFront(cc, Default())
			us := LatinHypercube(n+1, 6, rand.New(rand.NewPCG(1, 2)))
			var trials []campaign.Trial
			for _, u := range us {
				v := p.F(u)
				trials = append(trials, campaign.Trial{Point: u, Values: v[:]})
			}
			first, err := fp.Propose(b.Context(), Request{RunID: "R", Index: n, Trials: trials[:n]})
			if err != nil {
				b.Fatal(err)
			}
			b.ResetTimer()
			for b.Loop() {
				if _, err := fp.Propose(b.Context(), Request{RunID: "R", Index: n + 1, Trials: trials, Previous: first.Surrogate}); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

// The report of a front: its members are the runs no run beats, best in
// the first response first; the model is sure of members far from any
// rival; the hypervolume never falls as runs are added and ends at what
// all runs dominate; the reference point is in the responses' own units
// (purity made large stays positive).
func TestFrontReport(t *testing.T) {
	p := testfn.ZDT1(3)
	responses := []campaign.Response{{Name: "f1", Goal: campaign.Minimise}, {Name: "g", Goal: campaign.Maximise}}
	worst := []float64{1, -1}
	trials, _ := frontCampaign(t, p, responses, worst, func(v [2]float64) []float64 { return []float64{v[0], -v[1]} }, 20, Default())
	fp := NewFront(frontConfig(p.Space, 1, 20, responses, worst), Default())
	r, err := fp.Report(t.Context(), trials, rand.New(rand.NewPCG(1, 1)))
	if err != nil {
		t.Fatal(err)
	}
	losses := make([][]float64, len(trials))
	for i, tr := range trials {
		losses[i] = []float64{tr.Values[0], -tr.Values[1]}
	}
	want := pareto.Front(losses)
	if len(r.Members) != len(want) || len(r.OnFront) != len(want) {
		t.Fatalf("members %v (sure %v), want the runs %v", r.Members, r.OnFront, want)
	}
	for k, m := range r.Members {
		if k > 0 && losses[m][0] < losses[r.Members[k-1]][0] {
			t.Errorf("members %v are not best-first in f1", r.Members)
		}
		if r.OnFront[k] < 0 || r.OnFront[k] > 1 {
			t.Errorf("member %d: share %v", m, r.OnFront[k])
		}
	}
	t.Logf("members %v, on the front in %v of %d draws", r.Members, r.OnFront, r.Draws)
	if r.OnFront[0] < 0.9 {
		t.Errorf("the member best in f1 is on the front in %.2f of the draws; the runs are exact, want at least 0.9", r.OnFront[0])
	}
	for k := 1; k < len(r.Hypervolume); k++ {
		if r.Hypervolume[k] < r.Hypervolume[k-1] {
			t.Fatalf("hypervolume fell at run %d: %v", k+1, r.Hypervolume)
		}
	}
	if got, all := r.Hypervolume[len(r.Hypervolume)-1], pareto.Hypervolume(losses, []float64{1, 1}); math.Abs(got-all) > 1e-12 {
		t.Errorf("last hypervolume %v, all runs dominate %v", got, all)
	}
	if r.Reference[0] != 1 || r.Reference[1] != -1 {
		t.Errorf("reference %v, want the worst values given, (1, -1)", r.Reference)
	}
}

// The front's stopping rule names its test with value and threshold at
// every proposal once a model is fitted, fires when the largest expected
// hypervolume improvement is a small enough share of the front's, and is
// off (no verdict) unless configured; with the scalarisation it is a
// config mistake.
func TestFrontStoppingRule(t *testing.T) {
	p := testfn.ZDT1(3)
	min2 := []campaign.Response{{Name: "f1", Goal: campaign.Minimise}, {Name: "f2", Goal: campaign.Minimise}}
	id := func(v [2]float64) []float64 { return v[:] }
	_, off := frontCampaign(t, p, min2, []float64{1, 1}, id, 12, Default())
	if off.Stopping != nil || off.Stop != "" {
		t.Errorf("rule off: verdict %v, stop %q", off.Stopping, off.Stop)
	}
	cfg := Default()
	cfg.Stop.HypervolumeBelow = 0.9 // fires as soon as anything is dominated
	trials, _ := frontCampaign(t, p, min2, []float64{1, 1}, id, 12, Default())
	fp := NewFront(frontConfig(p.Space, 1, 12, min2, []float64{1, 1}), cfg)
	res, err := fp.Propose(t.Context(), Request{RunID: "R0013", Index: 12, Trials: trials})
	if err != nil {
		t.Fatal(err)
	}
	if res.Stopping == nil || len(res.Stopping.Tests) != 1 || !strings.Contains(res.Stopping.String(), "expected hypervolume improvement") ||
		!strings.Contains(res.Stopping.String(), "of at most 90 % of the front's hypervolume: met") || !strings.HasPrefix(res.Stop, "the front is found well enough") {
		t.Errorf("verdict %q, stop %q", res.Stopping.String(), res.Stop)
	}
	cfg.Stop.HypervolumeBelow = 1e-9
	res, err = NewFront(frontConfig(p.Space, 1, 12, min2, []float64{1, 1}), cfg).Propose(t.Context(), Request{RunID: "R0013", Index: 12, Trials: trials})
	if err != nil || res.Stop != "" || !strings.HasSuffix(res.Stopping.String(), "not met") {
		t.Errorf("a tiny threshold: verdict %q, stop %q, %v", res.Stopping.String(), res.Stop, err)
	}
	cfg.Front.Acquisition = FrontScalarised
	if ps := cfg.Validate(); !strings.Contains(fmt.Sprint(ps), "stop.hypervolume_below") {
		t.Errorf("the rule with the scalarisation: %v", ps)
	}
}

// Property, as for one response: whatever the factors (integers, levels,
// categories) and constraints, every proposal of a campaign trading three
// responses off is a valid setpoint breaking no constraint, through the
// design and the model phases; the report's members are the runs no run
// beats in all three.
func TestFrontThreeResponsesMixedFactors(t *testing.T) {
	rng := rand.New(rand.NewPCG(41, 42))
	cfg := Default()
	cfg.Candidates = 300
	three := []campaign.Response{{Name: "y1", Goal: campaign.Minimise}, {Name: "y2", Goal: campaign.Maximise}, {Name: "y3", Goal: campaign.Minimise}}
	for c := 0; c < 10; c++ {
		cc := randomCampaign(rng, uint64(c))
		cc.Response, cc.Responses = campaign.Response{}, three
		cc.Normalise()
		fp := NewFront(cc, cfg)
		single := New(cc, cfg)
		var trials []campaign.Trial
		var losses [][]float64
		for i := 0; i < 10; i++ {
			res, err := fp.Propose(t.Context(), Request{RunID: "R", Index: i, Trials: trials})
			if err != nil {
				t.Fatalf("campaign %d proposal %d: %v", c, i, err)
			}
			assertValid(t, single, c, i, res)
			pt := res.Proposal.Point
			v := []float64{math.Sin(5*pt[0]) + pt[1], pt[0] * pt[1], (pt[0]-0.5)*(pt[0]-0.5) + 0.1*pt[len(pt)-1]}
			trials = append(trials, campaign.Trial{Point: pt, Values: v})
			losses = append(losses, []float64{v[0], -v[1], v[2]})
		}
		r, err := fp.Report(t.Context(), trials, rand.New(rand.NewPCG(1, 1)))
		if err != nil {
			t.Fatalf("campaign %d: report: %v", c, err)
		}
		got := append([]int(nil), r.Members...)
		sort.Ints(got)
		if fmt.Sprint(got) != fmt.Sprint(pareto.Front(losses)) || len(r.OnFront) != len(got) {
			t.Fatalf("campaign %d: members %v (sure %v), want %v", c, r.Members, r.OnFront, pareto.Front(losses))
		}
	}
}

// Each response's model is held between fits as for one response: with
// hold_fit_from at 20, the proposal at 21 runs keeps the hyperparameters
// fitted at 20 (conditioned on the new run), and the one at 22 (10% more
// runs) fits them again.
func TestFrontHoldsEachModel(t *testing.T) {
	p := testfn.ZDT1(3)
	min2 := []campaign.Response{{Name: "f1", Goal: campaign.Minimise}, {Name: "f2", Goal: campaign.Minimise}}
	cfg := Default()
	cfg.HoldFitFrom = 20
	trials, _ := frontCampaign(t, p, min2, []float64{1, 1}, func(v [2]float64) []float64 { return v[:] }, 22, cfg)
	fp := NewFront(frontConfig(p.Space, 1, 40, min2, []float64{1, 1}), cfg)
	var prev *Surrogate
	var params [][2]float64 // each response's first length-scale, per proposal
	for n := 20; n <= 22; n++ {
		res, err := fp.Propose(t.Context(), Request{RunID: "R", Index: n, Trials: trials[:n], Previous: prev})
		if err != nil {
			t.Fatal(err)
		}
		if res.Surrogate == nil || len(res.Front.Models) != 2 {
			t.Fatalf("%d runs: no surrogate to hand back", n)
		}
		prev = res.Surrogate
		params = append(params, [2]float64{res.Front.Models[0].Params().LengthScales[0], res.Front.Models[1].Params().LengthScales[0]})
	}
	if params[1] != params[0] {
		t.Errorf("at 21 runs the length-scales moved from %v to %v; want them held", params[0], params[1])
	}
	if params[2] == params[1] {
		t.Errorf("at 22 runs the length-scales stayed %v; want a fresh fit", params[2])
	}
}

// TestExpectationClosedFormAgreesWithDraws checks the two scorings of a
// point against each other: in closed form (two responses, no warp) and
// by draws of the point's responses, with many draws.
func TestExpectationClosedFormAgreesWithDraws(t *testing.T) {
	fits := []*Fitted{{}, {}} // no warp: losses are the modelled values
	fronts := [][][]float64{
		{{0.1, 0.8}, {0.4, 0.4}, {0.7, 0.2}},
		{{0.2, 0.7}, {0.5, 0.3}},
	}
	ref := []float64{1, 1}
	rng := rand.New(rand.NewPCG(3, 4))
	const n = 200000
	z := make([][]float64, n)
	for d := range z {
		z[d] = []float64{rng.NormFloat64(), rng.NormFloat64()}
	}
	fp := &FrontPlanner{}
	closed := fp.expectation(fits, fronts, ref, z)
	drawn := &expectation{fits: fits, ref: ref, z: z}
	for _, f := range fronts {
		drawn.improvement = append(drawn.improvement, fp.improvement(f, ref))
	}
	if closed.stairs == nil || drawn.stairs != nil {
		t.Fatal("two responses without warp should be scored in closed form")
	}
	y := make([]float64, 2)
	for _, c := range []struct{ mu, sd []float64 }{
		{[]float64{0.3, 0.5}, []float64{0.1, 0.2}},
		{[]float64{0.6, 0.6}, []float64{0.3, 0.3}},
		{[]float64{0.05, 0.95}, []float64{0.02, 0.05}},
	} {
		got, want := closed.at(c.mu, c.sd, y), drawn.at(c.mu, c.sd, y)
		if math.Abs(got-want) > 0.01*want {
			t.Errorf("at %v ± %v: closed form %.5f, draws %.5f", c.mu, c.sd, got, want)
		}
	}
	// Far beyond the reference point both say how far: the closed form
	// from the means, the draws from each draw.
	if got := closed.at([]float64{3, 1.5}, []float64{0.01, 0.01}, y); math.Abs(got+2.5) > 1e-9 {
		t.Errorf("beyond the reference: %v, want -2.5", got)
	}
}
