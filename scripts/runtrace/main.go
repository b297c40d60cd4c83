// Command runtrace prints one closed-loop campaign of runsbench run by run:
// each run's true value, the best so far, how it was chosen and where,
// and every region set aside or released, with its reason. It is for
// seeing why a campaign misses the optimum, not for counting.
//
//	go run ./scripts/runtrace "styblinski-tang 4" 2
package main

import (
	"context"
	"fmt"
	"math"
	"os"
	"strconv"

	"benchtender/campaign"
	"benchtender/planner"
	"benchtender/planner/gp"
	"benchtender/planner/testfn"
)

func main() {
	if len(os.Args) != 3 {
		fmt.Fprintln(os.Stderr, "usage: runtrace PROBLEM SEED  (a problem of planner/testfn.Suite)")
		os.Exit(2)
	}
	name := os.Args[1]
	seed, err := strconv.Atoi(os.Args[2])
	if err != nil || seed < 0 {
		fmt.Fprintf(os.Stderr, "runtrace: seed %q is not a whole number\n", os.Args[2])
		os.Exit(2)
	}
	var prob testfn.Problem
	for _, p := range testfn.Suite() {
		if p.Name == name {
			prob = p
		}
	}
	if prob.Name == "" {
		fmt.Fprintf(os.Stderr, "runtrace: no problem %q in the suite\n", name)
		os.Exit(2)
	}
	f := prob.Instance(uint64(seed))
	cfg := planner.Default()
	cc := campaign.Config{Name: "bench", StateDir: "x", Seed: uint64(seed), MaxRuns: prob.Budget, Factors: f.Space,
		Response: campaign.Response{Name: "f", Goal: campaign.Minimise}}
	p := planner.New(cc, cfg)
	var trials []campaign.Trial
	var warm *gp.Params
	var previous *planner.Surrogate
	var asides []planner.Aside
	best := math.Inf(1)
	for i := 0; i < prob.Budget; i++ {
		res, err := p.Propose(context.Background(), planner.Request{RunID: "R", Index: i, Trials: trials, Warm: warm, Previous: previous, Aside: asides})
		if err != nil {
			fmt.Fprintf(os.Stderr, "runtrace: run %d: %v\n", i+1, err)
			os.Exit(1)
		}
		warm, previous = res.Fit, res.Surrogate
		if res.NewAside != nil {
			asides = append(asides, *res.NewAside)
			fmt.Printf("    region: release %v, centre %.2v, length scales %.2v: %s\n", res.NewAside.Release, res.NewAside.Centre, res.NewAside.Scales, res.NewAside.Reason)
		}
		v := f.F(res.Proposal.Point)
		best = math.Min(best, v)
		fmt.Printf("%3d %9.3f best %9.3f %-30s %.2v\n", i+1, v, best, res.Proposal.Method, res.Proposal.Point)
		trials = append(trials, campaign.Trial{Point: res.Proposal.Point, Value: v})
		if prob.Reached(v) {
			break
		}
	}
	fmt.Printf("known minimum %g, tolerance %g\n", prob.Function.Min, prob.Tol)
}
