package plots

import (
	"errors"
	"fmt"
	"math"
	"sort"

	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"

	"benchtender/campaign"
	"benchtender/planner"
)

// BestSoFar plots every completed run's response against its run number,
// with the best so far as a step line.
func BestSoFar(resp campaign.Response, values []float64) (Figure, error) {
	if len(values) == 0 {
		return Figure{}, errors.New("plots: best so far: no completed runs")
	}
	p := newPlot("Best so far", "completed run", axisLabel(resp.Name, resp.Unit))
	pts := make(plotter.XYs, len(values))
	best := make(plotter.XYs, len(values))
	b := values[0]
	for i, v := range values {
		if resp.Better(v, b) {
			b = v
		}
		pts[i] = plotter.XY{X: float64(i + 1), Y: v}
		best[i] = plotter.XY{X: float64(i + 1), Y: b}
	}
	l, err := plotter.NewLine(best)
	if err != nil {
		return Figure{}, fmt.Errorf("plots: %w", err)
	}
	l.StepStyle = plotter.PostStep
	l.Color, l.Width = ochre, vg.Points(1.6)
	s, err := runGlyphs(pts)
	if err != nil {
		return Figure{}, err
	}
	p.Add(l, s)
	svg, err := render(p)
	return Figure{Name: "best-so-far", Title: "Best so far", SVG: svg,
		Caption: fmt.Sprintf("Teal dots: each completed run's %s; ochre line: the best so far. A line gone flat means recent runs found nothing better.", resp.Name)}, err
}

// Slice plots the surrogate along one factor through the predicted
// optimum: the median with its 95% band, and the runs (their value of
// this factor against their response; the other factors differ, so the
// runs need not lie on the curve).
func Slice(f campaign.Factor, resp campaign.Response, bands []planner.Band, runs []campaign.Trial, k int) (Figure, error) {
	if len(bands) < 2 {
		return Figure{}, fmt.Errorf("plots: slice along %s: %d points", f.Name, len(bands))
	}
	p := newPlot("Model along "+f.Name, axisLabel(f.Name, f.Unit), axisLabel(resp.Name, resp.Unit))
	if f.Kind == campaign.Categorical {
		p.X.Tick.Marker = categoryTicks(f)
	}
	upper := make(plotter.XYs, 0, 2*len(bands))
	med := make(plotter.XYs, len(bands))
	for i, b := range bands {
		upper = append(upper, plotter.XY{X: b.X, Y: b.High})
		med[i] = plotter.XY{X: b.X, Y: b.Median}
	}
	for i := len(bands) - 1; i >= 0; i-- {
		upper = append(upper, plotter.XY{X: bands[i].X, Y: bands[i].Low})
	}
	poly, err := plotter.NewPolygon(upper)
	if err != nil {
		return Figure{}, fmt.Errorf("plots: %w", err)
	}
	poly.Color = band
	poly.LineStyle.Width = 0
	l, err := plotter.NewLine(med)
	if err != nil {
		return Figure{}, fmt.Errorf("plots: %w", err)
	}
	l.Color, l.Width = ochre, vg.Points(1.6)
	p.Add(poly, l)
	if len(runs) > 0 {
		pts := make(plotter.XYs, len(runs))
		for i, r := range runs {
			pts[i] = plotter.XY{X: r.Point[k], Y: r.Value}
		}
		s, err := runGlyphs(pts)
		if err != nil {
			return Figure{}, err
		}
		p.Add(s)
	}
	svg, err := render(p)
	return Figure{Name: "slice-" + f.Name, Title: "Model along " + f.Name, SVG: svg,
		Caption: fmt.Sprintf("Ochre line: the model's %s as %s varies, every other factor held at the predicted optimum; sand band: where the true response lies with 95%% probability. Teal dots: the runs at their own %s (their other factors differ, so they need not lie on the line).", resp.Name, f.Name, f.Name)}, err
}

