// Command runtrace prints one closed-loop campaign of runsbench run by run:
// each run's true value (noise, where the problem has it, goes to the
// planner only), the best so far, the model's additive share (gp/additive.go),
// how it was chosen and where,
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

	"benchtender/planner"
	"benchtender/planner/testfn"
	"benchtender/scripts/internal/closedloop"
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
	best := math.Inf(1)
	_, err = closedloop.Run(context.Background(), prob, uint64(seed), planner.Default(), false, func(st closedloop.Step) {
		if na := st.Result.NewAside; na != nil {
			fmt.Printf("    region: release %v, centre %.2v, length scales %.2v: %s\n", na.Release, na.Centre, na.Scales, na.Reason)
		}
		best = math.Min(best, st.Truth)
		share := "    "
		if f := st.Result.Fit; f != nil {
			share = fmt.Sprintf("%4.2f", f.Additive)
		}
		fmt.Printf("%3d %9.3f best %9.3f additive %s %-30s %.2v\n", st.Index+1, st.Truth, best, share, st.Result.Proposal.Method, st.Result.Proposal.Point)
	})
	if err != nil {
		fmt.Fprintln(os.Stderr, "runtrace:", err)
		os.Exit(1)
	}
	fmt.Printf("known minimum %g, tolerance %g\n", prob.Function.Min, prob.Tol)
}
