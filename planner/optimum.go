package planner

import (
	"context"
	"math"
	"math/rand/v2"
	"runtime"
	"sort"
	"sync"

	"gonum.org/v1/gonum/stat"

	"benchtender/campaign"
	"benchtender/planner/gp"
)

// Marginal is the distribution of the optimum's location along one factor.
type Marginal struct {
	Factor string
	Unit   string
	// Edges (len Counts+1) and Counts are a histogram of the sampled
	// minimisers, in the factor's unit.
	Edges  []float64
	Counts []int
	// Grid and Density are a Gaussian kernel density estimate, with
	// Bandwidth chosen by Silverman's rule of thumb, h = 0.9 · min(sd,
	// IQR/1.34) · n^(−1/5) (Silverman 1986, Density Estimation for
	// Statistics and Data Analysis, eq. 3.31).
	Grid, Density []float64
	Bandwidth     float64
}

// Optimum is the joint distribution of where the optimum is and how good
// it is, from posterior draws: each draw's minimiser and minimum.
type Optimum struct {
	Samples int
	// Minimisers are in factor units; Values in the response's unit (the
	// best achievable value of each draw: a minimum for a minimised
	// response, a maximum for a maximised one).
	Minimisers []campaign.Point
	Values     []float64
	Marginals  []Marginal
	// Box is the smallest central box (per-factor quantiles at a common
	// level) holding at least 90% of the minimisers: Box[k] = {lo, hi}.
	Box     [][2]float64
	BoxMass float64
	// ValueMedian, ValueLow and ValueHigh are the median and the 5% and
	// 95% quantiles of the best achievable value.
	ValueMedian, ValueLow, ValueHigh float64
	// BestWithin is the probability that the best run so far (by
	// posterior mean) lies within the value tolerance of the optimum; NaN
	// when no tolerance is set.
	BestWithin float64
}

// optimumFeatures is the number of random features of each draw.
const optimumFeatures = 512

// OptimumOf draws posterior functions of the fitted surrogate and finds each one's minimiser: every draw is scored
// on a shared candidate set (space-filling points, the runs, and points
// around the best runs), then its best few candidates are refined by local
// search, so the minimisers are found in any dimension without a grid.
func (p *Planner) OptimumOf(ctx context.Context, f *Fitted, samples int, rng *rand.Rand) (*Optimum, error) {
	return p.optimumOf(ctx, f, samples, fullSearch, rng)
}

// effort is how hard each draw's minimiser is searched for.
type effort struct {
	candidates func(d int) int // space-filling candidates shared by the draws
	refine     int             // candidates refined by local search
	evals      int             // evaluations per refinement, per factor
}

var (
	// fullSearch is for the report and status.
	fullSearch = effort{candidates: func(d int) int { return min(1024, 128*d) }, refine: 2, evals: 40}
)

func (p *Planner) optimumOf(ctx context.Context, f *Fitted, samples int, e effort, rng *rand.Rand) (*Optimum, error) {
	d := p.space.Dim()
	m, x := f.Model, f.x
	bestFirst := byValue(x, f.y)
	cands := LatinHypercube(e.candidates(d), d, rng)
	cands = append(cands, pointsOf(x)...)
	for _, a := range bestFirst[:min(5, len(bestFirst))] {
		for j := 0; j < 30; j++ {
			c := make(campaign.Point, d)
			for k := range c {
				c[k] = math.Min(1, math.Max(0, a[k]+0.05*rng.NormFloat64()))
			}
			cands = append(cands, c)
		}
	}
	paths, err := m.Paths(samples, optimumFeatures, rng)
	if err != nil {
		return nil, err
	}
	o := &Optimum{Samples: samples, BestWithin: math.NaN()}
	lossAt := make([]float64, samples)
	// The best run so far, by posterior mean.
	bestRun, bestMu := -1, math.Inf(1)
	for i, xi := range x {
		if mu, _ := m.Predict(p.encode(xi)); mu < bestMu {
			bestRun, bestMu = i, mu
		}
	}
	// Draws are independent: minimise them side by side; results are
	// kept by index, so they do not depend on scheduling.
	o.Minimisers = make([]campaign.Point, samples)
	o.Values = make([]float64, samples)
	near := make([]bool, samples)
	var wg sync.WaitGroup
	next := make(chan int)
	for w := 0; w < runtime.GOMAXPROCS(0); w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for s := range next {
				bu, bv := p.minimisePath(paths[s], cands, d, e)
				o.Minimisers[s] = p.space.FromUnit(nil, bu)
				lossAt[s] = bv
				o.Values[s] = p.resp.Clamp(p.resp.Measured(f.loss(bv)))
				if bestRun >= 0 && p.cfg.Stop.ValueTolerance > 0 {
					near[s] = math.Abs(p.resp.Measured(f.loss(paths[s].At(p.encode(x[bestRun]))))-o.Values[s]) <= p.cfg.Stop.ValueTolerance
				}
			}
		}()
	}
	for s := range paths {
		if ctx.Err() != nil {
			break
		}
		next <- s
	}
	close(next)
	wg.Wait()
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	within := 0
	for _, ok := range near {
		if ok {
			within++
		}
	}
	if bestRun >= 0 && p.cfg.Stop.ValueTolerance > 0 {
		o.BestWithin = float64(within) / float64(samples)
	}
	sorted := append([]float64(nil), o.Values...)
	sort.Float64s(sorted)
	o.ValueMedian = stat.Quantile(0.5, stat.Empirical, sorted, nil)
	o.ValueLow = stat.Quantile(0.05, stat.Empirical, sorted, nil)
	o.ValueHigh = stat.Quantile(0.95, stat.Empirical, sorted, nil)
	o.Box, o.BoxMass = credibleBox(o.Minimisers, 0.9)
	for k, f := range p.space {
		col := make([]float64, samples)
		for s, mm := range o.Minimisers {
			col[s] = mm[k]
		}
		o.Marginals = append(o.Marginals, marginal(f, col))
	}
	return o, nil
}

