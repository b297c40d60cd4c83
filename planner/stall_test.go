package planner

import (
	"context"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"

	"benchtender/campaign"
	"benchtender/planner/gp"
)

// stalledAfter fits a planner on the unit square to runs at g with
// losses y and returns the region it would set aside now, or the release
// (nil: none), given the regions set aside before.
func stalledAfter(t *testing.T, g [][]float64, y []float64, given ...Aside) *Aside {
	t.Helper()
	cc := campaign.Config{Name: "s", StateDir: "x", Seed: 1, MaxRuns: 100,
		Factors:  campaign.Space{{Name: "a", Min: 0, Max: 1}, {Name: "b", Min: 0, Max: 1}},
		Response: campaign.Response{Name: "y", Goal: campaign.Minimise}}
	p := New(cc, Default())
	var trials []campaign.Trial
	for i := range g {
		trials = append(trials, campaign.Trial{Point: g[i], Value: y[i]})
	}
	ft, err := p.fit(trials, nil, nil, rand.New(rand.NewPCG(1, 1)))
	if err != nil {
		t.Fatal(err)
	}
	a, from, released, err := p.asidesOf(given)
	if err != nil {
		t.Fatal(err)
	}
	return p.stalled(ft, a, from, stallWindow(p.encDim, released))
}

// descent returns four runs on the unit square, each better than the
// last, ending at 7 at (0.3, 0.5).
func descent() (g [][]float64, y []float64) {
	for i := 0; i < 4; i++ {
		g = append(g, []float64{0.1 * float64(i), 0.5})
		y = append(y, 10-float64(i))
	}
	return g, y
}

// After a region is set aside, the new search's stall ends in a release
// when it found nothing better than the best run of all, and in a region
// of its own when it holds that run, even if its last gains there were
// too small to count as progress.
func TestReleaseOrNewRegion(t *testing.T) {
	window := stallRuns(2)
	// The first search: a basin at (0.3, 0.5) with best 7, set aside
	// after run 4 + window.
	g, y := descent()
	for i := 0; i < window; i++ {
		g = append(g, []float64{0.3, 0.5 + 0.001*float64(i+1)})
		y = append(y, 7)
	}
	first := stalledAfter(t, g, y)
	if first == nil || first.Release {
		t.Fatalf("the first search's stall gave %+v, want a region", first)
	}
	// The new search, far from the region, with a run of value v at
	// (0.8, 0.2), then window runs beside it, each gain tiny.
	search := func(v float64) ([][]float64, []float64) {
		g2 := append([][]float64(nil), g...)
		y2 := append([]float64(nil), y...)
		g2 = append(g2, []float64{0.8, 0.2})
		y2 = append(y2, v)
		for i := 0; i < window; i++ {
			g2 = append(g2, []float64{0.8 + 0.001*float64(i+1), 0.2})
			y2 = append(y2, v-1e-6*float64(i+1))
		}
		return g2, y2
	}
	for _, c := range []struct {
		name    string
		v       float64
		release bool
	}{
		{"worse than the best run", 8, true},
		{"better than the best run", 5, false},
		// Its first run only ties the best run (7); the tiny gains after
		// it make it the best of all, though none counts as progress.
		{"the best run by tiny gains", 7, false},
	} {
		t.Run(c.name, func(t *testing.T) {
			g2, y2 := search(c.v)
			got := stalledAfter(t, g2, y2, *first)
			if got == nil {
				t.Fatal("the new search's stall gave nothing")
			}
			if got.Release != c.release {
				t.Errorf("release = %v (%s), want %v", got.Release, got.Reason, c.release)
			}
			if !c.release && (math.Abs(got.Centre[0]-0.8) > 0.01 || got.Centre[1] != 0.2) {
				t.Errorf("new region centred at %v, want the new search's basin at (0.8, 0.2)", got.Centre)
			}
		})
	}
}

