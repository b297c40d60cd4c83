package agent

import (
	"strings"
	"testing"

	"benchtender/campaign"
)

func TestRenderHandoff(t *testing.T) {
	space := campaign.Space{{Name: "temp", Unit: "degC", Min: 0, Max: 100}, {Name: "flow", Min: 1, Max: 5}}
	sp := campaign.Setpoint{RunID: "R0003", Point: roundPoint(space, campaign.Point{72.123456789, 2.5})}
	csv, err := renderHandoff(space, sp, HandoffCSV, "R0003-7")
	if err != nil || string(csv) != "run,temp,flow,action\nR0003,72.1235,2.5,R0003-7\n" {
		t.Errorf("csv %q, %v", csv, err)
	}
	js, err := renderHandoff(space, sp, HandoffJSON, "R0003-7")
	if err != nil || !strings.Contains(string(js), `"name": "temp",`) || !strings.Contains(string(js), `"value": 72.1235`) || !strings.Contains(string(js), `"unit": "degC"`) {
		t.Errorf("json %s, %v", js, err)
	}
	if _, err := renderHandoff(space, campaign.Setpoint{RunID: "R1", Point: campaign.Point{1}}, HandoffCSV, "x"); err == nil {
		t.Error("a setpoint with a missing value was rendered")
	}
}
