package planner

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"

	"benchtender/campaign"
)

// Scale is a fitted length-scale in a factor's own unit.
type Scale struct {
	Factor string
	Unit   string
	Value  float64
}

// CheckPoint is one run's leave-one-out check: what the model, fitted to
// every other run, predicts for it.
type CheckPoint struct {
	Index     int     // position in the trials given
	Measured  float64 // in the response's unit
	Predicted float64 // in the response's unit
	// SD is the predictive standard deviation in the model's own units
	// (see Diagnostics.Units).
	SD float64
	// Low and High bound the central 95% predictive band (noise
	// included), in the response's unit.
	Low, High float64
	// Standardised is (measured − predicted)/SD in the model's units;
	// about 95% of them lie within ±2 when the model fits.
	Standardised float64
}

// Diagnostics describe a fitted surrogate in terms a person can read.
type Diagnostics struct {
	Runs   int
	Kernel string
	// LengthScales: how far a factor must move, in its own unit, for the
	// response to change appreciably (a long scale means little effect).
	LengthScales []Scale
	// SignalSD and NoiseSD are in the model's units.
	SignalSD, NoiseSD float64
	// Additive is the share of the signal's variance the model gives to
	// one-factor effects (the additive terms, gp/additive.go); the rest
	// is in effects of the factors together. 0 with additive off.
	Additive float64
	// Units names the model's units: the response's unit, "natural-log
	// units" with transform = "log", or "warped units" when the output
	// warping is on.
	Units         string
	LogLikelihood float64
	Checks        []CheckPoint
	// LOORMSE is the root mean square leave-one-out error in the
	// response's unit; Outside2 the share of runs whose standardised error exceeds
	// 2 in size.
	LOORMSE, Outside2 float64
}

// Diagnose fits the surrogate to the trials as a proposal would and
// reports the fit.
func (p *Planner) Diagnose(ctx context.Context, trials []campaign.Trial) (Diagnostics, *Fitted, error) {
	if err := ctx.Err(); err != nil {
		return Diagnostics{}, nil, err
	}
	if len(trials) < minFit {
		return Diagnostics{}, nil, fmt.Errorf("planner: %d completed runs; a model needs at least %d", len(trials), minFit)
	}
	f, err := p.fit(trials, nil, nil, rand.New(rand.NewPCG(p.seed, 0xd1a9)))
	if err != nil {
		return Diagnostics{}, nil, err
	}
	m := f.Model
	units := p.resp.Unit
	switch {
	case f.w.on:
		units = "warped units"
	case p.resp.Transform == campaign.TransformLog:
		units = "natural-log units"
	}
	par := m.Params()
	_, scale := m.Standardisation()
	d := Diagnostics{
		Runs: len(trials), Kernel: par.Kernel.String(),
		SignalSD: math.Sqrt(par.SignalVar) * scale, NoiseSD: math.Sqrt(par.NoiseVar) * scale, Additive: par.Additive,
		LogLikelihood: m.LogMarginalLikelihood(), Units: units,
	}
	off := 0
	for _, f := range p.space {
		if f.Kind == campaign.Categorical {
			// One-hot inputs: the shortest of its scales, in units
			// of "switching category" (about 1.4 or less: a strong
			// effect; much more: little effect).
			l := math.Inf(1)
			for c := range f.Categories {
				l = math.Min(l, par.LengthScales[off+c])
			}
			d.LengthScales = append(d.LengthScales, Scale{Factor: f.Name, Unit: "(choice)", Value: l})
			off += len(f.Categories)
			continue
		}
		d.LengthScales = append(d.LengthScales, Scale{Factor: f.Name, Unit: f.Unit, Value: par.LengthScales[off] * (f.Max - f.Min)})
		off++
	}
	loo := m.LeaveOneOut()
	// The model works on losses; a maximised response flips the sign of
	// a residual.
	sign := 1.0
	if p.resp.Goal == campaign.Maximise {
		sign = -1
	}
	var ss float64
	out := 0
	for i := range trials {
		pred := p.resp.Measured(f.loss(loo.Mean[i]))
		a := p.resp.Measured(f.loss(loo.Mean[i] - 1.96*loo.SD[i]))
		b := p.resp.Measured(f.loss(loo.Mean[i] + 1.96*loo.SD[i]))
		d.Checks = append(d.Checks, CheckPoint{Index: i, Measured: trials[i].Value, Predicted: pred, SD: loo.SD[i],
			Low: math.Min(a, b), High: math.Max(a, b), Standardised: sign * loo.Standardised[i]})
		ss += (trials[i].Value - pred) * (trials[i].Value - pred)
		if math.Abs(loo.Standardised[i]) > 2 {
			out++
		}
	}
	d.LOORMSE = math.Sqrt(ss / float64(len(trials)))
	d.Outside2 = float64(out) / float64(len(trials))
	return d, f, nil
}
