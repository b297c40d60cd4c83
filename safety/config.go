package safety

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"math"
	"sort"
	"time"

	"benchtender/campaign"
)

// Limit holds one factor's limits, in the factor's unit. Hard limits are
// required; the others are optional.
type Limit struct {
	HardMin   *float64 `toml:"hard_min" json:"hard_min,omitempty"`
	HardMax   *float64 `toml:"hard_max" json:"hard_max,omitempty"`
	ReviewMin *float64 `toml:"review_min" json:"review_min,omitempty"`
	ReviewMax *float64 `toml:"review_max" json:"review_max,omitempty"`
	// MaxStep is the largest move from the previous setpoint (the last
	// one handed off) that passes without sign-off: a ramp limit. A
	// larger move is held.
	MaxStep *float64 `toml:"max_step" json:"max_step,omitempty"`
	// Levels, when given, are the only values allowed; any other value is
	// refused.
	Levels []float64 `toml:"levels" json:"levels,omitempty"`
}

// Rule actions.
const (
	ActionHold   = "hold"
	ActionRefuse = "refuse"
)

// Rule is a limit over several factors: When is an expression over the
// factor names (categorical factors as their names), e.g. "temperature > 80 &&
// pressure > 3"; when it is true the move is held or refused, and Message
// is shown to the person signing off.
type Rule struct {
	Name    string `toml:"name" json:"name"`
	When    string `toml:"when" json:"when"`
	Action  string `toml:"action" json:"action"`
	Message string `toml:"message" json:"message"`
}

// Config is the [safety] section.
type Config struct {
	Limits map[string]Limit `toml:"limits" json:"limits"`
	Rules  []Rule           `toml:"rule" json:"rules,omitempty"`
	// MaxHandoffsPerHour caps the setpoints written per instrument in any
	// hour (0: no cap).
	MaxHandoffsPerHour int `toml:"max_handoffs_per_hour" json:"max_handoffs_per_hour,omitempty"`
	// HoldExpiry is how long a held move waits for sign-off before it
	// lapses; ApprovalExpiry how long an approval stays good before it is
	// applied.
	HoldExpiry     time.Duration `toml:"hold_expiry" json:"hold_expiry"`
	ApprovalExpiry time.Duration `toml:"approval_expiry" json:"approval_expiry"`
	// TwoPerson lists the kinds of move that need two different people to
	// approve: limit names ("review_max", "review_min", "max_step") and
	// rule names.
	TwoPerson []string `toml:"two_person" json:"two_person,omitempty"`
	// KeepBusy: while a move is held, keep the instrument working with
	// the best proposal inside every limit.
	KeepBusy bool `toml:"keep_busy" json:"keep_busy,omitempty"`
	// AllStopFile is the file whose existence halts every handoff at
	// once; anybody may create it (relative to the state folder unless
	// absolute). Default "ALL-STOP".
	AllStopFile string `toml:"all_stop_file" json:"all_stop_file"`
}

// Default returns the defaults: no limits (so the gate refuses
// everything until limits are given), holds lapse after 12 hours (a night
// shift; common practice), approvals after 1 hour.
func Default() Config {
	return Config{HoldExpiry: 12 * time.Hour, ApprovalExpiry: time.Hour, AllStopFile: "ALL-STOP"}
}

// Version is a short digest of the limits and rules: an approval is given
// against one version and is void under another.
func (c Config) Version() string {
	canon := struct {
		Limits map[string]Limit
		Rules  []Rule
		Two    []string
	}{c.Limits, c.Rules, c.TwoPerson}
	b, _ := json.Marshal(canon) // map keys are sorted by encoding/json
	sum := sha256.Sum256(b)
	return hex.EncodeToString(sum[:8])
}

