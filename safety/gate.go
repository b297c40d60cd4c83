package safety

import (
	"fmt"
	"math"
	"strings"

	"github.com/expr-lang/expr"

	"benchtender/campaign"
)

// Verdict is the gate's decision.
type Verdict string

// The three verdicts, from most to least permissive.
const (
	Pass   Verdict = "pass"
	Hold   Verdict = "hold"
	Refuse Verdict = "refuse"
)

// Reason is one limit or rule a setpoint crosses, or why it cannot be
// judged.
type Reason struct {
	Factor string `json:"factor,omitempty"`
	// Limit names what was crossed: "hard_min", "hard_max",
	// "review_min", "review_max", "max_step", "levels", "invalid", or a
	// rule's name.
	Limit string  `json:"limit"`
	Value float64 `json:"value"`
	Bound float64 `json:"bound"`
	// Excess is how far past the bound the value lies, in the factor's
	// unit (always positive).
	Excess  float64 `json:"excess"`
	Message string  `json:"message"`
}

// Decision is the verdict with every reason behind it, and the version of
// the limits it was made under.
type Decision struct {
	Verdict Verdict  `json:"verdict"`
	Reasons []Reason `json:"reasons,omitempty"`
	Limits  string   `json:"limits,omitempty"`
}

// Summary is the reasons joined in one line.
func (d Decision) Summary() string {
	if len(d.Reasons) == 0 {
		return string(d.Verdict)
	}
	s := make([]string, len(d.Reasons))
	for i, r := range d.Reasons {
		s[i] = r.Message
	}
	return string(d.Verdict) + ": " + strings.Join(s, "; ")
}

// Kinds returns the names of the limits and rules crossed, once each.
func (d Decision) Kinds() []string {
	var out []string
	seen := map[string]bool{}
	for _, r := range d.Reasons {
		if !seen[r.Limit] {
			seen[r.Limit] = true
			out = append(out, r.Limit)
		}
	}
	return out
}

// NeedsTwo reports whether a held move of this decision needs two
// different people to approve it.
func (d Decision) NeedsTwo(cfg Config) bool {
	for _, k := range d.Kinds() {
		for _, t := range cfg.TwoPerson {
			if k == t {
				return true
			}
		}
	}
	return false
}

// Gate is a compiled configuration: limits, rules and the factor space.
// Its Check is a pure function of its arguments.
type Gate struct {
	cfg     Config
	space   campaign.Space
	rules   []compiledRule
	invalid string // why the config cannot be used (then everything is refused)
	version string
}

// NewGate compiles the config. A config that does not validate yields a
// gate that refuses everything (fail closed).
func NewGate(cfg Config, space campaign.Space) *Gate {
	g := &Gate{cfg: cfg, space: space.Normalised(), version: cfg.Version()}
	if ps := cfg.Validate(space); len(ps) > 0 {
		g.invalid = "limits are not valid: " + ps.Error()
		return g
	}
	g.rules, _ = compileRules(cfg.Rules, space)
	return g
}

// Version is the version of the limits the gate applies.
func (g *Gate) Version() string { return g.version }

// Check gates a setpoint. previous, when not nil, is the last setpoint
// handed off (for ramp limits). It refuses a setpoint that does not match
// the space, has a value that is not finite, not a valid value of a
// discrete factor or not one of a limit's levels, lies outside a hard
// limit or trips a refusing rule, and any setpoint when the config is not
// valid; it holds one outside a review limit, moving more than a ramp limit
// or tripping a holding rule; it passes the rest.
func (g *Gate) Check(sp campaign.Setpoint, previous campaign.Point) Decision {
	d := g.check(sp, previous)
	d.Limits = g.version
	return d
}

