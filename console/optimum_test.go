package console

import (
	"strings"
	"testing"

	"benchtender/agent"
	"benchtender/campaign"
	"benchtender/planner"
	"benchtender/record"
	"benchtender/safety"
)

// The optimum summary marks what it cannot know: a most likely optimum
// beyond the review limits (which factor, which side, how far), and one
// farther than a length-scale from every run (an extrapolation).
func TestOptimumBeyondWhatWasExplored(t *testing.T) {
	cfg := agent.DefaultConfig()
	cfg.Campaign.Factors = campaign.Space{{Name: "temp", Unit: "degC", Min: 20, Max: 80}, {Name: "ph", Min: 3, Max: 9}}
	f := func(v float64) *float64 { return &v }
	cfg.Safety = safety.Default()
	cfg.Safety.Limits = map[string]safety.Limit{"temp": {HardMin: f(20), HardMax: f(80), ReviewMax: f(70)}, "ph": {HardMin: f(3), HardMax: f(9)}}
	scales := []planner.Scale{{Factor: "temp", Value: 5}, {Factor: "ph", Value: 1}}
	near := []campaign.Trial{{Point: campaign.Point{60, 5}}, {Point: campaign.Point{69, 5.5}}}
	got := strings.Join(beyond(cfg, campaign.Point{78, 5.5}, near, scales), "\n")
	for _, want := range []string{"most likely temp, 78 degC, lies above the review limits (70 degC) by 8 degC", "1.8 length-scales from the nearest run"} {
		if !strings.Contains(got, want) {
			t.Errorf("%q lacks %q", got, want)
		}
	}
	if got := beyond(cfg, campaign.Point{65, 5.2}, near, scales); len(got) != 0 {
		t.Errorf("inside the limits and near the runs, yet: %v", got)
	}
}

// Two separate clusters of draws give two pieces, each with its share,
// where a central interval would span the empty middle.
func TestLocateReportsTwoModes(t *testing.T) {
	f := campaign.Factor{Name: "ph", Min: 3, Max: 9}
	var draws []campaign.Point
	for i := 0; i < 80; i++ {
		v := 4.0 + 0.05*float64(i%10)
		if i%2 == 1 {
			v = 7.5 + 0.05*float64(i%10)
		}
		draws = append(draws, campaign.Point{v})
	}
	likely, region, _ := locate(f, draws, 0)
	// The 90% region holds 45% in each cluster.
	if len(region) != 2 || !strings.HasPrefix(region[0], "3.9") || !strings.HasPrefix(region[1], "7.5") ||
		!strings.Contains(region[0], "(4") || !strings.Contains(region[1], "(4") || likely == "" {
		t.Errorf("most likely %s, region %v: want two pieces of about 45%% each", likely, region)
	}
}

// A run's row in the report carries every other value its latest result
// file gave, with units, besides the response.
func TestRunRowCarriesEveryValue(t *testing.T) {
	resp := campaign.Response{Name: "yield", Unit: "%"}
	r := &record.Run{ID: "R0001", Status: record.StatusDone, Value: 62, Point: campaign.Point{41.5},
		Values: map[string]record.Reading{"yield": {Value: 62, Unit: "%"}, "purity": {Value: 97.9, Unit: "%"}, "viscosity": {Value: 0.0012, Unit: "Pa·s"}}}
	row := runRow(campaign.Space{{Name: "temp", Min: 20, Max: 80}}, resp, r)
	if got := strings.Join(row.Others, "; "); got != "purity 97.9 %; viscosity 0.0012 Pa·s" {
		t.Errorf("other values %q", got)
	}
}

// The stopping rule's description names the search elsewhere exactly
// when the rule waits for one: a tolerance given, search_elsewhere and
// set_aside on.
func TestStopRuleNamesTheSearchElsewhere(t *testing.T) {
	const search = "a search outside the best run's basin found nothing better"
	for _, c := range []struct {
		tolerance, elsewhere, aside, want bool
	}{{true, true, true, true}, {true, false, true, false}, {true, true, false, false}, {false, true, true, false}} {
		cfg := agent.DefaultConfig()
		cfg.Campaign.MaxRuns = 40
		cfg.Campaign.Factors = campaign.Space{{Name: "temp", Unit: "degC", Min: 20, Max: 80}}
		if c.tolerance {
			cfg.Planner.Stop.Tolerance = map[string]float64{"temp": 2}
		}
		cfg.Planner.Stop.SearchElsewhere, cfg.Planner.SetAside = c.elsewhere, c.aside
		_, rule := stopping(cfg, &record.State{})
		if strings.Contains(rule, search) != c.want {
			t.Errorf("tolerance %v, search_elsewhere %v, set_aside %v: rule %q", c.tolerance, c.elsewhere, c.aside, rule)
		}
	}
}
