package campaign

import (
	"fmt"
	"math"
	"regexp"
	"sort"
	"strconv"
	"strings"
)

// namePattern is what factor and response names may look like: they become
// column headers, config keys and file-name parts, so they stay plain.
var namePattern = regexp.MustCompile(`^[A-Za-z][A-Za-z0-9_]{0,63}$`)

// ValidName reports whether s may name a factor or a response.
func ValidName(s string) bool { return namePattern.MatchString(s) }

// Kinds of factor.
const (
	Continuous  = "continuous"  // any value between min and max (the default)
	Integer     = "integer"     // whole numbers between min and max
	Levels      = "levels"      // one of a list of values, e.g. 5, 10, 20 mL
	Categorical = "categorical" // one of a list of names, e.g. three catalysts
)

// Factor is one setting of the process that the campaign varies, between
// Min and Max in Unit. A categorical factor's value in a Point is the index of
// the category (0 for the first); its Min and Max are 0 and len(Categories)−1.
type Factor struct {
	Name       string    `toml:"name"`
	Unit       string    `toml:"unit"`
	Kind       string    `toml:"kind"`
	Min        float64   `toml:"min"`
	Max        float64   `toml:"max"`
	Levels     []float64 `toml:"levels"`
	Categories []string  `toml:"categories"`
}

// Normalised returns the factor with its kind spelled out and, for levels
// and categories, Min and Max set from the list (Validate first).
func (f Factor) Normalised() Factor {
	if f.Kind == "" {
		f.Kind = Continuous
	}
	switch f.Kind {
	case Levels:
		if len(f.Levels) > 0 {
			f.Levels = append([]float64(nil), f.Levels...)
			sort.Float64s(f.Levels)
			f.Min, f.Max = f.Levels[0], f.Levels[len(f.Levels)-1]
		}
	case Categorical:
		f.Min, f.Max = 0, float64(max(len(f.Categories)-1, 0))
	}
	return f
}

// Valid reports whether v is a value the factor can take.
func (f Factor) Valid(v float64) bool {
	if !finite(v) || v < f.Min || v > f.Max {
		return false
	}
	switch f.Kind {
	case Integer, Categorical:
		return v == math.Round(v)
	case Levels:
		for _, l := range f.Levels {
			if v == l {
				return true
			}
		}
		return false
	}
	return true
}

// Snap returns the valid value nearest to v (v clamped into [Min, Max]
// first).
func (f Factor) Snap(v float64) float64 {
	v = math.Min(f.Max, math.Max(f.Min, v))
	switch f.Kind {
	case Integer, Categorical:
		return math.Min(f.Max, math.Max(f.Min, math.Round(v)))
	case Levels:
		best := f.Levels[0]
		for _, l := range f.Levels {
			if math.Abs(l-v) < math.Abs(best-v) {
				best = l
			}
		}
		return best
	}
	return v
}

// Format renders a value as a setpoint file shows it: the category's name
// for a categorical factor, the shortest exact decimal otherwise.
func (f Factor) Format(v float64) string {
	if f.Kind == Categorical {
		i := int(v)
		if i >= 0 && i < len(f.Categories) && float64(i) == v {
			return f.Categories[i]
		}
	}
	return strconv.FormatFloat(v, 'g', -1, 64)
}

// Parse reads a value as a person writes it: a number, or a categorical
// factor's category name.
func (f Factor) Parse(text string) (float64, error) {
	text = strings.TrimSpace(text)
	if f.Kind == Categorical {
		for i, c := range f.Categories {
			if c == text {
				return float64(i), nil
			}
		}
		return 0, fmt.Errorf("%s: %q is not one of its categories %s", f.Name, text, strings.Join(f.Categories, ", "))
	}
	v, err := strconv.ParseFloat(text, 64)
	if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, fmt.Errorf("%s: %q is not a number", f.Name, text)
	}
	return v, nil
}

// Display renders a value for people: 4 significant digits for a
// continuous factor, the exact level, integer or category otherwise.
func (f Factor) Display(v float64) string {
	if f.Kind == "" || f.Kind == Continuous {
		return strconv.FormatFloat(v, 'g', 4, 64)
	}
	return f.Format(v)
}

// Describe renders a point for people: "name=value unit, ...", each value
// as Display gives it.
func (s Space) Describe(p Point) string {
	parts := make([]string, 0, len(p))
	for i, f := range s {
		if i >= len(p) {
			break
		}
		part := f.Name + "=" + f.Display(p[i])
		if f.Unit != "" {
			part += " " + f.Unit
		}
		parts = append(parts, part)
	}
	return strings.Join(parts, ", ")
}