func (g *Gate) check(sp campaign.Setpoint, previous campaign.Point) Decision {
	if g.invalid != "" {
		return refuse(Reason{Limit: "invalid", Message: g.invalid})
	}
	if err := sp.Validate(g.space); err != nil {
		return refuse(Reason{Limit: "invalid", Message: err.Error()})
	}
	// Discrete factors take only their own values; continuous ones are
	// judged by their limits below.
	for i, f := range g.space {
		if f.Kind != "" && f.Kind != campaign.Continuous && !f.Valid(sp.Point[i]) {
			return refuse(Reason{Factor: f.Name, Limit: "invalid", Value: sp.Point[i],
				Message: fmt.Sprintf("%s %v is not a value the factor can take (%s)", f.Name, sp.Point[i], describeKind(f))})
		}
	}
	if previous != nil && (len(previous) != len(sp.Point) || !previous.Finite()) {
		return refuse(Reason{Limit: "invalid", Message: fmt.Sprintf("previous setpoint %v is not usable for the ramp limits", previous)})
	}
	d := Decision{Verdict: Pass}
	for i, f := range g.space {
		l, ok := g.cfg.Limits[f.Name]
		if !ok {
			continue // a categorical factor without limits: checked above
		}
		v := sp.Point[i]
		unit := ""
		if f.Unit != "" {
			unit = " " + f.Unit
		}
		cross := func(limit string, bound float64, above bool) Reason {
			word := "below"
			if above {
				word = "above"
			}
			return Reason{Factor: f.Name, Limit: limit, Value: v, Bound: bound, Excess: math.Abs(v - bound),
				Message: fmt.Sprintf("%s %.6g%s is %s %s %.6g%s by %.3g%s", f.Name, v, unit, word, limit, bound, unit, math.Abs(v-bound), unit)}
		}
		switch {
		case v < *l.HardMin:
			d.add(cross("hard_min", *l.HardMin, false), Refuse)
		case v > *l.HardMax:
			d.add(cross("hard_max", *l.HardMax, true), Refuse)
		case l.ReviewMin != nil && v < *l.ReviewMin:
			d.add(cross("review_min", *l.ReviewMin, false), Hold)
		case l.ReviewMax != nil && v > *l.ReviewMax:
			d.add(cross("review_max", *l.ReviewMax, true), Hold)
		}
		if len(l.Levels) > 0 && !contains(l.Levels, v) {
			d.add(Reason{Factor: f.Name, Limit: "levels", Value: v,
				Message: fmt.Sprintf("%s %.6g%s is not one of the allowed levels %v", f.Name, v, unit, l.Levels)}, Refuse)
		}
		if l.MaxStep != nil && previous != nil {
			if step := math.Abs(v - previous[i]); step > *l.MaxStep {
				d.add(Reason{Factor: f.Name, Limit: "max_step", Value: v, Bound: *l.MaxStep, Excess: step - *l.MaxStep,
					Message: fmt.Sprintf("%s moves %.3g%s from %.6g%s, more than max_step %.6g%s", f.Name, step, unit, previous[i], unit, *l.MaxStep, unit)}, Hold)
			}
		}
	}
	env := g.space.Env(sp.Point)
	for _, r := range g.rules {
		out, err := expr.Run(r.prog, env)
		tripped, isBool := out.(bool)
		if err != nil || !isBool {
			d.add(Reason{Limit: r.Name, Message: fmt.Sprintf("rule %s cannot be evaluated (%v): refused", r.Name, err)}, Refuse)
			continue
		}
		if tripped {
			v := Hold
			if r.Action == ActionRefuse {
				v = Refuse
			}
			d.add(Reason{Limit: r.Name, Message: fmt.Sprintf("rule %s (%s): %s", r.Name, r.When, r.Message)}, v)
		}
	}
	return d
}

// Check gates a setpoint under cfg without a previous setpoint; see
// Gate.Check.
func Check(cfg Config, space campaign.Space, sp campaign.Setpoint) Decision {
	return NewGate(cfg, space).Check(sp, nil)
}

func (d *Decision) add(r Reason, v Verdict) {
	d.Reasons = append(d.Reasons, r)
	d.Verdict = worse(d.Verdict, v)
}

func contains(vs []float64, v float64) bool {
	for _, x := range vs {
		if x == v {
			return true
		}
	}
	return false
}

func refuse(r Reason) Decision { return Decision{Verdict: Refuse, Reasons: []Reason{r}} }

func worse(a, b Verdict) Verdict {
	rank := map[Verdict]int{Pass: 0, Hold: 1, Refuse: 2}
	if rank[b] > rank[a] {
		return b
	}
	return a
}

func describeKind(f campaign.Factor) string {
	switch f.Kind {
	case campaign.Integer:
		return fmt.Sprintf("whole numbers from %g to %g", f.Min, f.Max)
	case campaign.Levels:
		return fmt.Sprintf("one of %v", f.Levels)
	case campaign.Categorical:
		return fmt.Sprintf("a category index from 0 to %d", len(f.Categories)-1)
	}
	return fmt.Sprintf("from %g to %g", f.Min, f.Max)
}
