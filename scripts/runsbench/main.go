// Command runsbench counts how many runs the planner needs to reach the
// optimum of published test functions (planner/testfn): closed-loop
// campaigns over many seeds, each stopped when the best value found is
// within 1% relative error of the known minimum, |best − min|/|min| < 0.01,
// with the initial design counted. Random search is the baseline. With
// -noise, every observation carries Gaussian noise of 1% of the function's
// range and a campaign counts as done when the true value at one of its
// runs is within 1%.
//
//	go run ./scripts/runsbench                 # every function, 30 seeds
//	go run ./scripts/runsbench -noise -seeds 10 -only branin
//	go run ./scripts/runsbench -noise -warp=false -only forrester,branin
//	go run ./scripts/runsbench -noise -known-noise   # noise_sd given
//	go run ./scripts/runsbench -only "hartmann 6-D" -parallel 2
//	go run ./scripts/runsbench -acquisition confidence_bound -beta 1 -seed-list 1001,1002
//	go run ./scripts/runsbench -shortlist 0   # plain expected improvement
//
// Function names are those of planner/testfn (forrester, branin,
// six-hump camel, hartmann 6-D).
package main

import (
	"context"
	"flag"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"runtime"
	"sort"
	"strconv"
	"strings"
	"sync"
	"time"

	"benchtender/campaign"
	"benchtender/planner"
	"benchtender/planner/gp"
	"benchtender/planner/testfn"
)

func main() {
	seeds := flag.Int("seeds", 30, "campaigns per function")
	noise := flag.Bool("noise", false, "add Gaussian noise of 1% of the function's range")
	only := flag.String("only", "", "comma-separated function names (default: all)")
	acq := flag.String("acquisition", planner.AcqExpectedImprovement, "acquisition function")
	beta := flag.Float64("beta", planner.Default().Beta, "exploration weight of the confidence bound")
	shortlist := flag.Float64("shortlist", planner.Default().Shortlist, "expected improvement's shortlist share (0: plain expected improvement)")
	warp := flag.Bool("warp", true, "the planner's output warping")
	aside := flag.Bool("set-aside", planner.Default().SetAside, "set a stalled basin aside")
	known := flag.Bool("known-noise", false, "with -noise, tell the planner the noise (noise_sd), as the README advises for noisy instruments")
	kernel := flag.String("kernel", planner.Default().Kernel, "kernel of the Gaussian process")
	cands := flag.Int("candidates", planner.Default().Candidates, "space-filling points scored before refinement")
	refine := flag.Int("refine", planner.Default().Refine, "best candidates refined by local search")
	starts := flag.Int("fit-starts", planner.Default().FitStarts, "random starts of the hyperparameter fit")
	initial := flag.Int("initial", 0, "initial design size (0: the campaign default, d+2 and at least 4)")
	seedList := flag.String("seed-list", "", "comma-separated seeds to run instead of 1..seeds (to study particular campaigns)")
	parallel := flag.Int("parallel", runtime.GOMAXPROCS(0), "campaigns run at once")
	flag.Parse()
	var seedNums []uint64
	for s := 1; s <= *seeds; s++ {
		seedNums = append(seedNums, uint64(s))
	}
	if *seedList != "" {
		seedNums = seedNums[:0]
		for _, f := range strings.Split(*seedList, ",") {
			n, err := strconv.ParseUint(strings.TrimSpace(f), 10, 64)
			if err != nil {
				fmt.Fprintf(os.Stderr, "runsbench: -seed-list: %v\n", err)
				os.Exit(2)
			}
			seedNums = append(seedNums, n)
		}
	}
	nSeeds := len(seedNums)
	cfg := planner.Default()
	cfg.Acquisition, cfg.Beta, cfg.Shortlist, cfg.Warp, cfg.SetAside, cfg.Kernel = *acq, *beta, *shortlist, *warp, *aside, *kernel
	cfg.Candidates, cfg.Refine, cfg.FitStarts = *cands, *refine, *starts
	fmt.Printf("runs to reach 1%% of the known minimum; %d seeds; noise %v (known to the planner: %v); acquisition %s (beta %g, shortlist %g); kernel %s; warp %v; set aside %v; initial %d (0: default)\n\n", nSeeds, *noise, *known, *acq, *beta, *shortlist, *kernel, *warp, *aside, *initial)
	fmt.Println("| function | budget | planner mean | sd | median | min-max | reached | random search mean | time per campaign |")
	fmt.Println("| --- | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: |")
	for _, f := range testfn.All() {
		if *only != "" && !strings.Contains(","+*only+",", ","+f.Name+",") {
			continue
		}
		budget := map[int]int{1: 40, 2: 60, 6: 200}[f.Space.Dim()]
		rangeF := span(f)
		counts := make([]float64, nSeeds)
		hit := make([]bool, nSeeds)
		start := time.Now()
		var wg sync.WaitGroup
		sem := make(chan struct{}, max(1, *parallel))
		for i, s := range seedNums {
			wg.Add(1)
			sem <- struct{}{}
			go func() {
				defer func() { <-sem; wg.Done() }()
				c := cfg
				if *noise && *known {
					c.NoiseSD = 0.01 * rangeF
				}
				n, ok := campaignRuns(f, s, budget, *noise, rangeF, c, *initial)
				counts[i], hit[i] = float64(n), ok
				fmt.Fprintf(os.Stderr, "%s seed %d: %d runs (reached %v)\n", f.Name, s, n, ok)
			}()
		}
		wg.Wait()
		reached := 0
		for _, ok := range hit {
			if ok {
				reached++
			}
		}
		// Wall time per campaign, with -parallel campaigns at once.
		per := time.Since(start) / time.Duration(nSeeds)
		var rs []float64
		for s := 1; s <= 200; s++ {
			rs = append(rs, float64(randomRuns(f, uint64(s), 1_000_000, *noise, rangeF)))
		}
		mean, sd := meanSD(counts)
		sort.Float64s(counts)
		rmean, _ := meanSD(rs)
		fmt.Printf("| %s | %d | %.1f | %.1f | %.0f | %.0f-%.0f | %d/%d | %.0f | %.1f s |\n", f.Name, budget, mean, sd, counts[len(counts)/2], counts[0], counts[len(counts)-1], reached, nSeeds, rmean, per.Seconds())
	}
	fmt.Println("\nA campaign that does not reach 1% within its budget counts as the budget.")
}

