package safety_test

import (
	"fmt"

	"benchtender/campaign"
	"benchtender/safety"
)

func Example() {
	space := campaign.Space{{Name: "temperature", Unit: "degC", Min: 20, Max: 95}}
	hi, lo, review := 95.0, 20.0, 85.0
	limits := safety.Config{Limits: map[string]safety.Limit{
		"temperature": {HardMin: &lo, HardMax: &hi, ReviewMax: &review},
	}}
	for _, t := range []float64{60, 88, 97} {
		d := safety.Check(limits, space, campaign.Setpoint{RunID: "R0001", Point: campaign.Point{t}})
		fmt.Println(d.Summary())
	}
	// Output:
	// pass
	// hold: temperature 88 degC is above review_max 85 degC by 3 degC
	// refuse: temperature 97 degC is above hard_max 95 degC by 2 degC
}
