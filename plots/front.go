package plots

import (
	"errors"
	"fmt"
	"math"
	"sort"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"benchtender/campaign"
)

// FrontPair plots every completed run in two responses, x against y, with
// the Pareto front (runs no run beats in both; members marks them) as a
// staircase in ochre, ringed, and the worst acceptable values (refX,
// refY; NaN for none) as dashed grey lines.
func FrontPair(rx, ry campaign.Response, xs, ys []float64, members []int, refX, refY float64) (Figure, error) {
	if len(xs) == 0 || len(xs) != len(ys) {
		return Figure{}, errors.New("plots: front: no completed runs")
	}
	title := fmt.Sprintf("%s against %s", ry.Name, rx.Name)
	p := newPlot(title, axisLabel(rx.Name, rx.Unit), axisLabel(ry.Name, ry.Unit))
	pts := make(plotter.XYs, len(xs))
	for i := range xs {
		pts[i] = plotter.XY{X: xs[i], Y: ys[i]}
	}
	// The front's members, sorted along x, joined as a staircase through
	// the corner that is the worse of two neighbours in each response: the
	// edge of what the front dominates.
	front := make(plotter.XYs, 0, len(members))
	for _, m := range members {
		front = append(front, pts[m])
	}
	sort.Slice(front, func(a, b int) bool { return front[a].X < front[b].X })
	var stairs plotter.XYs
	for i, q := range front {
		if i > 0 {
			prev, corner := front[i-1], q
			if rx.Better(q.X, prev.X) {
				corner.X = prev.X
			}
			if ry.Better(q.Y, prev.Y) {
				corner.Y = prev.Y
			}
			stairs = append(stairs, corner)
		}
		stairs = append(stairs, q)
	}
	var add []plot.Plotter
	for _, line := range []struct {
		pts plotter.XYs
		ok  bool
	}{
		{plotter.XYs{{X: refX, Y: minY(pts, refY)}, {X: refX, Y: maxY(pts, refY)}}, finite(refX)},
		{plotter.XYs{{X: minX(pts, refX), Y: refY}, {X: maxX(pts, refX), Y: refY}}, finite(refY)},
	} {
		if !line.ok {
			continue
		}
		l, err := plotter.NewLine(line.pts)
		if err != nil {
			return Figure{}, fmt.Errorf("plots: %w", err)
		}
		l.Color, l.Dashes = grey, []vg.Length{vg.Points(3), vg.Points(3)}
		add = append(add, l)
	}
	if len(stairs) > 0 {
		l, err := plotter.NewLine(stairs)
		if err != nil {
			return Figure{}, fmt.Errorf("plots: %w", err)
		}
		l.Color, l.Width = ochre, vg.Points(1.6)
		rings, err := plotter.NewScatter(front)
		if err != nil {
			return Figure{}, fmt.Errorf("plots: %w", err)
		}
		rings.GlyphStyle = draw.GlyphStyle{Color: ochre, Radius: vg.Points(5), Shape: draw.RingGlyph{}}
		add = append(add, l, rings)
	}
	s, err := runGlyphs(pts)
	if err != nil {
		return Figure{}, err
	}
	p.Add(append(add, s)...)
	svg, err := render(p)
	return Figure{Name: "front-" + rx.Name + "-" + ry.Name, Title: title, SVG: svg,
		Caption: fmt.Sprintf("Teal dots: every completed run; ochre rings joined by a staircase: the Pareto front, the runs no other run beats in both %s and %s; dashed grey: the worst acceptable values, from which the front is measured.", rx.Name, ry.Name)}, err
}

func minX(p plotter.XYs, v float64) float64 { return extreme(p, v, true, math.Min) }
func maxX(p plotter.XYs, v float64) float64 { return extreme(p, v, true, math.Max) }
func minY(p plotter.XYs, v float64) float64 { return extreme(p, v, false, math.Min) }
func maxY(p plotter.XYs, v float64) float64 { return extreme(p, v, false, math.Max) }

func extreme(p plotter.XYs, v float64, x bool, f func(a, b float64) float64) float64 {
	for _, q := range p {
		if x {
			v = f(v, q.X)
		} else {
			v = f(v, q.Y)
		}
	}
	return v
}

// Hypervolume plots what the runs dominate, up to the worst acceptable
// values, after each completed run: it rises when a run extends the front
// and stays flat when a run adds nothing to it.
func Hypervolume(volumes []float64, unit string) (Figure, error) {
	if len(volumes) == 0 {
		return Figure{}, errors.New("plots: hypervolume: no completed runs")
	}
	p := newPlot("Hypervolume of the front", "completed run", axisLabel("hypervolume", unit))
	pts := make(plotter.XYs, len(volumes))
	for i, v := range volumes {
		pts[i] = plotter.XY{X: float64(i + 1), Y: v}
	}
	l, err := plotter.NewLine(pts)
	if err != nil {
		return Figure{}, fmt.Errorf("plots: %w", err)
	}
	l.StepStyle = plotter.PostStep
	l.Color, l.Width = ochre, vg.Points(1.6)
	p.Add(l)
	svg, err := render(p)
	return Figure{Name: "hypervolume", Title: "Hypervolume of the front", SVG: svg,
		Caption: "The size of the region the runs dominate up to the worst acceptable values, after each completed run. A rise: a run moved the front out; a long flat stretch: recent runs added nothing to it."}, err
}
