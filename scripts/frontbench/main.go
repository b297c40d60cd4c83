// Command frontbench measures how much of the true Pareto front a campaign
// with two responses finds: closed-loop campaigns on the published
// two-response problems of planner/testfn.Pairs, one per problem, method
// and seed, each reporting the hypervolume its runs dominate up to the
// problem's reference point, as a share of the true front's, after a
// budget of runs (initial design counted). Random search and a Latin
// hypercube of the budget's size are the baselines, over the same seeds.
//
//	go run ./scripts/frontbench                          # 30 seeds, 40 runs
//	go run ./scripts/frontbench -only ZDT1 -seeds 5 -methods hypervolume
//	go run ./scripts/frontbench -csv front.csv
//
// Campaigns run in parallel (-parallel, every core by default) with a
// progress line per campaign on stderr; the table (Markdown) goes to
// stdout, and with -csv every campaign's share to a file.
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

	"benchtender/campaign"
	"benchtender/planner"
	"benchtender/planner/pareto"
	"benchtender/planner/testfn"
	"benchtender/scripts/internal/pool"
)

func main() {
	if err := run(os.Args[1:], os.Stdout, os.Stderr); err != nil {
		fmt.Fprintln(os.Stderr, "frontbench:", err)
		os.Exit(1)
	}
}

// Baselines beside the planner's methods.
const (
	methodRandom = "random"
	methodLatin  = "latin hypercube"
)

type job struct {
	pair   testfn.Pair
	method string
	seed   uint64
}

type outcome struct {
	share float64
	took  time.Duration
	// stopped is the number of runs after which the stopping rule fired
	// (0: it did not), reached the first run count at which the share
	// was at least 95% (0: never), with -stop.
	stopped, reached int
}

