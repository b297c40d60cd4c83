package campaign

import (
	"fmt"
	"regexp"
	"time"
)

var runIDPattern = regexp.MustCompile(`^[A-Za-z0-9][A-Za-z0-9_.-]{0,63}$`)

// ValidRunID reports whether s may be a run id: it names handoff files, so
// it holds only letters, digits, '_', '.' and '-', and starts with a letter
// or digit.
func ValidRunID(s string) bool { return runIDPattern.MatchString(s) && s != "." && s != ".." }

// Setpoint is the set of factor values for one run.
type Setpoint struct {
	RunID string `json:"run"`
	Point Point  `json:"point"`
}

// Validate checks the setpoint against the space.
func (s Setpoint) Validate(space Space) error {
	if !ValidRunID(s.RunID) {
		return fmt.Errorf("setpoint: invalid run id %q", s.RunID)
	}
	if len(s.Point) != space.Dim() {
		return fmt.Errorf("setpoint %s: %d values for %d factors", s.RunID, len(s.Point), space.Dim())
	}
	if !s.Point.Finite() {
		return fmt.Errorf("setpoint %s: non-finite value in %v", s.RunID, s.Point)
	}
	return nil
}

// Proposal is a setpoint suggested by the planner, with why it was chosen.
type Proposal struct {
	Setpoint
	// Method is how the point was chosen, e.g. "initial design" or
	// "expected improvement".
	Method string `json:"method"`
	// Score is the acquisition value where one applies.
	Score float64 `json:"score,omitempty"`
}

// Validate checks the proposal against the space.
func (p Proposal) Validate(space Space) error { return p.Setpoint.Validate(space) }

// Observation is the measured outcome of one run as parsed from a result
// file.
type Observation struct {
	RunID string `json:"run"`
	// Value is the response; meaningful only when Failed is empty.
	Value float64 `json:"value"`
	// Failed, when not empty, says why the run produced no usable value.
	Failed string `json:"failed,omitempty"`
	// Point holds factor values read from the file, if it carries them.
	Point Point `json:"point,omitempty"`
	// Source is the file the observation came from.
	Source string `json:"source"`
	// SHA256 is the hex digest of the file's content.
	SHA256 string    `json:"sha256"`
	Time   time.Time `json:"time"`
}

// Validate checks the observation.
func (o Observation) Validate() error {
	if !ValidRunID(o.RunID) {
		return fmt.Errorf("observation: invalid run id %q", o.RunID)
	}
	if o.Failed == "" && !finite(o.Value) {
		return fmt.Errorf("observation %s: non-finite value %v", o.RunID, o.Value)
	}
	return nil
}

// Trial is a completed run as the planner sees it: where it was run and
// what came out.
type Trial struct {
	Point Point
	Value float64
	// Values, in a campaign with several responses, holds one value per
	// response, in the order of Config.Responses.
	Values []float64
}
