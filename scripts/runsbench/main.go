// Command runsbench counts how many runs the planner needs to reach the
// optimum of the published test problems of planner/testfn.Suite:
// closed-loop campaigns, one per problem and seed, each stopped when the
// true value of a run comes within the problem's tolerance of the known
// minimum (1% of |minimum|; see the suite), with the initial design
// counted, or when the problem's budget is used up. Random search and a
// Latin hypercube of the budget's size, in random order, are the
// baselines, over the same seeds.
//
//	go run ./scripts/runsbench -set tuning            # decide on this set
//	go run ./scripts/runsbench -set validation        # then confirm on this one
//	go run ./scripts/runsbench -only branin,"levy 4 rotated" -seeds 10
//	go run ./scripts/runsbench -acquisition portfolio -csv runs.csv
//	go run ./scripts/runsbench -set tuning -max-factors 3 -stop   # the stopping rule
//
// Campaigns run in parallel (-parallel, every core by default) with a
// progress line per campaign on stderr; the table (Markdown) goes to stdout, and with
// -csv every campaign's count to a file, so that two settings can be
// compared seed by seed.
package main

import (
	"context"
	"flag"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"os"
	"runtime"
	"sort"
	"strings"
	"time"

	"benchtender/planner"
	"benchtender/planner/testfn"
	"benchtender/scripts/internal/closedloop"
	"benchtender/scripts/internal/pool"
)

func main() {
	if err := run(os.Args[1:], os.Stdout, os.Stderr); err != nil {
		fmt.Fprintln(os.Stderr, "runsbench:", err)
		os.Exit(1)
	}
}

// job is one campaign to run.
type job struct {
	prob testfn.Problem
	seed uint64
}

// outcome is what one campaign gave.
type outcome struct {
	runs    int
	reached bool
	took    time.Duration
	// stopped is the number of runs after which the stopping rule fired
	// (0: it did not), with -stop.
	stopped int
}

