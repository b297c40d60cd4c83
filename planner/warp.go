package planner

import (
	"math"
	"sort"
)

// warp is a monotone output warping applied to the modelled losses before
// the surrogate is fitted: a logarithm anchored just below the best run,
//
//	u = ln(c + (v − v_best)/s)      for v ≥ v_best,
//	u = ln(c) + (v − v_best)/(s·c)  below it (the tangent, so that values
//	                                better than any run stay reachable),
//
// with s the normal-consistent spread of the losses (IQR/1.349) and
// c = 0.1. Taking the log of a response shifted by its best value is
// common practice for skewed objectives; the anchor and the linear
// continuation are ours.
//
// Responses over a box often span orders of magnitude: runs far from the
// optimum dominate a plain standardisation, and the fine structure near
// the optimum is taken for noise. The log spreads out the values near the
// best run and compresses the far ones, so the model resolves the region
// that matters. (A symmetric bilog, sign(z)·ln(1+|z|) around the median,
// compresses the good end as much as the bad one; measured against it on
// the runs-to-optimum benchmark, README, the six-hump camel went from
// about 23 runs to 18.) It is off when the noise is fixed from the
// instrument's repeatability (which is given in the response's own
// units) and when the config turns it off.
type warp struct {
	on        bool
	lo, scale float64
}

// warpC is c above: how far below the best run the log's pole sits, in
// spreads. Smaller sharpens the model near the best run and amplifies
// noise there; 0.03 to 0.3 all did about as well on the benchmark.
const warpC = 0.1

func (p *Planner) newWarp(y []float64) warp {
	if !p.cfg.Warp || p.cfg.NoiseSD > 0 || len(y) < 2 {
		return warp{}
	}
	s := append([]float64(nil), y...)
	sort.Float64s(s)
	q := func(f float64) float64 { return s[int(math.Round(f*float64(len(s)-1)))] }
	scale := (q(0.75) - q(0.25)) / 1.349
	if !(scale > 0) {
		scale = (s[len(s)-1] - s[0]) / 4
	}
	if !(scale > 0) {
		scale = 1
	}
	return warp{on: true, lo: s[0], scale: scale}
}

// to warps a modelled loss.
func (w warp) to(v float64) float64 {
	if !w.on {
		return v
	}
	z := (v - w.lo) / w.scale
	if z >= 0 {
		return math.Log(warpC + z)
	}
	return math.Log(warpC) + z/warpC
}

// from inverts to.
func (w warp) from(u float64) float64 {
	if !w.on {
		return u
	}
	if u >= math.Log(warpC) {
		return w.lo + w.scale*(math.Exp(u)-warpC)
	}
	return w.lo + w.scale*warpC*(u-math.Log(warpC))
}

// slope is d from/du at u: it turns a small difference in warped units
// (an expected improvement) into the modelled units.
func (w warp) slope(u float64) float64 {
	if !w.on {
		return 1
	}
	if u >= math.Log(warpC) {
		return w.scale * math.Exp(u)
	}
	return w.scale * warpC
}