// minimisePath finds a draw's minimiser over the valid, feasible
// setpoints: the best of the shared candidates, refined by Nelder-Mead from
// its best two.
func (p *Planner) minimisePath(path *gp.Path, cands []campaign.Point, d int, e effort) ([]float64, float64) {
	type cv struct {
		u []float64
		v float64
	}
	at := func(u []float64) float64 {
		u = p.snapUnit(u)
		if !p.feasibleUnit(u) {
			return math.Inf(1)
		}
		return path.At(p.encode(u))
	}
	vals := make([]cv, len(cands))
	for i, c := range cands {
		vals[i] = cv{p.snapUnit(c), at(c)}
	}
	sort.Slice(vals, func(a, b int) bool { return vals[a].v < vals[b].v })
	bu, bv := vals[0].u, vals[0].v
	for _, st := range vals[:min(e.refine, len(vals))] {
		x := newSimplex(st.u, 0.02, e.evals*d, 1e-7, 10)
		for u := x.ask(); u != nil; u = x.ask() {
			v := at(u)
			if math.IsInf(v, 1) {
				v = math.MaxFloat64
			}
			x.tell(v)
		}
		if r := x.result(); r != nil {
			u := p.snapUnit(r)
			if v := at(u); v < bv {
				bu, bv = u, v
			}
		}
	}
	return bu, bv
}

func pointsOf(x [][]float64) []campaign.Point {
	out := make([]campaign.Point, len(x))
	for i, r := range x {
		out[i] = r
	}
	return out
}

// credibleBox returns the central box, per-factor quantiles [a, 1−a] with a
// common a, that holds at least mass of the points, and the mass it holds.
func credibleBox(pts []campaign.Point, mass float64) ([][2]float64, float64) {
	d := len(pts[0])
	cols := make([][]float64, d)
	for k := range cols {
		cols[k] = make([]float64, len(pts))
		for i, p := range pts {
			cols[k][i] = p[k]
		}
		sort.Float64s(cols[k])
	}
	box := make([][2]float64, d)
	inside := func() float64 {
		n := 0
		for _, p := range pts {
			ok := true
			for k := range box {
				if p[k] < box[k][0] || p[k] > box[k][1] {
					ok = false
					break
				}
			}
			if ok {
				n++
			}
		}
		return float64(n) / float64(len(pts))
	}
	// Shrink the tail share a from (1−mass)/2 down until the box holds
	// enough; a = 0 is the full range of the samples.
	for a := (1 - mass) / 2; ; a -= 0.0025 {
		if a < 0 {
			a = 0
		}
		for k := range box {
			box[k] = [2]float64{stat.Quantile(a, stat.Empirical, cols[k], nil), stat.Quantile(1-a, stat.Empirical, cols[k], nil)}
		}
		if got := inside(); got >= mass || a == 0 {
			return box, got
		}
	}
}

func marginal(f campaign.Factor, v []float64) Marginal {
	mg := Marginal{Factor: f.Name, Unit: f.Unit}
	const bins = 20
	w := (f.Max - f.Min) / bins
	mg.Edges = make([]float64, bins+1)
	for i := range mg.Edges {
		mg.Edges[i] = f.Min + float64(i)*w
	}
	mg.Counts = make([]int, bins)
	for _, x := range v {
		i := int((x - f.Min) / w)
		mg.Counts[min(max(i, 0), bins-1)]++
	}
	sorted := append([]float64(nil), v...)
	sort.Float64s(sorted)
	sd := stat.StdDev(sorted, nil)
	iqr := stat.Quantile(0.75, stat.Empirical, sorted, nil) - stat.Quantile(0.25, stat.Empirical, sorted, nil)
	spread := sd
	if iqr > 0 {
		spread = math.Min(sd, iqr/1.34)
	}
	h := 0.9 * spread * math.Pow(float64(len(v)), -0.2)
	if !(h > 0) {
		h = (f.Max - f.Min) / 100 // all draws agree: a narrow spike
	}
	mg.Bandwidth = h
	const grid = 101
	mg.Grid = make([]float64, grid)
	mg.Density = make([]float64, grid)
	norm := 1 / (float64(len(v)) * h * math.Sqrt(2*math.Pi))
	for i := range mg.Grid {
		g := f.Min + float64(i)/(grid-1)*(f.Max-f.Min)
		mg.Grid[i] = g
		var s float64
		for _, x := range v {
			z := (g - x) / h
			s += math.Exp(-0.5 * z * z)
		}
		mg.Density[i] = s * norm
	}
	return mg
}
