package safety

import (
	"fmt"
	"slices"
	"strconv"
	"strings"

	"benchtender/campaign"
)

// Describe puts the limits and rules in words, one line per factor, rule
// or setting, for the person signing off and for the record; the version
// digest alone means nothing to a technician.
func (c Config) Describe(space campaign.Space) []string {
	var out []string
	for _, f := range space {
		l, ok := c.Limits[f.Name]
		if !ok {
			continue
		}
		out = append(out, f.Name+": "+strings.Join(limitParts(l, f.Unit), "; "))
	}
	for _, r := range c.Rules {
		out = append(out, fmt.Sprintf("rule %s: when %s, %s (%s)", r.Name, r.When, r.Action, r.Message))
	}
	if len(c.TwoPerson) > 0 {
		out = append(out, "two different people approve a move held for: "+strings.Join(c.TwoPerson, ", "))
	}
	if c.MaxHandoffsPerHour > 0 {
		out = append(out, fmt.Sprintf("at most %d setpoints per instrument per hour", c.MaxHandoffsPerHour))
	}
	return out
}

// limitParts names each limit of a factor that is set.
func limitParts(l Limit, unit string) []string {
	var parts []string
	for _, v := range limitValues(l) {
		if v.p != nil {
			parts = append(parts, v.name+" "+num(*v.p, unit))
		}
	}
	if len(l.Levels) > 0 {
		var ls []string
		for _, v := range l.Levels {
			ls = append(ls, strconv.FormatFloat(v, 'g', -1, 64))
		}
		parts = append(parts, "only the levels "+strings.Join(ls, ", "))
	}
	return parts
}

type named struct {
	name string
	p    *float64
}

func limitValues(l Limit) []named {
	return []named{{"hard min", l.HardMin}, {"hard max", l.HardMax}, {"review min", l.ReviewMin}, {"review max", l.ReviewMax}, {"max step", l.MaxStep}}
}

func num(v float64, unit string) string {
	return strings.TrimSpace(strconv.FormatFloat(v, 'g', -1, 64) + " " + unit)
}

// Changes says, in words, what differs from old to c: for each factor
// which limit changed from which value to which, and each rule or setting
// added, removed or changed.
func (c Config) Changes(old Config, space campaign.Space) []string {
	var out []string
	for _, f := range space {
		was, had := old.Limits[f.Name]
		now, has := c.Limits[f.Name]
		if !had && !has {
			continue
		}
		wv, nv := limitValues(was), limitValues(now)
		for i := range wv {
			a, b := wv[i].p, nv[i].p
			switch {
			case a == nil && b == nil:
			case a == nil:
				out = append(out, fmt.Sprintf("%s: %s set to %s", f.Name, nv[i].name, num(*b, f.Unit)))
			case b == nil:
				out = append(out, fmt.Sprintf("%s: %s removed (was %s)", f.Name, wv[i].name, num(*a, f.Unit)))
			case *a != *b:
				out = append(out, fmt.Sprintf("%s: %s %s → %s", f.Name, wv[i].name, num(*a, f.Unit), num(*b, f.Unit)))
			}
		}
		if !slices.Equal(was.Levels, now.Levels) {
			out = append(out, fmt.Sprintf("%s: levels %v → %v", f.Name, was.Levels, now.Levels))
		}
	}
	rules := func(rs []Rule) map[string]Rule {
		m := map[string]Rule{}
		for _, r := range rs {
			m[r.Name] = r
		}
		return m
	}
	wr, nr := rules(old.Rules), rules(c.Rules)
	for _, r := range c.Rules {
		if w, ok := wr[r.Name]; !ok {
			out = append(out, fmt.Sprintf("rule %s added: when %s, %s", r.Name, r.When, r.Action))
		} else if w != r {
			out = append(out, fmt.Sprintf("rule %s changed: was when %s, %s; now when %s, %s", r.Name, w.When, w.Action, r.When, r.Action))
		}
	}
	for _, r := range old.Rules {
		if _, ok := nr[r.Name]; !ok {
			out = append(out, fmt.Sprintf("rule %s removed (was when %s, %s)", r.Name, r.When, r.Action))
		}
	}
	if !slices.Equal(old.TwoPerson, c.TwoPerson) {
		out = append(out, fmt.Sprintf("two-person approval: %v → %v", old.TwoPerson, c.TwoPerson))
	}
	if old.MaxHandoffsPerHour != c.MaxHandoffsPerHour {
		out = append(out, fmt.Sprintf("max_handoffs_per_hour %d → %d", old.MaxHandoffsPerHour, c.MaxHandoffsPerHour))
	}
	if old.KeepBusy != c.KeepBusy {
		out = append(out, fmt.Sprintf("keep_busy %v → %v", old.KeepBusy, c.KeepBusy))
	}
	if old.HoldExpiry != c.HoldExpiry || old.ApprovalExpiry != c.ApprovalExpiry {
		out = append(out, fmt.Sprintf("hold_expiry %v → %v, approval_expiry %v → %v", old.HoldExpiry, c.HoldExpiry, old.ApprovalExpiry, c.ApprovalExpiry))
	}
	return out
}