// A new search that runs downhill into the edge of a region set aside,
// still worse than the best run of all, is released at once: the basin
// set aside reaches beyond its region. One that stops short of the edge
// goes on.
func TestReleaseAtRegionEdge(t *testing.T) {
	// The best run, 7 at (0.3, 0.5), and a region around it of radius
	// asideRadius × 0.05 = 0.1 in a.
	g, y := descent()
	region := Aside{Centre: campaign.Point{0.3, 0.5}, Scales: []float64{0.05, 0.05}, From: len(g)}
	// The new search: 12 runs from a = 0.6 towards the region, each
	// better than the last, to a = 0.3 + k × 0.1, all worse than 7.
	approach := func(k float64) ([][]float64, []float64) {
		g2 := append([][]float64(nil), g...)
		y2 := append([]float64(nil), y...)
		const n = 12
		for i := 0; i < n; i++ {
			t := float64(i) / (n - 1)
			g2 = append(g2, []float64{0.6 + t*(0.3+k*0.1-0.6), 0.5})
			y2 = append(y2, 15-7*t)
		}
		return g2, y2
	}
	g2, y2 := approach(1.05)
	got := stalledAfter(t, g2, y2, region)
	if got == nil || !got.Release || !strings.Contains(got.Reason, "edge") {
		t.Fatalf("a search at the region's edge gave %+v, want a release at the edge", got)
	}
	g2, y2 = approach(1.5)
	if got := stalledAfter(t, g2, y2, region); got != nil {
		t.Errorf("a search still descending half a radius from the edge gave %+v, want nothing", got)
	}
}

// After a release, the basin must stall twice as long before it is set
// aside again.
func TestStallWindowDoublesAfterRelease(t *testing.T) {
	window := stallRuns(2)
	if stallWindow(2, 0) != window || stallWindow(2, 1) != 2*window || stallWindow(2, 9) != 16*window {
		t.Fatalf("windows %d, %d, %d", stallWindow(2, 0), stallWindow(2, 1), stallWindow(2, 9))
	}
	g, y := descent()
	given := []Aside{
		{Centre: campaign.Point{0.3, 0.5}, Scales: []float64{0.05, 0.05}, From: len(g)},
		{Release: true, From: len(g)},
	}
	// After the release: the best run's basin again, k runs without
	// progress after the first.
	polish := func(k int) ([][]float64, []float64) {
		g2 := append([][]float64(nil), g...)
		y2 := append([]float64(nil), y...)
		for i := 0; i <= k; i++ {
			g2 = append(g2, []float64{0.3, 0.55 + 0.001*float64(i)})
			y2 = append(y2, 7.5)
		}
		return g2, y2
	}
	g2, y2 := polish(window)
	if got := stalledAfter(t, g2, y2, given...); got != nil {
		t.Errorf("%d runs without progress after a release gave %+v, want nothing yet", window, got)
	}
	g2, y2 = polish(2 * window)
	if got := stalledAfter(t, g2, y2, given...); got == nil || got.Release {
		t.Errorf("%d runs without progress after a release gave %+v, want a region", 2*window, got)
	}
}

func TestSetAsideAfterStall(t *testing.T) {
	window := stallRuns(2)
	// Four runs that improve, then runs that do not: the basin is set
	// aside once window runs have passed without progress.
	g, y := descent()
	for i := 0; i < window-1; i++ {
		g = append(g, []float64{0.3, 0.5 + 0.01*float64(i+1)})
		y = append(y, 7+1e-6) // no better than the best, 7 at (0.3, 0.5)
	}
	if a := stalledAfter(t, g, y); a != nil {
		t.Fatalf("%d runs without progress set a region aside (%+v); want none before %d", window-1, a, window)
	}
	g = append(g, []float64{0.31, 0.5})
	y = append(y, 7)
	a := stalledAfter(t, g, y)
	if a == nil {
		t.Fatalf("after %d runs without progress no region is set aside", window)
	}
	if c := a.Centre; math.Abs(c[0]-0.3) > 1e-12 || c[1] != 0.5 || a.Run != 3 {
		t.Errorf("region centred at run %d %v, want the best run, 4th, at (0.3, 0.5)", a.Run, c)
	}
	if a.From != len(g) || len(a.Scales) != 2 || !strings.Contains(a.Reason, "without progress") {
		t.Errorf("region %+v: want the new search to start at %d, two length scales and a reason", a, len(g))
	}
	// The region is an ellipsoid of asideRadius length scales.
	reg := &aside{}
	reg.add(New(campaign.Config{Name: "s", StateDir: "x", MaxRuns: 9, Factors: campaign.Space{{Name: "a", Min: 0, Max: 1}, {Name: "b", Min: 0, Max: 1}},
		Response: campaign.Response{Name: "y", Goal: campaign.Minimise}}, Default()), Aside{Centre: campaign.Point{0.3, 0.5}, Scales: []float64{0.1, 0.1}})
	for _, c := range []struct {
		g       []float64
		outside bool
	}{
		{[]float64{0.3, 0.5}, false},
		{[]float64{0.3 + 0.99*asideRadius*0.1, 0.5}, false},
		{[]float64{0.3 + 1.01*asideRadius*0.1, 0.5}, true},
		{[]float64{0.3 + 0.15, 0.5 + 0.15}, true}, // (1.5² + 1.5²) > 2²
		{[]float64{0.3 + 0.13, 0.5 + 0.13}, false},
	} {
		if got := reg.outside(c.g); got != c.outside {
			t.Errorf("outside(%v) = %v, want %v", c.g, got, c.outside)
		}
	}
	// A run of progress (more than stallGain of the range) restarts the
	// count; a tiny gain does not.
	g2 := append([][]float64(nil), g[:4+window/2]...)
	y2 := append([]float64(nil), y[:4+window/2]...)
	g2 = append(g2, []float64{0.3, 0.9})
	y2 = append(y2, 7-10*stallGain*3)
	for i := 0; i < window-1; i++ {
		g2 = append(g2, []float64{0.9, 0.1 + 0.01*float64(i)})
		y2 = append(y2, 7-10*stallGain*3-1e-9)
	}
	if a := stalledAfter(t, g2, y2); a != nil {
		t.Errorf("progress %d runs ago set a region aside", window-1)
	}
}

