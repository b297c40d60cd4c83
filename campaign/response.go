package campaign

// Goal says whether the response is to be made small or large.
type Goal string

// The two goals.
const (
	Minimise Goal = "minimise"
	Maximise Goal = "maximise"
)

// Response is the measured quantity the campaign optimises.
type Response struct {
	Name string `toml:"name"`
	Unit string `toml:"unit"`
	Goal Goal   `toml:"goal"`
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
	return ps
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