func reachedMin(f testfn.Function, v float64) bool {
	return math.Abs(v-f.Min)/math.Abs(f.Min) < 0.01
}

// campaignRuns runs one closed-loop campaign with the planner configured
// by cfg and returns the number of evaluations until the 1% level was
// reached (or the budget).
func campaignRuns(f testfn.Function, seed uint64, budget int, noisy bool, rangeF float64, cfg planner.Config, initial int) (int, bool) {
	cc := campaign.Config{Name: "bench", StateDir: "x", Seed: seed, MaxRuns: budget, Factors: f.Space,
		Response: campaign.Response{Name: "f", Goal: campaign.Minimise}, InitialRuns: initial}
	p := planner.New(cc, cfg)
	noiseRNG := rand.New(rand.NewPCG(seed, 99))
	var trials []campaign.Trial
	var warm *gp.Params
	for i := 0; i < budget; i++ {
		res, err := p.Propose(context.Background(), planner.Request{RunID: "R", Index: i, Trials: trials, Warm: warm})
		if err != nil {
			fmt.Fprintf(os.Stderr, "%s seed %d run %d: %v\n", f.Name, seed, i, err)
			return budget, false
		}
		warm = res.Fit
		truth := f.F(res.Proposal.Point)
		obs := truth
		if noisy {
			obs += 0.01 * rangeF * noiseRNG.NormFloat64()
		}
		trials = append(trials, campaign.Trial{Point: res.Proposal.Point, Value: obs})
		if reachedMin(f, truth) {
			return i + 1, true
		}
	}
	return budget, false
}

// randomRuns draws uniform points until one reaches the 1% level.
func randomRuns(f testfn.Function, seed uint64, budget int, noisy bool, rangeF float64) int {
	rng := rand.New(rand.NewPCG(seed, 7))
	x := make([]float64, f.Space.Dim())
	for i := 0; i < budget; i++ {
		for k, fa := range f.Space {
			x[k] = fa.Min + rng.Float64()*(fa.Max-fa.Min)
		}
		if reachedMin(f, f.F(x)) {
			return i + 1
		}
	}
	return budget
}

// span is the function's range over its domain, from 100,000 random
// points (for the noise level).
func span(f testfn.Function) float64 {
	rng := rand.New(rand.NewPCG(1, 1))
	lo, hi := math.Inf(1), math.Inf(-1)
	x := make([]float64, f.Space.Dim())
	for i := 0; i < 100000; i++ {
		for k, fa := range f.Space {
			x[k] = fa.Min + rng.Float64()*(fa.Max-fa.Min)
		}
		v := f.F(x)
		lo, hi = math.Min(lo, v), math.Max(hi, v)
	}
	return hi - lo
}

func meanSD(v []float64) (float64, float64) {
	var s, ss float64
	for _, x := range v {
		s += x
	}
	m := s / float64(len(v))
	for _, x := range v {
		ss += (x - m) * (x - m)
	}
	return m, math.Sqrt(ss / float64(len(v)-1))
}