// Location plots where the optimum probably is along one factor: a
// histogram of the posterior draws' minimisers, scaled as a density, and
// its kernel density estimate.
func Location(f campaign.Factor, m planner.Marginal) (Figure, error) {
	if len(m.Counts) == 0 || len(m.Edges) != len(m.Counts)+1 {
		return Figure{}, fmt.Errorf("plots: optimum along %s: no histogram", f.Name)
	}
	p := newPlot("Where the optimum is: "+f.Name, axisLabel(f.Name, f.Unit), "probability density")
	if f.Kind == campaign.Categorical {
		p.X.Tick.Marker = categoryTicks(f)
	}
	total := 0
	for _, c := range m.Counts {
		total += c
	}
	h := &plotter.Histogram{FillColor: band}
	h.LineStyle.Color, h.LineStyle.Width = ochre, vg.Points(0.5)
	for i, c := range m.Counts {
		w := m.Edges[i+1] - m.Edges[i]
		if w <= 0 || total == 0 {
			continue
		}
		h.Bins = append(h.Bins, plotter.HistogramBin{Min: m.Edges[i], Max: m.Edges[i+1], Weight: float64(c) / (float64(total) * w)})
		h.Width = w
	}
	p.Add(h)
	if len(m.Grid) > 1 && len(m.Grid) == len(m.Density) {
		pts := make(plotter.XYs, len(m.Grid))
		for i := range m.Grid {
			pts[i] = plotter.XY{X: m.Grid[i], Y: m.Density[i]}
		}
		l, err := plotter.NewLine(pts)
		if err != nil {
			return Figure{}, fmt.Errorf("plots: %w", err)
		}
		l.Color, l.Width = ink, vg.Points(1.4)
		p.Add(l)
	}
	svg, err := render(p)
	return Figure{Name: "optimum-" + f.Name, Title: "Where the optimum is: " + f.Name, SVG: svg,
		Caption: fmt.Sprintf("Bars: where the best %s lies in each of %d functions drawn from the model; dark line: their smoothed density. Narrow: the runs so far pin it down; wide or with several peaks: more runs are needed.", f.Name, total)}, err
}

// density2 is a 2-D Gaussian kernel density estimate on a grid.
type density2 struct {
	xs, ys []float64
	z      [][]float64 // z[r][c]
}

func (d density2) Dims() (int, int)   { return len(d.xs), len(d.ys) }
func (d density2) Z(c, r int) float64 { return d.z[r][c] }
func (d density2) X(c int) float64    { return d.xs[c] }
func (d density2) Y(r int) float64    { return d.ys[r] }
func (d density2) Max() (max float64) { return maxOf(d.z) }
func maxOf(z [][]float64) (max float64) {
	for _, row := range z {
		for _, v := range row {
			max = math.Max(max, v)
		}
	}
	return max
}

// silverman is Silverman's rule-of-thumb bandwidth, 0.9·min(sd,
// IQR/1.34)·n^(−1/5) (Silverman 1986, Density Estimation for Statistics
// and Data Analysis, eq. 3.31), with a floor of span/100.
func silverman(v []float64, span float64) float64 {
	n := float64(len(v))
	var mean, ss float64
	for _, x := range v {
		mean += x
	}
	mean /= n
	for _, x := range v {
		ss += (x - mean) * (x - mean)
	}
	sd := math.Sqrt(ss / math.Max(n-1, 1))
	s := append([]float64(nil), v...)
	sort.Float64s(s)
	iqr := s[int(0.75*(n-1))] - s[int(0.25*(n-1))]
	spread := sd
	if iqr > 0 {
		spread = math.Min(sd, iqr/1.34)
	}
	return math.Max(0.9*spread*math.Pow(n, -0.2), span/100)
}

// kde2 is a product Gaussian kernel density estimate of the points on an
// n×n grid of cell centres over the two factors' ranges.
func kde2(fx, fy campaign.Factor, xs, ys []float64, n int) density2 {
	d := density2{xs: make([]float64, n), ys: make([]float64, n), z: make([][]float64, n)}
	for i := 0; i < n; i++ {
		d.xs[i] = fx.Min + (fx.Max-fx.Min)*(float64(i)+0.5)/float64(n)
		d.ys[i] = fy.Min + (fy.Max-fy.Min)*(float64(i)+0.5)/float64(n)
	}
	hx, hy := silverman(xs, fx.Max-fx.Min), silverman(ys, fy.Max-fy.Min)
	for r := 0; r < n; r++ {
		d.z[r] = make([]float64, n)
		for c := 0; c < n; c++ {
			var s float64
			for i := range xs {
				u, v := (d.xs[c]-xs[i])/hx, (d.ys[r]-ys[i])/hy
				s += math.Exp(-0.5 * (u*u + v*v))
			}
			d.z[r][c] = s / (float64(len(xs)) * 2 * math.Pi * hx * hy)
		}
	}
	return d
}

