package examples

import (
	"fmt"
	"math"
	"strings"

	"benchtender/campaign"
)

// The invented scenario: a small stirred bench reactor makes a batch of an
// invented pigment, "Ochre 7". The technician sets the bath temperature,
// the reagent feed rate and the hold time; the instrument reports the
// batch's colour strength in percent of a reference batch, to be
// maximised. The response law below is made up; so is its optimum.

// Factors are the scenario's factors, in handoff order.
var factors = campaign.Space{
	{Name: "temperature", Unit: "degC", Min: 40, Max: 98},
	{Name: "feed_rate", Unit: "mL/min", Min: 0.5, Max: 5},
	{Name: "hold_time", Unit: "min", Min: 10, Max: 90},
}

// Factors returns a copy of the scenario's factors.
func Factors() campaign.Space { return append(campaign.Space(nil), factors...) }

// Optimum is where the invented law peaks and its value there.
var (
	optimumPoint = campaign.Point{83, 2.4, 52}
	optimumValue = 91.5
)

// Optimum returns the invented law's maximiser and maximum.
func Optimum() (campaign.Point, float64) { return optimumPoint.Clone(), optimumValue }

// ColourStrength is the invented law: a smooth peak with an interaction
// between temperature and feed rate (hot batches tolerate a faster feed),
// plus a gentle penalty for long holds at high temperature. Its maximum is
// exactly Optimum, because every term is a negative-definite quadratic
// form centred there.
func ColourStrength(p campaign.Point) float64 {
	t := (p[0] - optimumPoint[0]) / 12
	f := (p[1] - optimumPoint[1]) / 1.3
	h := (p[2] - optimumPoint[2]) / 30
	q := t*t + f*f + h*h - 0.8*t*f + 0.3*t*h
	return optimumValue * math.Exp(-0.5*q)
}

// Energy is the second invented law, for the demo with two responses: the
// energy a batch takes in kWh, rising with the bath temperature above the
// room's 20 degC times the hold time, plus the feed pump's share. Hot,
// long batches are strong and costly; the trade-off between the two is
// the demo's Pareto front.
func Energy(p campaign.Point) float64 {
	return 0.15 + 0.004*(p[0]-20)*p[2]/10 + 0.05*p[1]
}

// ConfigTwo is Config with two responses traded off: colour strength,
// made large (nothing under 60 % worth making), against the energy a batch
// takes, made small (nothing over 1.5 kWh).
func ConfigTwo(maxRuns int, seed uint64) string {
	text := Config(maxRuns, seed)
	swap := func(from, to string) {
		if !strings.Contains(text, from) {
			panic("examples: the demo config no longer has " + from)
		}
		text = strings.Replace(text, from, to, 1)
	}
	swap(`name = "ochre7_demo"`, `name = "ochre7_energy_demo"`)
	swap(`[campaign.response]
name = "strength"
unit = "%"
goal = "maximise"
# Colour strength cannot be negative: results below 0 are refused, and
# the model's bands and the best achievable value are clipped at 0.
min = 0.0
`, `# Two responses traded off: the campaign looks for their Pareto front.
[[campaign.responses]]
name = "strength"
unit = "%"
goal = "maximise"
min = 0.0
worst = 60.0

[[campaign.responses]]
name = "energy"
unit = "kWh"
goal = "minimise"
min = 0.0
worst = 1.5
`)
	swap(`[formats.br2_export.factors.temperature]`, `[formats.br2_export.values.energy]
column = "Energy"
unit = "kWh"

[formats.br2_export.factors.temperature]`)
	return text
}

// Config returns the demo's configuration file text, with folders relative
// to the file: exports/ (the instrument's result files), handoff/ (its
// setpoint files) and state/. settle and rescan are short so the demo runs
// in well under a minute; a real share needs the defaults or more.
func Config(maxRuns int, seed uint64) string {
	return fmt.Sprintf(`# Demo campaign: INVENTED scenario and data (a simulated bench reactor
# making an invented pigment). Nothing here describes a real process.

[campaign]
name = "ochre7_demo"
state_dir = "state"
seed = %d
max_runs = %d
initial_runs = 8

[[campaign.factor]]
name = "temperature"
unit = "degC"
min = 40.0
max = 98.0

[[campaign.factor]]
name = "feed_rate"
unit = "mL/min"
min = 0.5
max = 5.0

[[campaign.factor]]
name = "hold_time"
unit = "min"
min = 10.0
max = 90.0

[campaign.response]
name = "strength"
unit = "%%"
goal = "maximise"
# Colour strength cannot be negative: results below 0 are refused, and
# the model's bands and the best achievable value are clipped at 0.
min = 0.0

[instrument]
name = "reactor_sim"
handoff_dir = "handoff"
handoff_format = "csv"
format = "br2_export"

[instrument.watch]
dir = "exports"
pattern = "*.csv"
settle = "250ms"
rescan = "1s"

# How the simulated reactor's legacy export is read: a 4-line preamble,
# semicolons, decimal commas.
[formats.br2_export]
format = "delimited"
delimiter = ";"
decimal = ","
skip_lines = 4
header = true
run_id_source = "column"
run_id_column = "Sample"
run_id_pattern = "^(R[0-9]+)$"
reduce = "last"

[formats.br2_export.values.strength]
column = "Strength"
unit = "%%"

[formats.br2_export.factors.temperature]
column = "Temp"
unit = "degC"

[formats.br2_export.factors.feed_rate]
column = "Feed"
unit = "mL/min"

[formats.br2_export.factors.hold_time]
column = "Hold"
unit = "min"

# The simulated reactor repeats to 0.3 %% strength (one standard
# deviation), so the planner is told so rather than left to guess it.
[planner]
noise_sd = 0.3

# Moves above 90 degC or faster than 4 mL/min are held for a person's
# sign-off; nothing outside the hard limits is ever handed off.
[safety.limits.temperature]
hard_min = 40.0
hard_max = 98.0
review_max = 90.0

[safety.limits.feed_rate]
hard_min = 0.5
hard_max = 5.0
review_max = 4.0

[safety.limits.hold_time]
hard_min = 10.0
hard_max = 90.0

[log]
file = "benchtender.log"
level = "info"
`, seed, maxRuns)
}
