package planner

import (
	"math"
	"math/rand/v2"
	"testing"

	"benchtender/campaign"
	"benchtender/planner/gp"
)

// The hyperparameters are held from HoldFitFrom runs on: the next model is
// the previous one conditioned on the new run (the same hyperparameters,
// the same log marginal likelihood as conditioning from scratch), until
// the runs have grown by 10%; then they are fitted again.
func TestHoldFitBetweenRefits(t *testing.T) {
	cc := unitCampaign(3, 100)
	cfg := Default()
	cfg.HoldFitFrom = 40
	p := New(cc, cfg)
	f := func(x []float64) float64 { return math.Sin(4*x[0]) + x[1]*x[1] + 0.5*math.Cos(3*x[2]) }
	rng := rand.New(rand.NewPCG(9, 9))
	var trials []campaign.Trial
	for i := 0; i < 60; i++ {
		pt := campaign.Point{rng.Float64(), rng.Float64(), rng.Float64()}
		trials = append(trials, campaign.Trial{Point: pt, Value: f(pt)})
	}
	fitAt := func(n int, prev *Surrogate) *Fitted {
		t.Helper()
		ft, err := p.fit(trials[:n], nil, prev, rand.New(rand.NewPCG(1, uint64(n))))
		if err != nil {
			t.Fatal(err)
		}
		return ft
	}
	surrogate := func(ft *Fitted) *Surrogate {
		return &Surrogate{fitted: ft, kernel: cfg.Kernel, noiseSD: cfg.NoiseSD}
	}

	below := fitAt(38, nil)
	if got := fitAt(39, surrogate(below)).fittedAt; got != 39 {
		t.Errorf("below hold_fit_from: fitted at %d runs, want 39 (every run)", got)
	}
	if got := fitAt(40, surrogate(below)).fittedAt; got != 38 {
		t.Errorf("at 40 runs, fitted at 38: fitted at %d, want 38 (held: fewer than 10%% more runs)", got)
	}
	first := fitAt(40, nil)
	if first.fittedAt != 40 {
		t.Fatalf("no previous model at 40 runs: fitted at %d, want 40", first.fittedAt)
	}
	next := fitAt(41, surrogate(first))
	if next.fittedAt != 40 {
		t.Errorf("one more run: fitted at %d, want 40 (held)", next.fittedAt)
	}
	if !equalParams(next.Model.Params(), first.Model.Params()) {
		t.Errorf("held hyperparameters changed: %+v, then %+v", first.Model.Params(), next.Model.Params())
	}
	// The held model is the previous hyperparameters conditioned on
	// every run, exactly.
	gx := make([][]float64, 41)
	yw := make([]float64, 41)
	for i := range gx {
		gx[i] = p.encode(p.space.ToUnit(nil, trials[i].Point))
		yw[i] = next.w.to(next.y[i])
	}
	ref, err := gp.New(gx, yw, first.Model.Params())
	if err != nil {
		t.Fatal(err)
	}
	if a, b := next.Model.LogMarginalLikelihood(), ref.LogMarginalLikelihood(); math.Abs(a-b) > 1e-9*math.Max(1, math.Abs(b)) {
		t.Errorf("held model's log marginal likelihood %v, conditioned from scratch %v", a, b)
	}

	// A second proposal before a new result arrives (a run still
	// pending): the same runs again, still held (this panicked in
	// gp.Condition, which had no new rows to add).
	if again := fitAt(41, surrogate(next)); again.fittedAt != 40 || !equalParams(again.Model.Params(), first.Model.Params()) {
		t.Errorf("the same 41 runs again: fitted at %d, want 40 with the same hyperparameters", again.fittedAt)
	}

	// Growth: at 44 runs (10% more than 40) they are fitted again.
	held := next
	for n := 42; n <= 44; n++ {
		held = fitAt(n, surrogate(held))
	}
	if held.fittedAt != 44 {
		t.Errorf("at 44 runs (10%% more than 40): fitted at %d, want 44", held.fittedAt)
	}

	// Another kernel in the configuration: the previous model is not used.
	other := "matern52"
	if cfg.Kernel == other {
		other = "matern32"
	}
	q := New(cc, func() Config { c := cfg; c.Kernel = other; return c }())
	ft, err := q.fit(trials[:41], nil, surrogate(first), rand.New(rand.NewPCG(1, 1)))
	if err != nil {
		t.Fatal(err)
	}
	if ft.fittedAt != 41 {
		t.Errorf("kernel changed: fitted at %d, want 41", ft.fittedAt)
	}
}

func equalParams(a, b gp.Params) bool {
	if a.Kernel != b.Kernel || a.SignalVar != b.SignalVar || a.NoiseVar != b.NoiseVar || a.Mean != b.Mean {
		return false
	}
	for k := range a.LengthScales {
		if a.LengthScales[k] != b.LengthScales[k] {
			return false
		}
	}
	return true
}

// unitCampaign is a campaign of d factors (a, b, ...) on [0, 1] and one
// response to minimise, with room for maxRuns runs.
func unitCampaign(d, maxRuns int) campaign.Config {
	fs := make(campaign.Space, d)
	for k := range fs {
		fs[k] = campaign.Factor{Name: string(rune('a' + k)), Min: 0, Max: 1}
	}
	return campaign.Config{Name: "unit", StateDir: "x", Seed: 1, MaxRuns: maxRuns, Factors: fs,
		Response: campaign.Response{Name: "y", Goal: campaign.Minimise}}
}
