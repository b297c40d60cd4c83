package planner

import (
	"context"
	"fmt"
	"math/rand/v2"
	"strings"

	"benchtender/campaign"
)

// The stopping rule.
//
// A campaign may stop before its budget when two tests both pass:
//
//   - improvement: the largest expected improvement anywhere, in the
//     response's unit, is below stop.ei_below: no run is expected to gain
//     more than that;
//   - location: for every factor, the 90% credible box of the optimum's
//     location (from posterior draws, optimum.go) is no wider than that
//     factor's stop.tolerance;
//   - search elsewhere (stop.search_elsewhere, on by default, while
//     setting aside is on, stall.go): the basin of the best run has been
//     set aside at least once and the search outside it came back
//     without beating it (a release).
//
// The first two measure how sure the model is, and a model is sure of the
// one well it knows: on the suite's many-welled problems the rule fired in
// a local well in 13 (michalewicz 2) and 25 (styblinski-tang mixed 3) of
// 30 campaigns (docs/planner-figures.md). The third asks for evidence
// from outside that well: one search elsewhere that found nothing better,
// the restart test of the set-aside search. It costs a stall window and a
// search on problems with one basin, and is measured in the same place.
//
// The location test needs posterior draws and their minimisers, the
// dearest part. It is worked out only once the improvement test passes,
// and then on a finite candidate set (locationBox): joint posterior
// samples at a few hundred points, space-filling ones plus points close
// around the best runs, each sample's minimiser taken among them (the
// discrete approximation of the minimiser's distribution used by entropy
// search, Hennig and Schuler 2012, "Entropy search for
// information-efficient global optimization", JMLR 13, section 2.2). One
// factorisation of the candidates' joint covariance serves every sample,
// where pathwise draws (the report's) cost a search per draw;
// BenchmarkProposeStopping measures what is left. Each test is reported
// with its value and threshold whether or not it passed, so status can
// say which one keeps the campaign going.

// StopTest is one test of the stopping rule.
type StopTest struct {
	// Name says what is tested: "expected improvement" or "optimum's
	// location along <factor>".
	Name string
	// Value and Threshold are in the response's unit (improvement) or the
	// factor's (location); the test passes when Value ≤ Threshold.
	Value, Threshold float64
	Unit             string
	// AtLeast turns the test round: it passes when Value ≥ Threshold (a
	// count of searches that must have been made).
	AtLeast bool
	// Done is false when the test was not worked out (the location tests
	// wait for the improvement test and the search elsewhere).
	Done, Passed bool
}

// String says the test in a few words, e.g. "expected improvement 0.012
// of at most 0.01 %: not met".
func (t StopTest) String() string {
	if !t.Done {
		return fmt.Sprintf("%s: not worked out (waits for the other tests to pass)", t.Name)
	}
	verdict := "met"
	if !t.Passed {
		verdict = "not met"
	}
	bound := "at most"
	if t.AtLeast {
		bound = "at least"
	}
	return strings.TrimSpace(fmt.Sprintf("%s %.3g of %s %.3g %s", t.Name, t.Value, bound, t.Threshold, t.Unit)) + ": " + verdict
}

// Stopping is the stopping rule's verdict on one proposal.
type Stopping struct {
	Tests []StopTest
	// Stop is true when every test passed.
	Stop bool
}

// String lists every test, separated by semicolons.
func (s *Stopping) String() string {
	if s == nil {
		return ""
	}
	parts := make([]string, len(s.Tests))
	for i, t := range s.Tests {
		parts[i] = t.String()
	}
	return strings.Join(parts, "; ")
}