func run(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("frontbench", flag.ContinueOnError)
	seeds := fs.Int("seeds", 30, "campaigns per problem and method (seeds first-seed ... first-seed+seeds-1)")
	first := fs.Uint64("first-seed", 1, "first seed")
	budget := fs.Int("runs", 40, "runs per campaign, the initial design included")
	only := fs.String("only", "", "comma-separated problem names (default: every problem)")
	methods := fs.String("methods", strings.Join([]string{planner.FrontHypervolume, planner.FrontScalarised, methodLatin, methodRandom}, ","), "comma-separated methods")
	parallel := fs.Int("parallel", runtime.GOMAXPROCS(0), "campaigns run at once")
	csvPath := fs.String("csv", "", "write every campaign's share to this CSV file")
	def := planner.Default()
	stopBelow := fs.Float64("stop", 0, "turn the stopping rule on at this stop.hypervolume_below (e.g. 0.005) and stop each planner campaign when it fires")
	warp := fs.Bool("warp", def.Front.Warp, "the output warping of each response's model")
	kernel := fs.String("kernel", def.Front.Kernel, "kernel of the Gaussian processes")
	additive := fs.Bool("additive", def.Additive, "fit a share of one-factor additive terms in each response's kernel")
	noisy := fs.Bool("noisy", def.Front.Noisy, "measure the expected hypervolume improvement against the runs' values as the models draw them")
	noise := fs.Float64("noise", 0, "measurement noise: standard deviation as a share of each response's span from the front's best to the reference point (judged on true values)")
	if err := fs.Parse(args); err != nil {
		return err
	}
	cfg := def
	cfg.Front.Warp, cfg.Front.Kernel, cfg.Front.Noisy, cfg.Additive = *warp, *kernel, *noisy, *additive
	cfg.Stop.HypervolumeBelow = *stopBelow
	var pairs []testfn.Pair
	for _, p := range testfn.Pairs() {
		if *only == "" || slicesContains(strings.Split(*only, ","), pairName(p)) || slicesContains(strings.Split(*only, ","), p.Name) {
			pairs = append(pairs, p)
		}
	}
	if len(pairs) == 0 {
		return fmt.Errorf("no problem named %q", *only)
	}
	ms := strings.Split(*methods, ",")
	var jobs []job
	for _, p := range pairs {
		for _, m := range ms {
			for s := 0; s < *seeds; s++ {
				jobs = append(jobs, job{p, m, *first + uint64(s)})
			}
		}
	}
	out := make([]outcome, len(jobs))
	errs := make([]error, len(jobs))
	pool.Run(len(jobs), *parallel, func(i int) string {
		t0 := time.Now()
		o, err := campaignShare(jobs[i], *budget, cfg, *noise)
		o.took = time.Since(t0)
		out[i], errs[i] = o, err
		return fmt.Sprintf("%s, %s, seed %d: %.3f", pairName(jobs[i].pair), jobs[i].method, jobs[i].seed, o.share)
	}, stderr)
	for i, err := range errs {
		if err != nil {
			return fmt.Errorf("%s, %s, seed %d: %w", pairName(jobs[i].pair), jobs[i].method, jobs[i].seed, err)
		}
	}
	if *csvPath != "" {
		f, err := os.Create(*csvPath)
		if err != nil {
			return err
		}
		fmt.Fprintln(f, "problem,method,seed,runs,share,seconds,stopped_at,reached_95_at")
		for i, j := range jobs {
			fmt.Fprintf(f, "%s,%s,%d,%d,%.5f,%.2f,%d,%d\n", pairName(j.pair), j.method, j.seed, *budget, out[i].share, out[i].took.Seconds(), out[i].stopped, out[i].reached)
		}
		if err := f.Close(); err != nil {
			return err
		}
	}
	if *stopBelow > 0 {
		stopTable(stdout, pairs, jobs, out, *stopBelow, *budget)
		return nil
	}
	fmt.Fprintf(stdout, "Share of the true front's hypervolume after %d runs, %d seeds (%d to %d):\n\n", *budget, *seeds, *first, *first+uint64(*seeds)-1)
	fmt.Fprintln(stdout, "| problem | factors | method | median | 10th percentile | mean | ≥ 95% | median ÷ Latin hypercube's | s per campaign |")
	fmt.Fprintln(stdout, "| --- | --- | --- | --- | --- | --- | --- | --- | --- |")
	for _, p := range pairs {
		medians := map[string]float64{}
		rows := map[string][]float64{}
		took := map[string]time.Duration{}
		for i, j := range jobs {
			if pairName(j.pair) == pairName(p) {
				rows[j.method] = append(rows[j.method], out[i].share)
				took[j.method] += out[i].took
			}
		}
		for m, v := range rows {
			medians[m] = quantile(v, 0.5)
		}
		for _, m := range ms {
			v := rows[m]
			mean, hit := 0.0, 0
			for _, s := range v {
				mean += s
				if s >= 0.95 {
					hit++
				}
			}
			mean /= float64(len(v))
			ratio := "–"
			if lh, ok := medians[methodLatin]; ok && lh > 0 {
				ratio = fmt.Sprintf("%.2f", medians[m]/lh)
			}
			fmt.Fprintf(stdout, "| %s | %d | %s | %.3f | %.3f | %.3f | %d/%d | %s | %.1f |\n", pairName(p), p.Space.Dim(), m, medians[m], quantile(v, 0.1), mean, hit, len(v), ratio, took[m].Seconds()/float64(len(v)))
		}
	}
	return nil
}

// stopTable reports the stopping rule: when it fired, the share of the
// front found then, and how it stands against reaching 95%.
func stopTable(stdout io.Writer, pairs []testfn.Pair, jobs []job, out []outcome, below float64, budget int) {
	fmt.Fprintf(stdout, "Stopping rule at hypervolume_below = %g, budget %d runs:\n\n", below, budget)
	fmt.Fprintln(stdout, "| problem | method | fired | median run it fired | median share then | fired before 95% | runs after 95% (median) |")
	fmt.Fprintln(stdout, "| --- | --- | --- | --- | --- | --- | --- |")
	for _, p := range pairs {
		byMethod := map[string][]outcome{}
		var methods []string
		for i, j := range jobs {
			if pairName(j.pair) == pairName(p) {
				if _, ok := byMethod[j.method]; !ok {
					methods = append(methods, j.method)
				}
				byMethod[j.method] = append(byMethod[j.method], out[i])
			}
		}
		for _, m := range methods {
			var at, share, after []float64
			early := 0
			for _, o := range byMethod[m] {
				if o.stopped == 0 {
					continue
				}
				at = append(at, float64(o.stopped))
				share = append(share, o.share)
				if o.reached == 0 || o.reached > o.stopped {
					early++
				} else {
					after = append(after, float64(o.stopped-o.reached))
				}
			}
			afterText := "–"
			if len(after) > 0 {
				afterText = fmt.Sprintf("%.0f", quantile(after, 0.5))
			}
			fmt.Fprintf(stdout, "| %s | %s | %d/%d | %.0f | %.3f | %d | %s |\n", pairName(p), m, len(at), len(byMethod[m]), quantile(at, 0.5), quantile(share, 0.5), early, afterText)
		}
	}
}

