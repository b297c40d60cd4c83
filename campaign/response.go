package campaign

import (
	"fmt"
	"math"
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
