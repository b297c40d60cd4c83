package safety

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"benchtender/campaign"
)

func f(v float64) *float64 { return &v }

var space = campaign.Space{{Name: "temp", Unit: "degC", Min: 0, Max: 120}, {Name: "pressure", Unit: "bar", Min: 0, Max: 10}}

var limits = Config{Limits: map[string]Limit{
	"temp":     {HardMin: f(10), HardMax: f(100), ReviewMax: f(80)},
	"pressure": {HardMin: f(1), HardMax: f(6), ReviewMin: f(1.5), ReviewMax: f(5)},
}}

func TestCheck(t *testing.T) {
	cases := []struct {
		name    string
		point   campaign.Point
		verdict Verdict
		limits  []string
	}{
		{"inside everything", campaign.Point{50, 3}, Pass, nil},
		{"on the review bound", campaign.Point{80, 5}, Pass, nil},
		{"on the hard bound is outside review", campaign.Point{100, 3}, Hold, []string{"review_max"}},
		{"above review", campaign.Point{85, 3}, Hold, []string{"review_max"}},
		{"below review min", campaign.Point{50, 1.2}, Hold, []string{"review_min"}},
		{"two holds", campaign.Point{90, 5.5}, Hold, []string{"review_max", "review_max"}},
		{"above hard", campaign.Point{100.0001, 3}, Refuse, []string{"hard_max"}},
		{"hard beats hold", campaign.Point{90, 0.5}, Refuse, []string{"review_max", "hard_min"}},
		{"NaN", campaign.Point{math.NaN(), 3}, Refuse, []string{"invalid"}},
		{"infinite", campaign.Point{50, math.Inf(1)}, Refuse, []string{"invalid"}},
		{"too few values", campaign.Point{50}, Refuse, []string{"invalid"}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			d := Check(limits, space, campaign.Setpoint{RunID: "R1", Point: c.point})
			if d.Verdict != c.verdict {
				t.Fatalf("verdict %s, want %s: %s", d.Verdict, c.verdict, d.Summary())
			}
			var got []string
			for _, r := range d.Reasons {
				got = append(got, r.Limit)
			}
			if strings.Join(got, ",") != strings.Join(c.limits, ",") {
				t.Errorf("limits crossed %v, want %v", got, c.limits)
			}
		})
	}
}

func TestReasonSaysByHowMuch(t *testing.T) {
	d := Check(limits, space, campaign.Setpoint{RunID: "R1", Point: campaign.Point{85.5, 3}})
	r := d.Reasons[0]
	if r.Excess != 5.5 || r.Bound != 80 || r.Factor != "temp" || r.Message != "temp 85.5 degC is above review_max 80 degC by 5.5 degC" {
		t.Errorf("reason %+v", r)
	}
}

// Without valid limits the gate refuses everything (fail closed).
func TestInvalidLimitsRefuseEverything(t *testing.T) {
	for _, cfg := range []Config{
		{},
		{Limits: map[string]Limit{"temp": {HardMin: f(10), HardMax: f(100)}}},                                           // pressure missing
		{Limits: map[string]Limit{"temp": {HardMin: f(10), HardMax: f(5)}, "pressure": {HardMin: f(1), HardMax: f(6)}}}, // reversed
		{Limits: map[string]Limit{"temp": {HardMin: f(math.NaN()), HardMax: f(100)}, "pressure": {HardMin: f(1), HardMax: f(6)}}},
	} {
		if d := Check(cfg, space, campaign.Setpoint{RunID: "R1", Point: campaign.Point{50, 3}}); d.Verdict != Refuse {
			t.Errorf("limits %+v: verdict %s, want refuse", cfg, d.Verdict)
		}
	}
}

// Property, over two million random setpoints under random limit sets
// (hard, review, ramp, levels), random previous setpoints and a holding
// and a refusing rule: nothing outside a hard limit, off the levels or
// tripping the refusing rule is ever passed or held; everything else
// outside a review limit, moving more than the ramp limit or tripping the
// holding rule is held; the rest passes. The oracle below is written
// independently of the gate.
func TestGateProperty(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 12))
	n := 2_000_000
	if testing.Short() {
		n = 50_000
	}
	const perConfig = 5000
	var g *Gate
	var lim [2]Limit
	for i := 0; i < n; i++ {
		if i%perConfig == 0 {
			for k := range lim {
				lo := rng.Float64() * 20
				hi := lo + 1 + rng.Float64()*80
				l := Limit{HardMin: f(lo), HardMax: f(hi)}
				if rng.IntN(2) == 0 {
					l.ReviewMin = f(lo + rng.Float64()*(hi-lo)/3)
				}
				if rng.IntN(2) == 0 {
					l.ReviewMax = f(hi - rng.Float64()*(hi-lo)/3)
				}
				if rng.IntN(2) == 0 {
					l.MaxStep = f(1 + rng.Float64()*20)
				}
				if k == 1 && rng.IntN(4) == 0 {
					l.Levels = []float64{math.Round(lo + 1), math.Round((lo + hi) / 2), math.Floor(hi)}
				}
				lim[k] = l
			}
			cfg := Config{Limits: map[string]Limit{"temp": lim[0], "pressure": lim[1]}, Rules: []Rule{
				{Name: "hot_and_high", When: "temp > 60 and pressure > 50", Action: ActionHold, Message: "m"},
				{Name: "too_hot_and_high", When: "temp > 90 and pressure > 80", Action: ActionRefuse, Message: "m"},
			}}
			g = NewGate(cfg, space120)
		}
		p := campaign.Point{rng.Float64()*140 - 10, rng.Float64()*140 - 10}
		if i%7 == 0 && lim[1].Levels != nil {
			p[1] = lim[1].Levels[rng.IntN(3)]
		}
		var prev campaign.Point
		if rng.IntN(2) == 0 {
			prev = campaign.Point{p[0] + rng.NormFloat64()*15, p[1] + rng.NormFloat64()*15}
		}
		if i%1000 == 0 {
			p[i/1000%2] = math.NaN()
		}
		d := g.Check(campaign.Setpoint{RunID: "R1", Point: p}, prev)
		want := oracle(lim, p, prev)
		if d.Verdict != want {
			t.Fatalf("%v (previous %v) under %+v %+v: gate says %s, oracle %s (%s)", p, prev, lim[0], lim[1], d.Verdict, want, d.Summary())
		}
	}
}