// stopping applies the rule to f, the model of every run, given the
// largest expected improvement in the response's unit and the regions
// set aside so far. It returns nil when no tolerance is configured (the
// rule is off), and the optimum's distribution when it was worked out.
func (p *Planner) stopping(ctx context.Context, f *Fitted, ei float64, given []Aside, rng *rand.Rand) (*Stopping, *Optimum, error) {
	c := p.cfg.Stop
	if len(c.Tolerance) == 0 {
		return nil, nil, nil
	}
	imp := StopTest{Name: "expected improvement", Value: ei, Threshold: c.EIBelow, Unit: p.resp.Unit, Done: true, Passed: ei <= c.EIBelow}
	s := &Stopping{Tests: []StopTest{imp}}
	for _, fa := range p.space {
		s.Tests = append(s.Tests, StopTest{Name: "optimum's location along " + fa.Name, Threshold: c.Tolerance[fa.Name], Unit: fa.Unit})
	}
	elsewhere := p.cfg.SearchesElsewhere()
	if elsewhere {
		n := float64(p.searchedElsewhere(f, given))
		s.Tests = append(s.Tests, StopTest{Name: "searches outside the best run's basin that found nothing better", Value: n, Threshold: 1,
			AtLeast: true, Done: true, Passed: n >= 1})
	}
	if !imp.Passed || (elsewhere && !s.Tests[len(s.Tests)-1].Passed) {
		return s, nil, nil
	}
	box, err := p.locationBox(f, p.cfg.Samples, rng)
	if err != nil {
		return nil, nil, fmt.Errorf("planner: stopping rule: %w", err)
	}
	s.Stop = true
	for k := range p.space {
		t := &s.Tests[k+1]
		t.Value, t.Done = box[k][1]-box[k][0], true
		t.Passed = t.Value <= t.Threshold
		s.Stop = s.Stop && t.Passed
	}
	if !s.Stop {
		return s, nil, nil
	}
	// Stopping: the full distribution goes with the reason.
	o, err := p.OptimumOf(ctx, f, p.cfg.Samples, rng)
	if err != nil {
		return nil, nil, fmt.Errorf("planner: optimum distribution: %w", err)
	}
	return s, o, nil
}

// searchedElsewhere returns how many searches outside a region holding
// the best run of all came back without beating it: the releases whose
// regions (those set aside since the release before) include one that
// holds that run. Every region in given fits the campaign (asidesOf has
// checked them).
func (p *Planner) searchedElsewhere(f *Fitted, given []Aside) int {
	if len(f.y) == 0 {
		return 0
	}
	best := p.encode(byValue(f.x, f.y)[0])
	var n int
	regions := &aside{}
	for _, r := range given {
		if !r.Release {
			regions.add(p, r)
			continue
		}
		if regions.within(best, asideRadius) {
			n++
		}
		regions = &aside{}
	}
	return n
}

// locationBox returns the 90% credible box of the optimum's location, in
// factor units, from samples joint posterior draws at jointCandidates.
func (p *Planner) locationBox(f *Fitted, samples int, rng *rand.Rand) ([][2]float64, error) {
	cands := p.jointCandidates(f.x, byValue(f.x, f.y), rng)
	draws, _, err := f.Model.Sample(encodeAll(p, cands), samples, rng)
	if err != nil {
		return nil, err
	}
	mins := make([]campaign.Point, samples)
	for s := range mins {
		row := draws.RawRowView(s)
		best := 0
		for i, v := range row {
			if v < row[best] {
				best = i
			}
		}
		mins[s] = p.space.FromUnit(nil, cands[best])
	}
	box, _ := credibleBox(mins, 0.9)
	return box, nil
}

// jointCandidates is the set at which the optimum is drawn jointly:
// min(64, 16·d) points of a Latin hypercube, the runs, and 10 points around
// each of the three best runs (best, best first) at each of two scales (2%
// and 6% of the range), snapped to valid, feasible setpoints.
func (p *Planner) jointCandidates(runs, best [][]float64, rng *rand.Rand) []campaign.Point {
	d := p.space.Dim()
	var cands []campaign.Point
	add := func(u campaign.Point) {
		if u = p.snapUnit(u); p.feasibleUnit(u) {
			cands = append(cands, u)
		}
	}
	for _, u := range LatinHypercube(min(64, 16*d), d, rng) {
		add(u)
	}
	for _, u := range runs {
		add(u)
	}
	for _, c := range scatter(best[:min(3, len(best))], 10, []float64{0.02, 0.06}, rng) {
		add(c)
	}
	return cands
}