func pairName(p testfn.Pair) string { return fmt.Sprintf("%s %d", p.Name, p.Space.Dim()) }

func slicesContains(xs []string, s string) bool {
	for _, x := range xs {
		if strings.TrimSpace(x) == s {
			return true
		}
	}
	return false
}

// quantile is the q-quantile by linear interpolation between order
// statistics (Hyndman and Fan 1996, definition 7).
func quantile(v []float64, q float64) float64 {
	s := append([]float64(nil), v...)
	sort.Float64s(s)
	if len(s) == 0 {
		return math.NaN()
	}
	h := q * float64(len(s)-1)
	lo := int(math.Floor(h))
	if lo+1 >= len(s) {
		return s[lo]
	}
	return s[lo] + (h-float64(lo))*(s[lo+1]-s[lo])
}

// campaignShare runs one campaign and returns the hypervolume its runs
// dominate as a share of the true front's (and with the stopping rule on,
// when it fired and when the share first reached 95%).
func campaignShare(j job, budget int, cfg planner.Config, noise float64) (outcome, error) {
	p := j.pair
	d := p.Space.Dim()
	var points []campaign.Point
	var values, measured [][]float64 // true values, and as the planner sees them
	var o outcome
	var sd [2]float64
	if noise > 0 {
		for k := range sd {
			best := math.Inf(1)
			for _, q := range p.Front(200) {
				best = math.Min(best, q[k])
			}
			sd[k] = noise * (p.Ref[k] - best)
		}
	}
	noiseRng := rand.New(rand.NewPCG(j.seed, 0x9015e))
	observe := func(pt campaign.Point) {
		v := p.F(pt)
		points = append(points, pt)
		values = append(values, []float64{v[0], v[1]})
		measured = append(measured, []float64{v[0] + sd[0]*noiseRng.NormFloat64(), v[1] + sd[1]*noiseRng.NormFloat64()})
		if o.reached == 0 && pareto.Hypervolume(values, p.Ref[:])/p.FrontHV >= 0.95 {
			o.reached = len(values)
		}
	}
	switch j.method {
	case methodRandom:
		rng := rand.New(rand.NewPCG(j.seed, 0xbe7c))
		for range budget {
			pt := make(campaign.Point, d)
			for k := range pt {
				f := p.Space[k]
				pt[k] = f.Min + rng.Float64()*(f.Max-f.Min)
			}
			observe(pt)
		}
	case methodLatin:
		rng := rand.New(rand.NewPCG(j.seed, 0x1a71))
		for _, u := range planner.LatinHypercube(budget, d, rng) {
			observe(p.Space.FromUnit(nil, u))
		}
	default:
		cc := campaign.Config{Name: "bench", StateDir: "x", Seed: j.seed, MaxRuns: budget, Factors: p.Space,
			Responses: []campaign.Response{{Name: "f1", Goal: campaign.Minimise, Worst: &p.Ref[0]}, {Name: "f2", Goal: campaign.Minimise, Worst: &p.Ref[1]}}}
		cc.Normalise()
		cfg.Front.Acquisition = j.method
		fp := planner.NewFront(cc, cfg)
		for i := range budget {
			req := planner.Request{RunID: fmt.Sprintf("R%04d", i+1), Index: i}
			for k, pt := range points {
				req.Trials = append(req.Trials, campaign.Trial{Point: pt, Values: measured[k]})
			}
			res, err := fp.Propose(context.Background(), req)
			if err != nil {
				return o, fmt.Errorf("run %d: %w", i+1, err)
			}
			if res.Stop != "" {
				o.stopped = len(points)
				break
			}
			observe(res.Proposal.Point)
		}
	}
	o.share = pareto.Hypervolume(values, p.Ref[:]) / p.FrontHV
	return o, nil
}