// trap is an invented test function on the unit square: a broad basin
// of depth 1 at (0.25, 0.25) and a narrow well of depth 1.5 at
// (0.8, 0.75), the kind of landscape where a confident model settles in
// the broad basin.
func trap(x []float64) float64 {
	da := (x[0]-0.25)*(x[0]-0.25) + (x[1]-0.25)*(x[1]-0.25)
	db := (x[0]-0.8)*(x[0]-0.8) + (x[1]-0.75)*(x[1]-0.75)
	return -math.Exp(-da/(2*0.2*0.2)) - 1.5*math.Exp(-db/(2*0.06*0.06))
}

func TestSetAsideFindsTheWell(t *testing.T) {
	cc := campaign.Config{Name: "trap", StateDir: "x", Seed: 7, MaxRuns: 50,
		Factors:  campaign.Space{{Name: "a", Min: 0, Max: 1}, {Name: "b", Min: 0, Max: 1}},
		Response: campaign.Response{Name: "f", Goal: campaign.Minimise}}
	// Runs until the well (below −1.45) is found, the methods used and
	// the runs made.
	var asides []Aside
	run := func(setAside bool) (int, []string, []campaign.Trial) {
		asides = nil
		cfg := Default()
		cfg.SetAside = setAside
		// The kernel seed 7 was chosen with (below): Matérn 3/2, no
		// additive terms.
		cfg.Kernel = "matern32"
		cfg.Additive = false
		p := New(cc, cfg)
		var trials []campaign.Trial
		var warm *gp.Params
		var methods []string
		for i := 0; i < cc.MaxRuns; i++ {
			res, err := p.Propose(context.Background(), Request{RunID: "R", Index: i, Trials: trials, Warm: warm, Aside: asides})
			if err != nil {
				t.Fatalf("set aside %v, proposal %d: %v", setAside, i, err)
			}
			warm = res.Fit
			if res.NewAside != nil {
				asides = append(asides, *res.NewAside)
			}
			// Every proposal keeps out of every region recorded so far,
			// with the length scales it was recorded with, whatever the
			// model's scales are now: a region never vanishes.
			reg, _, _, err := p.asidesOf(asides)
			if err != nil {
				t.Fatal(err)
			}
			if !reg.outside(p.encode(p.space.ToUnit(nil, res.Proposal.Point))) {
				t.Fatalf("proposal %d (%s) at %v lies in a region set aside", i, res.Proposal.Method, res.Proposal.Point)
			}
			methods = append(methods, res.Proposal.Method)
			// A new search's design point still reports from the model
			// of every run, for status and the stopping rule.
			if strings.HasPrefix(res.Proposal.Method, "design of a new search") && (res.Model == nil || !(res.EI > 0)) {
				t.Fatalf("proposal %d (%s) reports model %v, expected improvement %v", i, res.Proposal.Method, res.Model, res.EI)
			}
			v := trap(res.Proposal.Point)
			trials = append(trials, campaign.Trial{Point: res.Proposal.Point, Value: v})
			if v < -1.45 {
				return i + 1, methods, trials
			}
		}
		return cc.MaxRuns + 1, methods, trials
	}
	// Seed 7 is one where the model settles: over seeds 1-10 with 80
	// runs, 2 found the well without setting aside, 8 with it (with
	// Matérn 5/2, 2 and 7); seed 7 found it in 72 runs without and 39
	// with. With the defaults of 2026-12-06 (Matérn 5/2, the additive
	// share chosen by prediction) 0 and 3 of the ten found it, and with
	// the share fitted by likelihood alone 3 and 5 (docs/planner-figures.md).
	if n, _, _ := run(false); n <= cc.MaxRuns {
		t.Fatalf("without setting aside the well was found in %d runs; the case no longer tests the mechanism", n)
	}
	n, methods, _ := run(true)
	if n > cc.MaxRuns {
		t.Fatalf("with setting aside the well was not found in %d runs; methods %q", cc.MaxRuns, methods)
	}
	first := -1
	for i, m := range methods {
		if strings.HasPrefix(m, "design of a new search") {
			first = i
			break
		}
	}
	if first < 0 {
		t.Fatalf("no proposal came from a new search's design: %q", methods)
	}
	t.Logf("well found in %d runs; the new search began at run %d", n, first+1)
	// One region was decided, once, and the new search began right after
	// it; no later proposal decided it again.
	if len(asides) != 1 || asides[0].From != first {
		t.Errorf("regions set aside %+v; the proposals began one new search at %d", asides, first)
	}
}

