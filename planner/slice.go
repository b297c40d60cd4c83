package planner

import (
	"fmt"
	"math"

	"benchtender/campaign"
)

// Band is the surrogate's prediction of the response at one point, in the
// response's unit: the posterior median and the central 95% band. The
// band is taken on the model's scale (mean ± 1.96 sd) and mapped back
// through the warping and the transform, which are monotone, so it stays
// a 95% band of the latent response (noise excluded).
type Band struct {
	X                 float64 // the varied factor's value, in its unit
	Median, Low, High float64
}

// Slice predicts along one factor through a point: the factor runs over
// its range (n even steps; its levels or categories when discrete), every
// other factor stays at its value in through.
func (p *Planner) Slice(f *Fitted, through campaign.Point, factor, n int) ([]Band, error) {
	if factor < 0 || factor >= p.space.Dim() || len(through) != p.space.Dim() {
		return nil, fmt.Errorf("planner: slice along factor %d of a %d-factor point", factor, len(through))
	}
	fac := p.space[factor]
	var xs []float64
	switch {
	case fac.Kind == campaign.Categorical:
		for c := range fac.Categories {
			xs = append(xs, float64(c))
		}
	case fac.Kind == campaign.Levels:
		xs = append(xs, fac.Levels...)
	case fac.Kind == campaign.Integer && fac.Max-fac.Min+1 <= float64(n):
		for v := fac.Min; v <= fac.Max; v++ {
			xs = append(xs, v)
		}
	default:
		if n < 2 {
			n = 2
		}
		for i := 0; i < n; i++ {
			xs = append(xs, fac.Min+(fac.Max-fac.Min)*float64(i)/float64(n-1))
		}
	}
	pt := through.Clone()
	out := make([]Band, 0, len(xs))
	for _, x := range xs {
		pt[factor] = x
		u := p.space.ToUnit(nil, pt)
		mu, v := f.Model.Predict(p.encode(u))
		sd := math.Sqrt(math.Max(v, 0))
		a := p.resp.Measured(f.loss(mu - 1.96*sd))
		b := p.resp.Measured(f.loss(mu + 1.96*sd))
		out = append(out, Band{X: x, Median: p.resp.Measured(f.loss(mu)), Low: math.Min(a, b), High: math.Max(a, b)})
	}
	return out, nil
}