// Validate reports what is wrong with the factor.
func (f Factor) Validate() Problems {
	var ps Problems
	if !ValidName(f.Name) {
		ps.Add("name", "%q is not a valid name (a letter, then letters, digits or _; at most 64)", f.Name)
	}
	switch f.Kind {
	case "", Continuous, Integer:
	case Levels:
		if len(f.Levels) < 2 {
			ps.Add("levels", "a levels factor needs at least two levels, got %d", len(f.Levels))
		}
		seen := map[float64]bool{}
		for _, l := range f.Levels {
			if !finite(l) || seen[l] {
				ps.Add("levels", "levels must be distinct finite numbers, got %v", f.Levels)
				break
			}
			seen[l] = true
		}
		return ps
	case Categorical:
		if len(f.Categories) < 2 {
			ps.Add("categories", "a categorical factor needs at least two categories, got %d", len(f.Categories))
		}
		seen := map[string]bool{}
		for _, c := range f.Categories {
			if c == "" || seen[c] || strings.ContainsAny(c, ",\"\r\n") {
				ps.Add("categories", "categories must be distinct non-empty names without commas, quotes or line breaks, got %q", f.Categories)
				break
			}
			seen[c] = true
		}
		return ps
	default:
		ps.Add("kind", "must be %q, %q, %q or %q, got %q", Continuous, Integer, Levels, Categorical, f.Kind)
	}
	if len(f.Levels) > 0 {
		ps.Add("levels", "only a factor of kind %q takes levels", Levels)
	}
	if len(f.Categories) > 0 {
		ps.Add("categories", "only a factor of kind %q takes categories", Categorical)
	}
	if f.Kind == Integer && (f.Min != math.Round(f.Min) || f.Max != math.Round(f.Max)) {
		ps.Add("min", "an integer factor needs whole-number bounds, got %v and %v", f.Min, f.Max)
	}
	if !finite(f.Min) {
		ps.Add("min", "must be a finite number, got %v", f.Min)
	}
	if !finite(f.Max) {
		ps.Add("max", "must be a finite number, got %v", f.Max)
	}
	if finite(f.Min) && finite(f.Max) && !(f.Min < f.Max) {
		ps.Add("max", "must be greater than min (min %v, max %v)", f.Min, f.Max)
	}
	return ps
}

// Space is the ordered list of factors; a Point holds one value per factor
// in this order.
type Space []Factor

// Dim is the number of factors.
func (s Space) Dim() int { return len(s) }

// Index returns the position of the named factor, or -1.
func (s Space) Index(name string) int {
	for i, f := range s {
		if f.Name == name {
			return i
		}
	}
	return -1
}

// Names returns the factor names in order.
func (s Space) Names() []string {
	out := make([]string, len(s))
	for i, f := range s {
		out[i] = f.Name
	}
	return out
}

// Validate reports what is wrong with the space, keyed "factor[i].key".
func (s Space) Validate() Problems {
	var ps Problems
	if len(s) == 0 {
		ps.Add("factor", "at least one factor is needed")
	}
	seen := map[string]bool{}
	for i, f := range s {
		prefix := fmt.Sprintf("factor[%d]", i)
		ps = append(ps, f.Validate().Prefix(prefix)...)
		if seen[f.Name] {
			ps.Add(prefix+".name", "factor %q is declared twice", f.Name)
		}
		seen[f.Name] = true
	}
	return ps
}

// Normalised returns the space with every factor normalised.
func (s Space) Normalised() Space {
	out := make(Space, len(s))
	for i, f := range s {
		out[i] = f.Normalised()
	}
	return out
}

// Contains reports whether p is a setpoint the factors can take: inside
// the bounds, whole for integers and categories, one of the levels.
func (s Space) Contains(p Point) bool {
	if len(p) != len(s) {
		return false
	}
	for i, f := range s {
		if !f.Valid(p[i]) {
			return false
		}
	}
	return true
}

// Snap returns the valid setpoint nearest to p, factor by factor.
func (s Space) Snap(p Point) Point {
	out := make(Point, len(p))
	for i, f := range s {
		out[i] = f.Snap(p[i])
	}
	return out
}

// ToUnit maps p from the factors' units into the unit box [0,1]^d, writing
// into dst (allocated when nil) and returning it.
func (s Space) ToUnit(dst, p Point) Point {
	if dst == nil {
		dst = make(Point, len(p))
	}
	for i, f := range s {
		dst[i] = (p[i] - f.Min) / (f.Max - f.Min)
	}
	return dst
}

// FromUnit maps u from the unit box into the factors' units, writing into dst
// (allocated when nil) and returning it.
func (s Space) FromUnit(dst, u Point) Point {
	if dst == nil {
		dst = make(Point, len(u))
	}
	for i, f := range s {
		dst[i] = f.Min + u[i]*(f.Max-f.Min)
	}
	return dst
}

// Point is one value per factor, in the space's order.
type Point []float64

// Equal reports whether q has the same values as p, exactly.
func (p Point) Equal(q Point) bool {
	if len(p) != len(q) {
		return false
	}
	for i := range p {
		if p[i] != q[i] {
			return false
		}
	}
	return true
}

// Finite reports whether every coordinate is a finite number.
func (p Point) Finite() bool {
	for _, v := range p {
		if !finite(v) {
			return false
		}
	}
	return true
}

// Clone returns a copy of p.
func (p Point) Clone() Point { return append(Point(nil), p...) }

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// Env returns the setpoint as named values for expressions over factors
// (constraints, safety rules): each factor's value by name, a categorical
// factor's as the name of the category.
func (s Space) Env(p Point) map[string]any {
	env := make(map[string]any, len(s))
	for i, f := range s {
		if f.Kind == Categorical {
			env[f.Name] = f.Format(p[i])
		} else {
			env[f.Name] = p[i]
		}
	}
	return env
}
