package campaign

import (
	"fmt"
	"math"
	"regexp"
)

// namePattern is what factor and response names may look like: they become
// column headers, config keys and file-name parts, so they stay plain.
var namePattern = regexp.MustCompile(`^[A-Za-z][A-Za-z0-9_]{0,63}$`)

// ValidName reports whether s may name a factor or a response.
func ValidName(s string) bool { return namePattern.MatchString(s) }

// Factor is one setting of the process that the campaign varies, continuous
// between Min and Max, in Unit.
type Factor struct {
	Name string  `toml:"name"`
	Unit string  `toml:"unit"`
	Min  float64 `toml:"min"`
	Max  float64 `toml:"max"`
}

// Validate reports what is wrong with the factor.
func (f Factor) Validate() Problems {
	var ps Problems
	if !ValidName(f.Name) {
		ps.Add("name", "%q is not a valid name (a letter, then letters, digits or _; at most 64)", f.Name)
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

// Contains reports whether p lies inside the factor box (bounds included).
func (s Space) Contains(p Point) bool {
	if len(p) != len(s) {
		return false
	}
	for i, f := range s {
		if !finite(p[i]) || p[i] < f.Min || p[i] > f.Max {
			return false
		}
	}
	return true
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
