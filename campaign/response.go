package campaign

import (
	"fmt"
	"math"
	"strings"
)

// Goal says whether the response is to be made small or large.
type Goal string

// The two goals.
const (
	Minimise Goal = "minimise"
	Maximise Goal = "maximise"
)

// Transforms of a response before it is modelled.
const (
	TransformNone = ""
	TransformLog  = "log"
)

// Response is the measured quantity the campaign optimises.
type Response struct {
	Name string `toml:"name"`
	Unit string `toml:"unit"`
	Goal Goal   `toml:"goal"`
	// Transform is "" (model the value as measured) or "log" (model its
	// logarithm; for responses that are strictly positive and vary over
	// orders of magnitude, such as impurity levels or rates).
	Transform string `toml:"transform"`
	// Min and Max, when set, are the response's physical range (0 and
	// 100 for a percentage yield): a value outside it is recorded as a
	// failed run with the reason, never modelled.
	Min *float64 `toml:"min"`
	Max *float64 `toml:"max"`
	// Worst, for responses traded off against each other, is the worst
	// value still acceptable (a yield of 60 %, say): the front is measured
	// from it (the hypervolume's reference point), and runs worse than it
	// add nothing to the front's hypervolume. Left out, it is the worst
	// value seen plus a tenth of the range seen.
	Worst *float64 `toml:"worst"`
}

// maxMagnitude bounds any response value, with or without a range: a
// number beyond it is no measurement (an instrument's overflow marker,
// a unit error) and is refused. 1e15 is ours: above any physical
// quantity a lab records in sensible units, and far below the range where
// the model's arithmetic fails (a value of 1e308 made its checks
// infinite: issue 19).
const maxMagnitude = 1e15

// Check says why a measured value cannot be used ("" when it can): not a
// finite number, beyond maxMagnitude, or outside the configured range.
func (r Response) Check(v float64) string {
	switch {
	case math.IsNaN(v) || math.IsInf(v, 0):
		return fmt.Sprintf("%s is %v, not a finite number", r.Name, v)
	case math.Abs(v) > maxMagnitude:
		return fmt.Sprintf("%s = %g is beyond %g in size: no plausible measurement", r.Name, v, maxMagnitude)
	case r.Min != nil && v < *r.Min:
		return strings.TrimSpace(fmt.Sprintf("%s = %g is below its physical range, %g to %s %s", r.Name, v, *r.Min, r.maxText(), r.Unit))
	case r.Max != nil && v > *r.Max:
		return strings.TrimSpace(fmt.Sprintf("%s = %g is above its physical range, %s to %g %s", r.Name, v, r.minText(), *r.Max, r.Unit))
	}
	return ""
}

// Clamp returns v brought inside the physical range, when one is set:
// for reporting what the model predicts (a yield band above 100% means
// 100%).
func (r Response) Clamp(v float64) float64 {
	if r.Min != nil && v < *r.Min {
		return *r.Min
	}
	if r.Max != nil && v > *r.Max {
		return *r.Max
	}
	return v
}

func (r Response) minText() string {
	if r.Min == nil {
		return "-inf"
	}
	return fmt.Sprintf("%g", *r.Min)
}

func (r Response) maxText() string {
	if r.Max == nil {
		return "inf"
	}
	return fmt.Sprintf("%g", *r.Max)
}

// Validate reports what is wrong with the response.
func (r Response) Validate() Problems {
	var ps Problems
	if !ValidName(r.Name) {
		ps.Add("name", "%q is not a valid name (a letter, then letters, digits or _; at most 64)", r.Name)
	}
	if r.Goal != Minimise && r.Goal != Maximise {
		ps.Add("goal", "must be %q or %q, got %q", Minimise, Maximise, r.Goal)
	}
	if r.Transform != TransformNone && r.Transform != TransformLog {
		ps.Add("transform", "must be %q or left out, got %q", TransformLog, r.Transform)
	}
	for _, b := range []struct {
		key string
		v   *float64
	}{{"min", r.Min}, {"max", r.Max}} {
		if b.v != nil && (math.IsNaN(*b.v) || math.Abs(*b.v) > maxMagnitude) {
			ps.Add(b.key, "must be a finite number no larger than %g in size, got %v", maxMagnitude, *b.v)
		}
	}
	if r.Min != nil && r.Max != nil && !(*r.Min < *r.Max) {
		ps.Add("max", "must be above min (%g), got %g", *r.Min, *r.Max)
	}
	if w := r.Worst; w != nil {
		switch {
		case math.IsNaN(*w) || math.Abs(*w) > maxMagnitude:
			ps.Add("worst", "must be a finite number no larger than %g in size, got %v", maxMagnitude, *w)
		case r.Min != nil && *w < *r.Min, r.Max != nil && *w > *r.Max:
			ps.Add("worst", "%g is outside the physical range, %s to %s", *w, r.minText(), r.maxText())
		case r.Transform == TransformLog && *w <= 0:
			ps.Add("worst", "with transform = \"log\" values must be above 0, so worst cannot be %g", *w)
		}
	}
	if r.Transform == TransformLog && r.Min != nil && *r.Min < 0 {
		ps.Add("min", "with transform = \"log\" values must be above 0, so min cannot be %g", *r.Min)
	}
	return ps
}

// Modelled returns the value the surrogate models: the loss of the
// transformed value. It fails for a value the transform cannot take (zero
// or negative under "log").
func (r Response) Modelled(v float64) (float64, error) {
	if r.Transform == TransformLog {
		if !(v > 0) {
			return 0, fmt.Errorf("response %s: %v cannot be log-transformed (transform = \"log\" needs values above 0)", r.Name, v)
		}
		v = math.Log(v)
	}
	return r.Loss(v), nil
}

// Measured inverts Modelled: from a modelled loss back to the response's
// own value.
func (r Response) Measured(loss float64) float64 {
	v := r.Loss(loss) // Loss is its own inverse
	if r.Transform == TransformLog {
		v = math.Exp(v)
	}
	return v
}

// Loss turns a measured value into the quantity to minimise: the value
// itself for Minimise, its negative for Maximise.
func (r Response) Loss(v float64) float64 {
	if r.Goal == Maximise {
		return -v
	}
	return v
}

// Better reports whether measured value a is better than b.
func (r Response) Better(a, b float64) bool { return r.Loss(a) < r.Loss(b) }

// RangeText is the physical range for people: "0 to 100 %", "at least
// 0 %" or "at most 5 bar".
func (r Response) RangeText() string {
	var s string
	switch {
	case r.Min != nil && r.Max != nil:
		s = fmt.Sprintf("%g to %g", *r.Min, *r.Max)
	case r.Min != nil:
		s = fmt.Sprintf("at least %g", *r.Min)
	case r.Max != nil:
		s = fmt.Sprintf("at most %g", *r.Max)
	default:
		return "any value"
	}
	return strings.TrimSpace(s + " " + r.Unit)
}
