package planner

import (
	"fmt"
	"math"
	"math/rand/v2"
	"sort"

	"benchtender/campaign"
	"benchtender/planner/gp"
)

// Fitted is a surrogate fitted to a campaign's runs, with the runs on the
// unit box and their modelled losses.
type Fitted struct {
	Model *gp.Model
	x     [][]float64
	y     []float64 // modelled losses, before warping
	w     warp
	// fittedAt is the number of runs when the hyperparameters were
	// last fitted (hold.go).
	fittedAt int
}

// Loss maps a model value (warped) back to a modelled loss.
func (f *Fitted) loss(u float64) float64 { return f.w.from(u) }

// fit fits the surrogate to the trials, on the unit box and the modelled
// scale (loss, transformed, warped), or conditions prev on them with its
// hyperparameters held (hold.go).
func (p *Planner) fit(trials []campaign.Trial, warm *gp.Params, prev *Surrogate, rng *rand.Rand) (*Fitted, error) {
	x := make([][]float64, len(trials))
	y := make([]float64, len(trials))
	for i, t := range trials {
		if len(t.Point) != p.space.Dim() || !t.Point.Finite() || math.IsNaN(t.Value) || math.IsInf(t.Value, 0) {
			return nil, fmt.Errorf("planner: trial %d is not usable: %v -> %v", i, t.Point, t.Value)
		}
		x[i] = p.space.ToUnit(nil, t.Point)
		v, err := p.resp.Modelled(t.Value)
		if err != nil {
			return nil, fmt.Errorf("planner: trial %d: %w", i, err)
		}
		y[i] = v
	}
	gx := make([][]float64, len(x))
	for i := range x {
		gx[i] = p.encode(x[i])
	}
	w := p.newWarp(y, len(gx[0]))
	yw := make([]float64, len(y))
	for i := range y {
		yw[i] = w.to(y[i])
	}
	fittedAt := len(trials)
	m := p.held(prev, gx, yw)
	if m != nil {
		fittedAt = prev.fitted.fittedAt
	} else {
		var err error
		if m, err = fitCapped(gx, yw, p.fitOptions(warm, rng, len(gx), len(gx[0]))); err != nil {
			return nil, fmt.Errorf("planner: fit surrogate: %w", err)
		}
	}
	return &Fitted{Model: m, x: x, y: y, w: w, fittedAt: fittedAt}, nil
}

// fitCap is the largest number of runs the hyperparameters are fitted to.
// Each step of the fit costs O(n³), so beyond it the fit (not the model)
// uses a subset: the best third, the latest third and an even spread of
// the rest. The model is then conditioned on every run with those
// hyperparameters, one factorisation.
const fitCap = 250

// fitCapped fits the hyperparameters to at most fitCap of the runs. With
// additive terms, the share is then chosen by leave-one-out prediction
// (chooseShare), on the same runs as the fit.
func fitCapped(x [][]float64, y []float64, opt gp.FitOptions) (*gp.Model, error) {
	if len(x) <= fitCap {
		m, err := gp.Fit(x, y, opt)
		if err != nil || !opt.Additive {
			return m, err
		}
		return chooseShare(x, y, m), nil
	}
	idx := fitSubset(y, fitCap)
	sx, sy := make([][]float64, len(idx)), make([]float64, len(idx))
	for i, j := range idx {
		sx[i], sy[i] = x[j], y[j]
	}
	sub, err := gp.Fit(sx, sy, opt)
	if err != nil {
		return nil, err
	}
	if opt.Additive {
		sub = chooseShare(sx, sy, sub)
	}
	return gp.New(x, y, sub.Params())
}

// fitSubset returns the indices (ascending) of n of the runs with losses
// y: the n/3 lowest, the n/3 latest, and the rest evenly spaced among the
// others.
func fitSubset(y []float64, n int) []int {
	take := make([]bool, len(y))
	order := make([]int, len(y))
	for i := range order {
		order[i] = i
	}
	sort.SliceStable(order, func(a, b int) bool { return y[order[a]] < y[order[b]] })
	for _, i := range order[:n/3] {
		take[i] = true
	}
	for i, k := len(y)-1, 0; i >= 0 && k < n/3; i-- {
		if !take[i] {
			take[i] = true
			k++
		}
	}
	var rest []int
	for i := range y {
		if !take[i] {
			rest = append(rest, i)
		}
	}
	left := n - 2*(n/3)
	for k := 0; k < left; k++ {
		take[rest[k*len(rest)/left]] = true
	}
	var out []int
	for i, t := range take {
		if t {
			out = append(out, i)
		}
	}
	return out
}

// byValue returns the points ordered from the lowest loss to the highest.
func byValue(x [][]float64, y []float64) [][]float64 {
	idx := make([]int, len(x))
	for i := range idx {
		idx[i] = i
	}
	sort.SliceStable(idx, func(a, b int) bool { return y[idx[a]] < y[idx[b]] })
	out := make([][]float64, len(x))
	for i, j := range idx {
		out[i] = x[j]
	}
	return out
}
