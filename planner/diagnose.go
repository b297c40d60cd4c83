package planner

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"

	"benchtender/campaign"
	"benchtender/planner/gp"
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
	// SD is the predictive standard deviation in modelled units: the
	// response's unit, or natural-log units with transform = "log".
	SD float64
	// Standardised is (measured − predicted)/SD in modelled units; about
	// 95% of them lie within ±2 when the model fits.
	Standardised float64
}

// Diagnostics describe a fitted surrogate in terms a person can read.
type Diagnostics struct {
	Runs   int
	Kernel string
	// LengthScales: how far a factor must move, in its own unit, for the
	// response to change appreciably (a long scale means little effect).
	LengthScales []Scale
	// SignalSD and NoiseSD are in modelled units (see CheckPoint.SD).
	SignalSD, NoiseSD float64
	LogLikelihood     float64
	Checks            []CheckPoint
	// LOORMSE is the root mean square leave-one-out error in modelled
	// units; Outside2 the share of runs whose standardised error exceeds
	// 2 in size.
	LOORMSE, Outside2 float64
}

// Diagnose fits the surrogate to the trials as a proposal would and
// reports the fit.
func (p *Planner) Diagnose(ctx context.Context, trials []campaign.Trial) (Diagnostics, *gp.Model, error) {
	if err := ctx.Err(); err != nil {
		return Diagnostics{}, nil, err
	}
	if len(trials) < minFit {
		return Diagnostics{}, nil, fmt.Errorf("planner: %d completed runs; a model needs at least %d", len(trials), minFit)
	}
	x := make([][]float64, len(trials))
	y := make([]float64, len(trials))
	for i, t := range trials {
		if len(t.Point) != p.space.Dim() || !t.Point.Finite() {
			return Diagnostics{}, nil, errors.New("planner: trial with an unusable point")
		}
		x[i] = p.space.ToUnit(nil, t.Point)
		v, err := p.resp.Modelled(t.Value)
		if err != nil {
			return Diagnostics{}, nil, err
		}
		y[i] = v
	}
	m, err := gp.Fit(x, y, p.fitOptions(nil, rand.New(rand.NewPCG(p.seed, 0xd1a9))))
	if err != nil {
		return Diagnostics{}, nil, fmt.Errorf("planner: fit surrogate: %w", err)
	}
	par := m.Params()
	_, scale := m.Standardisation()
	d := Diagnostics{
		Runs: len(trials), Kernel: par.Kernel.String(),
		SignalSD: math.Sqrt(par.SignalVar) * scale, NoiseSD: math.Sqrt(par.NoiseVar) * scale,
		LogLikelihood: m.LogMarginalLikelihood(),
	}
	for k, f := range p.space {
		d.LengthScales = append(d.LengthScales, Scale{Factor: f.Name, Unit: f.Unit, Value: par.LengthScales[k] * (f.Max - f.Min)})
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
		d.Checks = append(d.Checks, CheckPoint{Index: i, Measured: trials[i].Value, Predicted: p.resp.Measured(loo.Mean[i]), SD: loo.SD[i], Standardised: sign * loo.Standardised[i]})
		ss += loo.Residual[i] * loo.Residual[i]
		if math.Abs(loo.Standardised[i]) > 2 {
			out++
		}
	}
	d.LOORMSE = math.Sqrt(ss / float64(len(trials)))
	d.Outside2 = float64(out) / float64(len(trials))
	return d, m, nil
}
