package safety

import (
	"fmt"
	"math"
	"sort"

	"benchtender/campaign"
)

// Limit holds one factor's limits, in the factor's unit. Hard limits are
// required; review limits are optional and, when given, lie inside the
// hard limits.
type Limit struct {
	HardMin   *float64 `toml:"hard_min"`
	HardMax   *float64 `toml:"hard_max"`
	ReviewMin *float64 `toml:"review_min"`
	ReviewMax *float64 `toml:"review_max"`
}

// Config is the [safety] section: limits keyed by factor name.
type Config struct {
	Limits map[string]Limit `toml:"limits"`
}

// Default returns an empty config: with no limits, the gate refuses
// everything.
func Default() Config { return Config{} }

// Validate reports every problem, keyed relative to the section: every
// factor needs both hard limits, limits must be finite and ordered, review
// limits must lie within hard ones, and no limit may name an unknown
// factor.
func (c Config) Validate(space campaign.Space) campaign.Problems {
	var ps campaign.Problems
	for _, f := range space {
		key := "limits." + f.Name
		l, ok := c.Limits[f.Name]
		if !ok && f.Kind == campaign.Choice {
			continue // its valid choices are its limits
		}
		if !ok {
			ps.Add(key, "factor %q has no limits; hard_min and hard_max are required", f.Name)
			continue
		}
		ps = append(ps, l.validate(key)...)
	}
	names := make([]string, 0, len(c.Limits))
	for name := range c.Limits {
		names = append(names, name)
	}
	sort.Strings(names)
	for _, name := range names {
		if space.Index(name) < 0 {
			ps.Add("limits."+name, "no factor is named %q (factors: %v)", name, space.Names())
		}
	}
	return ps
}

func (l Limit) validate(key string) campaign.Problems {
	var ps campaign.Problems
	for _, v := range []struct {
		name string
		p    *float64
	}{{"hard_min", l.HardMin}, {"hard_max", l.HardMax}, {"review_min", l.ReviewMin}, {"review_max", l.ReviewMax}} {
		if v.p != nil && (math.IsNaN(*v.p) || math.IsInf(*v.p, 0)) {
			ps.Add(key+"."+v.name, "must be a finite number, got %v", *v.p)
		}
	}
	if l.HardMin == nil {
		ps.Add(key+".hard_min", "is required")
	}
	if l.HardMax == nil {
		ps.Add(key+".hard_max", "is required")
	}
	if len(ps) > 0 {
		return ps
	}
	lo, hi := *l.HardMin, *l.HardMax
	if !(lo < hi) {
		ps.Add(key+".hard_max", "must be greater than hard_min (%v), got %v", lo, hi)
	}
	if l.ReviewMin != nil && (*l.ReviewMin < lo || *l.ReviewMin > hi) {
		ps.Add(key+".review_min", "%v lies outside the hard limits [%v, %v]", *l.ReviewMin, lo, hi)
	}
	if l.ReviewMax != nil && (*l.ReviewMax < lo || *l.ReviewMax > hi) {
		ps.Add(key+".review_max", "%v lies outside the hard limits [%v, %v]", *l.ReviewMax, lo, hi)
	}
	if l.ReviewMin != nil && l.ReviewMax != nil && !(*l.ReviewMin < *l.ReviewMax) {
		ps.Add(key+".review_max", "must be greater than review_min (%v), got %v", *l.ReviewMin, *l.ReviewMax)
	}
	return ps
}

// Warnings lists settings that are legal but probably not meant: factor
// bounds that reach past the hard limits, so the planner will propose
// setpoints that the gate refuses.
func (c Config) Warnings(space campaign.Space) []string {
	var out []string
	for _, f := range space {
		l, ok := c.Limits[f.Name]
		if !ok || l.HardMin == nil || l.HardMax == nil {
			continue
		}
		if f.Min < *l.HardMin || f.Max > *l.HardMax {
			out = append(out, fmt.Sprintf("factor %q spans [%v, %v] but its hard limits are [%v, %v]: proposals outside them will be refused", f.Name, f.Min, f.Max, *l.HardMin, *l.HardMax))
		}
	}
	return out
}