func run(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("runsbench", flag.ContinueOnError)
	def := planner.Default()
	seeds := fs.Int("seeds", 30, "campaigns per problem (seeds first-seed ... first-seed+seeds-1)")
	first := fs.Uint64("first-seed", 1, "first seed")
	set := fs.String("set", "all", "tuning, validation or all")
	only := fs.String("only", "", "comma-separated problem names (default: every problem of the set)")
	maxFactors := fs.Int("max-factors", 10, "leave out problems with more factors (trid 10 takes minutes a campaign)")
	stopRule := fs.Bool("stop", false, "turn the stopping rule on (location tolerance 5% of each factor's range, ei_below a tenth of the problem's tolerance) and run each campaign until it fires or the budget is spent")
	parallel := fs.Int("parallel", runtime.GOMAXPROCS(0), "campaigns run at once")
	csvPath := fs.String("csv", "", "write every campaign's result to this CSV file")
	strategy := fs.String("acquisition", def.Acquisition, "proposal strategy")
	warp := fs.Bool("warp", def.Warp, "the planner's output warping")
	kernel := fs.String("kernel", def.Kernel, "kernel of the Gaussian process")
	additive := fs.Bool("additive", def.Additive, "fit a share of one-factor additive terms in the kernel")
	beta := fs.Float64("beta", def.Beta, "exploration weight of the confidence bound")
	every := fs.Int("thompson-every", def.ThompsonEvery, "with the portfolio, one run in this many is a Thompson draw")
	shortlist := fs.Float64("shortlist", def.Shortlist, "expected improvement's shortlist share (0: plain)")
	aside := fs.Bool("set-aside", def.SetAside, "set a stalled basin aside")
	refit := fs.Int("refit-every", def.RefitEvery, "fit the hyperparameters from every start every this many runs, from the previous fit between")
	candidates := fs.Int("candidates", def.Candidates, "space-filling candidates at which the acquisition is scored")
	refine := fs.Int("refine", def.Refine, "best candidates refined by local search")
	elsewhere := fs.Bool("search-elsewhere", def.Stop.SearchElsewhere, "with -stop, the rule waits for a search outside the best run's basin")
	if err := fs.Parse(args); err != nil {
		return err
	}
	cfg := def
	cfg.Acquisition, cfg.Warp, cfg.Kernel, cfg.Beta, cfg.ThompsonEvery = *strategy, *warp, *kernel, *beta, *every
	cfg.Shortlist, cfg.SetAside, cfg.RefitEvery = *shortlist, *aside, *refit
	cfg.Candidates, cfg.Refine = *candidates, *refine
	cfg.Stop.SearchElsewhere, cfg.Additive = *elsewhere, *additive
	if err := cfg.Validate().Err(); err != nil {
		return err
	}
	var probs []testfn.Problem
	for _, p := range testfn.Suite() {
		if (*set == "all" || p.Set == *set) && (*only == "" || strings.Contains(","+*only+",", ","+p.Name+",")) && p.Space.Dim() <= *maxFactors {
			probs = append(probs, p)
		}
	}
	if len(probs) == 0 {
		return fmt.Errorf("no problem matches -set %q -only %q", *set, *only)
	}
	var jobs []job
	for _, p := range probs {
		for s := 0; s < *seeds; s++ {
			jobs = append(jobs, job{p, *first + uint64(s)})
		}
	}
	// The slowest problems first, so that the parallel tail is short.
	sort.SliceStable(jobs, func(a, b int) bool {
		return jobs[a].prob.Budget*jobs[a].prob.Space.Dim() > jobs[b].prob.Budget*jobs[b].prob.Space.Dim()
	})
	results := make([]outcome, len(jobs))
	start := time.Now()
	pool.Run(len(jobs), *parallel, func(i int) string {
		t0 := time.Now()
		n, ok, stop := campaignRuns(jobs[i].prob, jobs[i].seed, cfg, *stopRule)
		results[i] = outcome{n, ok, time.Since(t0), stop}
		return fmt.Sprintf("%s seed %d, %d runs, reached %v", jobs[i].prob.Name, jobs[i].seed, n, ok)
	}, stderr)
	fmt.Fprintln(stderr)

	if *csvPath != "" {
		if err := writeCSV(*csvPath, jobs, results); err != nil {
			return err
		}
	}
	fmt.Fprintf(stdout, "Runs to reach the optimum (within the tolerance), seeds %d-%d; acquisition %s (Thompson every %d), shortlist %g, set aside %v, warp %v, kernel %s, additive %v, refit every %d; %s.\n\n",
		*first, *first+uint64(*seeds)-1, cfg.Acquisition, cfg.ThompsonEvery, cfg.Shortlist, cfg.SetAside, cfg.Warp, cfg.Kernel, cfg.Additive, cfg.RefitEvery, time.Since(start).Round(time.Second))
	fmt.Fprintln(stdout, "| set | problem | factors | budget | mean | median | p90 | reached | random search: mean, reached | Latin hypercube: mean, reached | s per campaign |")
	fmt.Fprintln(stdout, "| --- | --- | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: |")
	for _, p := range probs {
		var counts []float64
		reached := 0
		var took time.Duration
		var seedsOf []uint64
		for i, j := range jobs {
			if j.prob.Name == p.Name {
				counts = append(counts, float64(results[i].runs))
				took += results[i].took
				seedsOf = append(seedsOf, j.seed)
				if results[i].reached {
					reached++
				}
			}
		}
		rMean, rHit := baseline(p, seedsOf, randomOrder)
		lMean, lHit := baseline(p, seedsOf, latinOrder)
		sort.Float64s(counts)
		fmt.Fprintf(stdout, "| %s | %s | %d | %d | %.1f | %.0f | %.0f | %d/%d | %.1f, %d/%d | %.1f, %d/%d | %.1f |\n",
			p.Set, p.Name, p.Space.Dim(), p.Budget, mean(counts), quantile(counts, 0.5), quantile(counts, 0.9), reached, len(counts),
			rMean, rHit, len(counts), lMean, lHit, len(counts), took.Seconds()/float64(len(counts)))
	}
	fmt.Fprintln(stdout, "\nA campaign that does not reach the optimum within its budget counts as the budget in the mean; p90 is the 90th percentile.")
	if *stopRule {
		stopTable(stdout, probs, jobs, results)
	}
	return nil
}