// Pair plots where the optimum probably is in the plane of two factors: a
// product-kernel density estimate of the draws' minimisers as shading,
// with the runs marked.
func Pair(fx, fy campaign.Factor, xs, ys []float64, runs []campaign.Trial, kx, ky int) (Figure, error) {
	if len(xs) < 2 || len(xs) != len(ys) {
		return Figure{}, fmt.Errorf("plots: optimum in %s and %s: %d draws", fx.Name, fy.Name, len(xs))
	}
	d := kde2(fx, fy, xs, ys, 48)
	cm, err := densityMap()
	if err != nil {
		return Figure{}, fmt.Errorf("plots: %w", err)
	}
	p := newPlot("Where the optimum is: "+fx.Name+" and "+fy.Name, axisLabel(fx.Name, fx.Unit), axisLabel(fy.Name, fy.Unit))
	hm := plotter.NewHeatMap(d, cm.Palette(64))
	hm.Min, hm.Max = 0, d.Max()
	p.Add(hm)
	if len(runs) > 0 {
		pts := make(plotter.XYs, len(runs))
		for i, r := range runs {
			pts[i] = plotter.XY{X: r.Point[kx], Y: r.Point[ky]}
		}
		s, err := runGlyphs(pts)
		if err != nil {
			return Figure{}, err
		}
		p.Add(s)
	}
	p.X.Min, p.X.Max, p.Y.Min, p.Y.Max = fx.Min, fx.Max, fy.Min, fy.Max
	svg, err := renderWithScale(p, cm, "probability density, share of its peak")
	return Figure{Name: "optimum-" + fx.Name + "-" + fy.Name, Title: "Where the optimum is: " + fx.Name + " and " + fy.Name, SVG: svg,
		Caption: fmt.Sprintf("Darker means the optimum more probably lies there (the scale: density as a share of its peak), from %d functions drawn from the model; teal dots: the runs so far.", len(xs))}, err
}

// BestValue plots the distribution of the best achievable response, one
// value per posterior draw, with the best run so far marked.
func BestValue(resp campaign.Response, values []float64, bestRun float64) (Figure, error) {
	var vs plotter.Values
	for _, v := range values {
		if finite(v) {
			vs = append(vs, v)
		}
	}
	if len(vs) < 2 {
		return Figure{}, errors.New("plots: best achievable value: too few draws")
	}
	p := newPlot("Best achievable "+resp.Name, axisLabel(resp.Name, resp.Unit), "probability density")
	h, err := plotter.NewHist(vs, 30)
	if err != nil {
		return Figure{}, fmt.Errorf("plots: %w", err)
	}
	h.Normalize(1)
	h.FillColor = band
	h.LineStyle.Color, h.LineStyle.Width = ochre, vg.Points(0.5)
	p.Add(h)
	if finite(bestRun) {
		_, _, _, ymax := h.DataRange()
		l, err := plotter.NewLine(plotter.XYs{{X: bestRun, Y: 0}, {X: bestRun, Y: ymax}})
		if err != nil {
			return Figure{}, fmt.Errorf("plots: %w", err)
		}
		l.Color, l.Width = teal, vg.Points(1.6)
		l.Dashes = []vg.Length{vg.Points(4), vg.Points(3)}
		p.Add(l)
	}
	svg, err := render(p)
	return Figure{Name: "best-value", Title: "Best achievable " + resp.Name, SVG: svg,
		Caption: fmt.Sprintf("Bars: how good the best %s in the space probably is (%d functions drawn from the model); dashed teal line: the best run so far. When that line sits at the good end of the bars, further runs are unlikely to gain much.", resp.Name, len(vs))}, err
}

// LeaveOneOut plots each run's measured response against the model's
// prediction for it from all the other runs, with 95% predictive bars
// and the line of perfect agreement.
func LeaveOneOut(resp campaign.Response, checks []planner.CheckPoint) (Figure, error) {
	if len(checks) == 0 {
		return Figure{}, errors.New("plots: leave-one-out: no runs")
	}
	label := axisLabel(resp.Name, resp.Unit)
	p := newPlot("Leave-one-out check", "measured "+label, "predicted from the other runs "+label)
	pts := make(plotter.XYs, len(checks))
	errs := make(plotter.YErrors, len(checks))
	lo, hi := math.Inf(1), math.Inf(-1)
	for i, c := range checks {
		pts[i] = plotter.XY{X: c.Measured, Y: c.Predicted}
		errs[i] = struct{ Low, High float64 }{c.Predicted - c.Low, c.High - c.Predicted}
		lo = math.Min(lo, math.Min(c.Measured, c.Low))
		hi = math.Max(hi, math.Max(c.Measured, c.High))
	}
	diag, err := plotter.NewLine(plotter.XYs{{X: lo, Y: lo}, {X: hi, Y: hi}})
	if err != nil {
		return Figure{}, fmt.Errorf("plots: %w", err)
	}
	diag.Color = grey
	diag.Dashes = []vg.Length{vg.Points(3), vg.Points(3)}
	bars, err := plotter.NewYErrorBars(struct {
		plotter.XYer
		plotter.YErrorer
	}{pts, errs})
	if err != nil {
		return Figure{}, fmt.Errorf("plots: %w", err)
	}
	bars.LineStyle.Color = ochre
	s, err := runGlyphs(pts)
	if err != nil {
		return Figure{}, err
	}
	p.Add(diag, bars, s)
	svg, err := render(p)
	return Figure{Name: "leave-one-out", Title: "Leave-one-out check", SVG: svg,
		Caption: "Teal dots: each run as measured and as the model predicts it from the other runs; ochre bars: 95% predictive intervals; dashed line: perfect agreement. When the model fits, about 19 runs in 20 have their bar crossing the dashed line."}, err
}
