package planner

import (
	"fmt"
	"math"

	"github.com/expr-lang/expr"
	"github.com/expr-lang/expr/vm"

	"benchtender/campaign"
)

// The planner works on the unit box: one coordinate per factor, the
// factor's value mapped from [min, max] to [0, 1] (a categorical factor's index
// over its categories). The surrogate sees an encoding of it: a categorical factor
// with k categories becomes k one-hot inputs, so that no order is imposed on
// its categories; every other factor is its unit coordinate.

// encodeAll maps unit-box points to the surrogate's inputs (encode, one
// by one).
func encodeAll[P ~[]float64](p *Planner, us []P) [][]float64 {
	enc := make([][]float64, len(us))
	for i, u := range us {
		enc[i] = p.encode(u)
	}
	return enc
}

// encode maps a unit-box point to the surrogate's inputs.
func (p *Planner) encode(u []float64) []float64 {
	if !p.hasCategorical {
		return u
	}
	out := make([]float64, 0, p.encDim)
	for k, f := range p.space {
		if f.Kind != campaign.Categorical {
			out = append(out, u[k])
			continue
		}
		n := len(f.Categories)
		idx := int(math.Round(u[k] * float64(n-1)))
		for c := 0; c < n; c++ {
			if c == idx {
				out = append(out, 1)
			} else {
				out = append(out, 0)
			}
		}
	}
	return out
}

// snapUnit returns the unit-box point of the valid setpoint nearest to u.
func (p *Planner) snapUnit(u []float64) []float64 {
	if !p.hasDiscrete {
		return clampUnit(u)
	}
	return p.space.ToUnit(nil, p.space.Snap(p.space.FromUnit(nil, clampUnit(u))))
}

// constraintSet holds the compiled constraint expressions.
type constraintSet struct {
	names []string
	progs []*vm.Program
}

// CompileConstraints checks every constraint of the campaign against its
// factors, reporting problems keyed "constraint[i].expression".
func CompileConstraints(space campaign.Space, cons []campaign.Constraint) (constraintSet, campaign.Problems) {
	var cs constraintSet
	var ps campaign.Problems
	space = space.Normalised()
	sample := make(campaign.Point, len(space))
	for i, f := range space {
		sample[i] = f.Min
	}
	env := space.Env(sample)
	for i, c := range cons {
		prog, err := expr.Compile(c.Expression, expr.Env(env), expr.AsBool())
		if err != nil {
			ps.Add(fmt.Sprintf("constraint[%d].expression", i), "%q: %v", c.Expression, oneLine(err.Error()))
			continue
		}
		cs.names = append(cs.names, c.Name)
		cs.progs = append(cs.progs, prog)
	}
	return cs, ps
}

func oneLine(s string) string {
	for i, r := range s {
		if r == '\n' {
			return s[:i]
		}
	}
	return s
}

// Violated returns the name of the first constraint the setpoint breaks,
// or "" when it breaks none. A constraint that cannot be evaluated counts
// as broken.
func (p *Planner) Violated(pt campaign.Point) string {
	if len(p.cons.progs) == 0 {
		return ""
	}
	env := p.space.Env(pt)
	for i, prog := range p.cons.progs {
		out, err := expr.Run(prog, env)
		if ok, isBool := out.(bool); err != nil || !isBool || !ok {
			return p.cons.names[i]
		}
	}
	return ""
}

// feasibleUnit reports whether the unit-box point satisfies every
// constraint, lies in the request's region, if any, and passes its
// Allowed test, if any.
func (p *Planner) feasibleUnit(u []float64) bool {
	if p.region == nil && p.allowed == nil && len(p.cons.progs) == 0 {
		return true
	}
	pt := p.space.FromUnit(nil, u)
	for k, r := range p.region {
		if pt[k] < r[0] || pt[k] > r[1] {
			return false
		}
	}
	if p.allowed != nil && !p.allowed(pt) {
		return false
	}
	return len(p.cons.progs) == 0 || p.Violated(pt) == ""
}

// regionUnit is the request's region in the unit box (nil without one).
func (p *Planner) regionUnit() (lo, hi []float64) {
	if p.region == nil {
		return nil, nil
	}
	d := p.space.Dim()
	lo, hi = make([]float64, d), make([]float64, d)
	for k, f := range p.space {
		span := f.Max - f.Min
		if span <= 0 {
			lo[k], hi[k] = 0, 1
			continue
		}
		lo[k] = math.Max(0, (p.region[k][0]-f.Min)/span)
		hi[k] = math.Min(1, (p.region[k][1]-f.Min)/span)
		if hi[k] < lo[k] {
			lo[k], hi[k] = 0, 1 // an empty region: the feasibility test says no
		}
	}
	return lo, hi
}