// Validate reports every problem, keyed relative to the section: every
// factor needs both hard limits (a categorical factor's categories are its
// limits), limits must be finite and ordered, review limits must lie
// within hard ones, no limit may name an unknown factor, rules must
// compile.
func (c Config) Validate(space campaign.Space) campaign.Problems {
	var ps campaign.Problems
	for _, f := range space {
		key := "limits." + f.Name
		l, ok := c.Limits[f.Name]
		if !ok && f.Kind == campaign.Categorical {
			continue
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
	_, rps := compileRules(c.Rules, space)
	ps = append(ps, rps...)
	if c.MaxHandoffsPerHour < 0 {
		ps.Add("max_handoffs_per_hour", "must not be negative, got %d", c.MaxHandoffsPerHour)
	}
	if c.HoldExpiry < 0 {
		ps.Add("hold_expiry", "must not be negative, got %v", c.HoldExpiry)
	}
	if c.ApprovalExpiry < 0 {
		ps.Add("approval_expiry", "must not be negative, got %v", c.ApprovalExpiry)
	}
	known := map[string]bool{"review_min": true, "review_max": true, "max_step": true}
	for _, r := range c.Rules {
		known[r.Name] = true
	}
	for _, k := range c.TwoPerson {
		if !known[k] {
			ps.Add("two_person", "%q is neither review_min, review_max, max_step nor a rule's name", k)
		}
	}
	return ps
}

// Holds returns the hold expiry, the default when unset.
func (c Config) Holds() time.Duration {
	if c.HoldExpiry > 0 {
		return c.HoldExpiry
	}
	return Default().HoldExpiry
}

// Approvals returns the approval expiry, the default when unset.
func (c Config) Approvals() time.Duration {
	if c.ApprovalExpiry > 0 {
		return c.ApprovalExpiry
	}
	return Default().ApprovalExpiry
}

// StopFile returns the all-stop file's name, the default when unset.
func (c Config) StopFile() string {
	if c.AllStopFile != "" {
		return c.AllStopFile
	}
	return Default().AllStopFile
}

func (l Limit) validate(key string) campaign.Problems {
	var ps campaign.Problems
	for _, v := range []struct {
		name string
		p    *float64
	}{{"hard_min", l.HardMin}, {"hard_max", l.HardMax}, {"review_min", l.ReviewMin}, {"review_max", l.ReviewMax}, {"max_step", l.MaxStep}} {
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
	if l.MaxStep != nil && !(*l.MaxStep > 0) {
		ps.Add(key+".max_step", "must be positive, got %v", *l.MaxStep)
	}
	for _, v := range l.Levels {
		if math.IsNaN(v) || math.IsInf(v, 0) || v < lo || v > hi {
			ps.Add(key+".levels", "level %v is not a finite value inside the hard limits [%v, %v]", v, lo, hi)
		}
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

// ReviewBox returns, per factor, the interval inside every hard and review
// limit: where a move passes without sign-off (ramp limits aside).
func (c Config) ReviewBox(space campaign.Space) [][2]float64 {
	box := make([][2]float64, len(space))
	for i, f := range space {
		lo, hi := f.Min, f.Max
		if l, ok := c.Limits[f.Name]; ok {
			for _, b := range []*float64{l.HardMin, l.ReviewMin} {
				if b != nil {
					lo = math.Max(lo, *b)
				}
			}
			for _, b := range []*float64{l.HardMax, l.ReviewMax} {
				if b != nil {
					hi = math.Min(hi, *b)
				}
			}
		}
		box[i] = [2]float64{lo, hi}
	}
	return box
}

// PassBox is the review box narrowed by each factor's ramp limit
// (max_step) around the previous setpoint (nil: none yet): a move inside
// it passes every per-factor limit. Rules over several factors are not in
// it; the gate itself judges those.
func (c Config) PassBox(space campaign.Space, previous campaign.Point) [][2]float64 {
	box := c.ReviewBox(space)
	if len(previous) != len(space) {
		return box
	}
	for i, f := range space {
		if l, ok := c.Limits[f.Name]; ok && l.MaxStep != nil {
			box[i][0] = math.Max(box[i][0], previous[i]-*l.MaxStep)
			box[i][1] = math.Min(box[i][1], previous[i]+*l.MaxStep)
		}
	}
	return box
}
