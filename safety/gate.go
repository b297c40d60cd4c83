package safety

import (
	"fmt"
	"math"
	"strings"

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

// Reason is one limit a setpoint crosses, or why it cannot be judged.
type Reason struct {
	Factor string  `json:"factor,omitempty"`
	Limit  string  `json:"limit"` // e.g. "hard_max", "review_min", "invalid"
	Value  float64 `json:"value"`
	Bound  float64 `json:"bound"`
	// Excess is how far past the bound the value lies, in the factor's
	// unit (always positive).
	Excess  float64 `json:"excess"`
	Message string  `json:"message"`
}

// Decision is the verdict with every reason behind it.
type Decision struct {
	Verdict Verdict  `json:"verdict"`
	Reasons []Reason `json:"reasons,omitempty"`
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

// Check gates a setpoint. It refuses a setpoint whose values do not match
// the space, are not finite, or lie outside a hard limit, and any setpoint
// when the config is not valid; it holds one outside a review limit; it
// passes the rest. Check is a pure function.
func Check(cfg Config, space campaign.Space, sp campaign.Setpoint) Decision {
	if ps := cfg.Validate(space); len(ps) > 0 {
		return refuse(Reason{Limit: "invalid", Message: "limits are not valid: " + ps.Error()})
	}
	if err := sp.Validate(space); err != nil {
		return refuse(Reason{Limit: "invalid", Message: err.Error()})
	}
	// Discrete factors take only their own values; continuous ones are
	// judged by their limits below.
	for i, f := range space.Normalised() {
		if f.Kind != "" && f.Kind != campaign.Continuous && !f.Valid(sp.Point[i]) {
			return refuse(Reason{Factor: f.Name, Limit: "invalid", Value: sp.Point[i],
				Message: fmt.Sprintf("%s %v is not a value the factor can take (%s)", f.Name, sp.Point[i], describeKind(f))})
		}
	}
	d := Decision{Verdict: Pass}
	for i, f := range space {
		l, ok := cfg.Limits[f.Name]
		if !ok {
			continue // a choice factor without limits: checked above
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
			d.Reasons = append(d.Reasons, cross("hard_min", *l.HardMin, false))
			d.Verdict = Refuse
		case v > *l.HardMax:
			d.Reasons = append(d.Reasons, cross("hard_max", *l.HardMax, true))
			d.Verdict = Refuse
		case l.ReviewMin != nil && v < *l.ReviewMin:
			d.Reasons = append(d.Reasons, cross("review_min", *l.ReviewMin, false))
			d.Verdict = worse(d.Verdict, Hold)
		case l.ReviewMax != nil && v > *l.ReviewMax:
			d.Reasons = append(d.Reasons, cross("review_max", *l.ReviewMax, true))
			d.Verdict = worse(d.Verdict, Hold)
		}
	}
	return d
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
	case campaign.Choice:
		return fmt.Sprintf("a choice index from 0 to %d", len(f.Choices)-1)
	}
	return fmt.Sprintf("from %g to %g", f.Min, f.Max)
}
