package planner

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"gonum.org/v1/gonum/optimize/functions"

	"benchtender/campaign"
	"benchtender/planner/gp"
)

// branin is the Branin (Branin-Hoo) function with the constants of
// Surjanovic and Bingham, Virtual Library of Simulation Experiments
// (sfu.ca/~ssurjano/branin.html): a=1, b=5.1/(4π²), c=5/π, r=6, s=10,
// t=1/(8π), on x1 ∈ [−5, 10], x2 ∈ [0, 15]; global minimum 0.397887 at
// (−π, 12.275), (π, 2.275) and (9.42478, 2.475).
func branin(x []float64) float64 {
	a, b, c, r, s, t := 1.0, 5.1/(4*math.Pi*math.Pi), 5/math.Pi, 6.0, 10.0, 1/(8*math.Pi)
	u := x[1] - b*x[0]*x[0] + c*x[0] - r
	return a*u*u + s*(1-t)*math.Cos(x[0]) + s
}

const braninMin = 0.397887 // Surjanovic and Bingham; also gonum's functions.BraninHoo.Minima

func TestBraninAgreesWithGonum(t *testing.T) {
	for _, m := range (functions.BraninHoo{}).Minima() {
		if got := branin(m.X); math.Abs(got-m.F) > 1e-6 {
			t.Errorf("branin(%v) = %.7f, gonum says %.7f", m.X, got, m.F)
		}
		if math.Abs(m.F-braninMin) > 1e-12 {
			t.Errorf("gonum's minimum %.7f differs from the published 0.397887", m.F)
		}
	}
}

// runCampaign runs a closed loop of n evaluations of f and returns the
// best value after each.
func runCampaign(t testing.TB, cc campaign.Config, f func([]float64) float64, n int) []float64 {
	t.Helper()
	p := New(cc, Default())
	var trials []campaign.Trial
	var warm *gp.Params
	best := math.Inf(1)
	var trace []float64
	for i := 0; i < n; i++ {
		res, err := p.Propose(context.Background(), Request{RunID: fmt.Sprintf("R%04d", i+1), Index: i, Trials: trials, Warm: warm})
		if err != nil {
			t.Fatalf("proposal %d: %v", i, err)
		}
		if !cc.Factors.Contains(res.Proposal.Point) {
			t.Fatalf("proposal %d outside the box: %v", i, res.Proposal.Point)
		}
		warm = res.Fit
		v := f(res.Proposal.Point)
		trials = append(trials, campaign.Trial{Point: res.Proposal.Point, Value: v})
		best = math.Min(best, v)
		trace = append(trace, best)
	}
	return trace
}

// braninTrials runs n closed-loop proposals of p on Branin and returns the
// runs made.
func braninTrials(t testing.TB, p *Planner, n int) []campaign.Trial {
	t.Helper()
	var trials []campaign.Trial
	for i := 0; i < n; i++ {
		res, err := p.Propose(context.Background(), Request{RunID: "R", Index: i, Trials: trials})
		if err != nil {
			t.Fatalf("proposal %d: %v", i, err)
		}
		trials = append(trials, campaign.Trial{Point: res.Proposal.Point, Value: branin(res.Proposal.Point)})
	}
	return trials
}

func braninCampaign(seed uint64, maxRuns int) campaign.Config {
	return campaign.Config{
		Name: "branin", StateDir: "x", Seed: seed, MaxRuns: maxRuns,
		Factors:  campaign.Space{{Name: "x1", Min: -5, Max: 10}, {Name: "x2", Min: 0, Max: 15}},
		Response: campaign.Response{Name: "f", Goal: campaign.Minimise},
	}
}

// Proposals approach the published Branin minimum 0.397887 (Surjanovic and
// Bingham): within 1% relative error in 40 evaluations for at least 9 of
// ten seeds, and in at most 21 for the median one. Random search needs
// about 1,500 evaluations for that on average (the 1% level set covers
// roughly 0.07% of the box). One seed in ten is allowed its slow campaign:
// over 600 seeds of the runs-to-optimum benchmark (README) about one
// campaign in a hundred needs more than 40 runs, and which seed does
// shifts with any change to the planner. The median over 600 seeds is 16
// runs (README) and a ten-seed median varies by about 2 (estimated from
// the per-campaign sd of about 4 to 5.5, not measured), so 21
// leaves room for chance while a planner a quarter slower would usually
// fail; these seeds give 15.
func TestProposalsApproachBraninMinimum(t *testing.T) {
	if testing.Short() {
		t.Skip("closed-loop campaign")
	}
	const budget = 40
	hits := make([]int, 0, 10)
	for seed := uint64(1); seed <= 10; seed++ {
		trace := runCampaign(t, braninCampaign(seed, budget), branin, budget)
		hit := budget + 1 // not reached
		for i, b := range trace {
			if math.Abs(b-braninMin)/braninMin < 0.01 {
				hit = i + 1
				break
			}
		}
		reached := fmt.Sprintf("within 1%% after %d evaluations", hit)
		if hit > budget {
			reached = "not within 1%"
		}
		t.Logf("seed %d: best %.6f after %d; %s", seed, trace[len(trace)-1], budget, reached)
		hits = append(hits, hit)
	}
	missed := 0
	for _, h := range hits {
		if h > budget {
			missed++
		}
	}
	slices.Sort(hits)
	median := (hits[4] + hits[5]) / 2
	if missed > 1 {
		t.Errorf("%d of 10 seeds missed 1%% of %.6f within %d evaluations, want at most 1", missed, braninMin, budget)
	}
	if median > 21 {
		t.Errorf("median evaluations to 1%%: %d, want at most 21", median)
	}
}