// Property: once basins are set aside, proposals are still valid setpoints
// that break no constraint and repeat no run or pending run: mixed,
// constrained campaigns on a response that is a shallow bowl (its centre
// inside every constraint) with a dip
// too narrow to be found (so progress stalls once the bowl is resolved,
// and again in the new search), two runs pending at each request. (A flat
// response is no case: its fitted length scales span the box, the region
// set aside would too, and the planner rightly goes on as before.)
func TestSetAsideProposalsStayValid(t *testing.T) {
	rng := rand.New(rand.NewPCG(41, 42))
	cfg := Default()
	cfg.Candidates = 300
	for c := 0; c < 6; c++ {
		cc := randomCampaign(rng, uint64(c))
		p := New(cc, cfg)
		var trials []campaign.Trial
		var pending []campaign.Point
		var asides []Aside
		// Until a new search has made 10 proposals, or 90 in all.
		stalled := 0
		for i := 0; i < 90 && stalled < 10; i++ {
			res, err := p.Propose(context.Background(), Request{RunID: "R", Index: i, Trials: trials, Pending: pending, Aside: asides})
			if err != nil {
				t.Fatalf("campaign %d proposal %d: %v", c, i, err)
			}
			if res.NewAside != nil {
				asides = append(asides, *res.NewAside)
			}
			pt := res.Proposal.Point
			assertValid(t, p, c, i, res)
			for _, q := range append(pointsOfTrials(trials), pending...) {
				if slices.Equal(q, pt) {
					t.Fatalf("campaign %d proposal %d (%s): %v repeats a run", c, i, res.Proposal.Method, pt)
				}
			}
			if strings.Contains(res.Proposal.Method, "new search") {
				stalled++
			}
			pending = append(pending, pt)
			if len(pending) > 2 {
				done := pending[0]
				pending = pending[1:]
				dip := (done[0]-0.3)*(done[0]-0.3) + (done[1]-0.2)*(done[1]-0.2)
				bowl := (done[0]-0.15)*(done[0]-0.15) + (done[1]-0.3)*(done[1]-0.3)
				trials = append(trials, campaign.Trial{Point: done, Value: 1 + 0.2*bowl - math.Exp(-dip/1e-7)})
			}
		}
		if stalled == 0 {
			t.Errorf("campaign %d never set a basin aside; the case does not test it", c)
		}
	}
}

func pointsOfTrials(ts []campaign.Trial) []campaign.Point {
	out := make([]campaign.Point, len(ts))
	for i, t := range ts {
		out[i] = t.Point
	}
	return out
}