// stopTable says, per problem, how often the stopping rule fired, how
// often before the optimum was reached (too early), and how many runs
// after reaching it (median).
func stopTable(stdout io.Writer, probs []testfn.Problem, jobs []job, results []outcome) {
	fmt.Fprintln(stdout, "\nStopping rule (location 5% of each range, ei_below a tenth of the tolerance):")
	fmt.Fprintln(stdout, "\n| problem | fired | before the optimum was reached | runs after reaching, median | never fired |")
	fmt.Fprintln(stdout, "| --- | ---: | ---: | ---: | ---: |")
	for _, p := range probs {
		var fired, early, never int
		var after []float64
		for i, j := range jobs {
			if j.prob.Name != p.Name {
				continue
			}
			r := results[i]
			switch {
			case r.stopped == 0:
				never++
			case !r.reached || r.stopped < r.runs:
				fired++
				early++
			default:
				fired++
				after = append(after, float64(r.stopped-r.runs))
			}
		}
		med := "–"
		if len(after) > 0 {
			sort.Float64s(after)
			med = fmt.Sprintf("%.0f", quantile(after, 0.5))
		}
		fmt.Fprintf(stdout, "| %s | %d | %d | %s | %d |\n", p.Name, fired, early, med, never)
	}
}

// campaignRuns runs one closed-loop campaign and returns the number of
// runs until one came within the tolerance (or the budget). With stop, the
// stopping rule is on and the campaign goes on until it fires (its run
// count is returned last; 0 when it never fired).
func campaignRuns(prob testfn.Problem, seed uint64, cfg planner.Config, stop bool) (int, bool, int) {
	o, err := closedloop.Run(context.Background(), prob, seed, cfg, stop, nil)
	if err != nil {
		fmt.Fprintf(os.Stderr, "\n%v\n", err)
	}
	return o.Runs, o.Reached, o.Stopped
}

// An order is a baseline's sequence of points for one seed.
type order func(f testfn.Function, budget int, rng *rand.Rand) [][]float64

// randomOrder is uniform random search.
func randomOrder(f testfn.Function, budget int, rng *rand.Rand) [][]float64 {
	pts := make([][]float64, budget)
	for i := range pts {
		pts[i] = make([]float64, f.Space.Dim())
		for k := range pts[i] {
			pts[i][k] = rng.Float64()
		}
	}
	return pts
}

// latinOrder is a Latin hypercube of the budget's size, run in random
// order.
func latinOrder(f testfn.Function, budget int, rng *rand.Rand) [][]float64 {
	pts := planner.LatinHypercube(budget, f.Space.Dim(), rng)
	out := make([][]float64, len(pts))
	for i, j := range rng.Perm(len(pts)) {
		out[i] = pts[j]
	}
	return out
}

// baseline returns a baseline's mean runs (a failure counts as the
// budget) and how many seeds reached the optimum.
func baseline(p testfn.Problem, seeds []uint64, o order) (float64, int) {
	var sum float64
	hit := 0
	for _, s := range seeds {
		f := p.Instance(s)
		rng := rand.New(rand.NewPCG(s, 7))
		n := p.Budget
		for i, u := range o(f, p.Budget, rng) {
			x := f.Space.Snap(f.Space.FromUnit(nil, u))
			if p.Reached(f.F(x)) {
				n = i + 1
				hit++
				break
			}
		}
		sum += float64(n)
	}
	return sum / float64(len(seeds)), hit
}

func writeCSV(path string, jobs []job, results []outcome) error {
	var b strings.Builder
	b.WriteString("problem,seed,runs,reached,seconds\n")
	for i, j := range jobs {
		fmt.Fprintf(&b, "%q,%d,%d,%v,%.2f\n", j.prob.Name, j.seed, results[i].runs, results[i].reached, results[i].took.Seconds())
	}
	return os.WriteFile(path, []byte(b.String()), 0o644)
}

func mean(v []float64) float64 {
	var s float64
	for _, x := range v {
		s += x
	}
	return s / float64(len(v))
}

// quantile is the empirical quantile of sorted values (the smallest value
// with at least q of the values at or below it).
func quantile(sorted []float64, q float64) float64 {
	i := int(math.Ceil(q*float64(len(sorted)))) - 1
	return sorted[min(max(i, 0), len(sorted)-1)]
}