// Each factor's range is cut into n strata holding one point each
// (McKay, Beckman and Conover 1979).
func TestLatinHypercubeStrata(t *testing.T) {
	for _, n := range []int{1, 5, 17} {
		pts := LatinHypercube(n, 4, rand.NewPCG(9, 9))
		for k := 0; k < 4; k++ {
			seen := make([]bool, n)
			for _, p := range pts {
				s := int(p[k] * float64(n))
				if p[k] < 0 || p[k] >= 1 || seen[s] {
					t.Fatalf("n=%d factor %d: value %v in a used or invalid stratum", n, k, p[k])
				}
				seen[s] = true
			}
		}
	}
}

// The same request gives the same proposal: a restarted agent replaying
// its journal proposes what it would have proposed.
func TestProposalsAreReproducible(t *testing.T) {
	cc := braninCampaign(5, 20)
	trace1 := runCampaign(t, cc, branin, 10)
	trace2 := runCampaign(t, cc, branin, 10)
	for i := range trace1 {
		if trace1[i] != trace2[i] {
			t.Fatalf("evaluation %d: %v then %v", i, trace1[i], trace2[i])
		}
	}
}

// Diagnostics report length-scales in the factors' own units: a factor
// the response does not depend on gets a long scale, and the
// leave-one-out errors of a smooth function are small.
func TestDiagnose(t *testing.T) {
	cc := campaign.Config{Name: "d", StateDir: "x", Seed: 1, MaxRuns: 40,
		Factors:  campaign.Space{{Name: "a", Unit: "degC", Min: 0, Max: 100}, {Name: "b", Unit: "bar", Min: 0, Max: 1}},
		Response: campaign.Response{Name: "y", Goal: campaign.Maximise}}
	p := New(cc, Default())
	var trials []campaign.Trial
	for _, u := range LatinHypercube(30, 2, rand.NewPCG(3, 3)) {
		pt := cc.Factors.FromUnit(nil, u)
		trials = append(trials, campaign.Trial{Point: pt, Value: 10 * math.Sin(pt[0]/20)})
	}
	d, fitted, err := p.Diagnose(context.Background(), trials)
	if err != nil {
		t.Fatal(err)
	}
	if w := fitted.Model.Params().Additive; d.Additive != w || !(w > 0) {
		t.Errorf("additive share reported %v, the model's %v (additive on by default)", d.Additive, w)
	}
	cfg := Default()
	cfg.Additive = false
	if off, _, err := New(cc, cfg).Diagnose(context.Background(), trials); err != nil || off.Additive != 0 {
		t.Errorf("additive off: share %v, %v", off.Additive, err)
	}
	if d.LengthScales[0].Unit != "degC" || d.LengthScales[0].Value > 60 || d.LengthScales[1].Value < 1 {
		t.Errorf("length-scales %+v: a (varies over ~20 degC) should be short, b (no effect) longer than its range", d.LengthScales)
	}
	if d.LOORMSE > 0.2 || len(d.Checks) != 30 {
		t.Errorf("LOO RMSE %.3g over %d checks", d.LOORMSE, len(d.Checks))
	}
	for _, c := range d.Checks {
		if math.Abs(c.Predicted-c.Measured) > 1 || math.Signbit(c.Standardised) != math.Signbit(c.Measured-c.Predicted) && c.Measured != c.Predicted {
			t.Fatalf("check %+v", c)
		}
	}
}

func TestLogTransform(t *testing.T) {
	r := campaign.Response{Name: "impurity", Goal: campaign.Minimise, Transform: campaign.TransformLog}
	v, err := r.Modelled(100)
	if err != nil || math.Abs(v-math.Log(100)) > 1e-15 || math.Abs(r.Measured(v)-100) > 1e-12 {
		t.Errorf("modelled %v, back %v, %v", v, r.Measured(v), err)
	}
	if _, err := r.Modelled(0); err == nil {
		t.Error("log of 0 accepted")
	}
	m := campaign.Response{Name: "y", Goal: campaign.Maximise, Transform: campaign.TransformLog}
	if v, _ := m.Modelled(math.E); v != -1 || math.Abs(m.Measured(-1)-math.E) > 1e-15 {
		t.Errorf("maximise + log: %v", v)
	}
}

func TestConfigValidate(t *testing.T) {
	c := Default()
	c.Kernel = "cubic"
	c.Front.Kernel = "cubic"
	c.NoiseSD = -1
	c.Candidates = 5
	c.Shortlist = 1.5
	keys := map[string]bool{}
	for _, p := range c.Validate() {
		keys[p.Key] = true
	}
	for _, k := range []string{"kernel", "front.kernel", "noise_sd", "candidates", "shortlist"} {
		if !keys[k] {
			t.Errorf("no problem for %s", k)
		}
	}
	if ps := Default().Validate(); len(ps) != 0 {
		t.Errorf("defaults invalid: %v", ps)
	}
}