var space120 = campaign.Space{{Name: "temp", Unit: "degC", Min: 0, Max: 120}, {Name: "pressure", Unit: "bar", Min: 0, Max: 120}}

func oracle(lim [2]Limit, p, prev campaign.Point) Verdict {
	for _, v := range p {
		if math.IsNaN(v) {
			return Refuse
		}
	}
	refused, held := false, false
	for k, l := range lim {
		v := p[k]
		if v < *l.HardMin || v > *l.HardMax {
			refused = true
		}
		if l.Levels != nil {
			ok := false
			for _, x := range l.Levels {
				ok = ok || x == v
			}
			refused = refused || !ok
		}
		if (l.ReviewMin != nil && v < *l.ReviewMin) || (l.ReviewMax != nil && v > *l.ReviewMax) {
			held = true
		}
		if l.MaxStep != nil && prev != nil && math.Abs(v-prev[k]) > *l.MaxStep {
			held = true
		}
	}
	if p[0] > 90 && p[1] > 80 {
		refused = true
	}
	if p[0] > 60 && p[1] > 50 {
		held = true
	}
	switch {
	case refused:
		return Refuse
	case held:
		return Hold
	}
	return Pass
}

func TestValidateNamesKeys(t *testing.T) {
	cfg := Config{Limits: map[string]Limit{
		"temp":  {HardMin: f(10), HardMax: f(100), ReviewMax: f(120)},
		"speed": {HardMin: f(1), HardMax: f(2)},
	}}
	got := cfg.Validate(space).Error()
	for _, want := range []string{"limits.temp.review_max", "limits.pressure: factor \"pressure\" has no limits", "limits.speed: no factor"} {
		if !strings.Contains(got, want) {
			t.Errorf("%q lacks %q", got, want)
		}
	}
}

func TestRulesAndVersion(t *testing.T) {
	cfg := Config{Limits: limits.Limits, Rules: []Rule{{Name: "hot_and_pressed", When: "temp > 70 && pressure > 4", Action: ActionHold, Message: "seals are rated for 4 bar when hot"}}}
	d := Check(cfg, space, campaign.Setpoint{RunID: "R1", Point: campaign.Point{75, 4.5}})
	if d.Verdict != Hold || d.Kinds()[0] != "hot_and_pressed" || !strings.Contains(d.Summary(), "seals are rated") {
		t.Errorf("decision %+v", d)
	}
	if d.Limits == "" || d.Limits != cfg.Version() {
		t.Errorf("decision made under %q, config version %q", d.Limits, cfg.Version())
	}
	edited := cfg
	edited.Limits = map[string]Limit{"temp": {HardMin: f(10), HardMax: f(99)}, "pressure": limits.Limits["pressure"]}
	if edited.Version() == cfg.Version() {
		t.Error("editing a limit did not change the version")
	}
	bad := Config{Limits: limits.Limits, Rules: []Rule{{Name: "x", When: "temp >", Action: "stop", Message: ""}}}
	got := bad.Validate(space).Error()
	for _, want := range []string{"rule[0].when", "rule[0].action", "rule[0].message"} {
		if !strings.Contains(got, want) {
			t.Errorf("%q lacks %s", got, want)
		}
	}
}

// Limits changes read as words: which factor, which limit, old and new.
func TestChangesInWords(t *testing.T) {
	space := campaign.Space{{Name: "temp", Unit: "degC", Min: 20, Max: 80}, {Name: "flow", Unit: "mL/min", Min: 1, Max: 5}} // shadows the package one
	f := func(v float64) *float64 { return &v }
	old := Default()
	old.Limits = map[string]Limit{"temp": {HardMin: f(20), HardMax: f(80), ReviewMax: f(75)}, "flow": {HardMin: f(1), HardMax: f(5)}}
	now := old
	now.Limits = map[string]Limit{"temp": {HardMin: f(20), HardMax: f(80), ReviewMax: f(70), MaxStep: f(5)}, "flow": {HardMin: f(1), HardMax: f(5)}}
	now.Rules = []Rule{{Name: "hot_fast", When: "temp > 60 && flow > 4", Action: ActionHold, Message: "m"}}
	got := strings.Join(now.Changes(old, space), "\n")
	for _, want := range []string{"temp: review max 75 degC → 70 degC", "temp: max step set to 5 degC", "rule hot_fast added: when temp > 60 && flow > 4, hold"} {
		if !strings.Contains(got, want) {
			t.Errorf("changes %q lack %q", got, want)
		}
	}
	if strings.Contains(got, "flow:") {
		t.Errorf("flow did not change: %q", got)
	}
	if d := strings.Join(now.Describe(space), "\n"); !strings.Contains(d, "temp: hard min 20 degC; hard max 80 degC; review max 70 degC; max step 5 degC") {
		t.Errorf("described as %q", d)
	}
}
