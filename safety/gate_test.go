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

// Over a million random setpoints, nothing outside a hard limit passes or
// is held, and nothing outside a review limit passes.
func TestGateNeverPassesWhatLimitsForbid(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 12))
	n := 1_000_000
	if testing.Short() {
		n = 20_000
	}
	for i := 0; i < n; i++ {
		p := campaign.Point{rng.Float64()*140 - 10, rng.Float64()*8 - 1}
		if i%1000 == 0 {
			p[i/1000%2] = math.NaN()
		}
		d := Check(limits, space, campaign.Setpoint{RunID: "R1", Point: p})
		insideHard := p[0] >= 10 && p[0] <= 100 && p[1] >= 1 && p[1] <= 6
		insideReview := insideHard && p[0] <= 80 && p[1] >= 1.5 && p[1] <= 5
		switch {
		case !insideHard && d.Verdict != Refuse:
			t.Fatalf("%v outside hard limits: %s", p, d.Verdict)
		case insideHard && !insideReview && d.Verdict != Hold:
			t.Fatalf("%v outside review limits: %s", p, d.Verdict)
		case insideReview && d.Verdict != Pass:
			t.Fatalf("%v inside every limit: %s", p, d.Verdict)
		}
	}
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
