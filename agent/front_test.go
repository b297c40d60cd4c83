package agent

import (
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"benchtender/parsers"
	"benchtender/planner"
	"benchtender/record"
)

// frontHead trades purity (made large, nothing under 50 % acceptable)
// against energy (made small) instead of purity alone.
const frontHead = `
[[campaign.responses]]
name = "purity"
unit = "%"
goal = "maximise"
min = 0.0
max = 100.0
worst = 50.0

[[campaign.responses]]
name = "energy"
unit = "kJ"
goal = "minimise"
`

// newFrontCampaign is the test campaign with two responses; the result
// files carry both.
func newFrontCampaign(t *testing.T, maxRuns string) *testCampaign {
	t.Helper()
	text := strings.Replace(baseConfig, "%MAX%", maxRuns, 1) + passLimits
	text = strings.Replace(text, "[campaign.response]\nname = \"purity\"\nunit = \"%\"\ngoal = \"maximise\"\n", frontHead, 1)
	text += "\n[formats.bench_csv.values.energy]\ncolumn = \"Energy\"\nunit = \"kJ\"\n"
	tc := campaignOf(t, text)
	cfg := tc.cfg
	if !cfg.Campaign.Several() {
		t.Fatal("the campaign does not trade two responses off")
	}
	return tc
}

// frontResult is a result file with both responses (decimal commas); an
// empty energy leaves that cell empty.
func frontResult(purity, energy string) string {
	return "Instrument: test bench\r\nDate: 05.12.2026\r\nSample;Purity;Energy;Unit\r\nx;" + purity + ";" + energy + ";%\r\n"
}

// A campaign with two responses runs through the real loop: after the
// initial design, proposals come from the expected hypervolume
// improvement; each ingest records both values; a file without one of
// them is a failed run naming it, and a value outside purity's range
// too, and neither is modelled.
func TestFrontCampaignThroughRealFiles(t *testing.T) {
	tc := newFrontCampaign(t, "7")
	events, stop := tc.start(t)
	defer stop()
	// An invented trade-off: hotter is purer and costs more energy.
	answer := func(temp, flow float64) (string, string) {
		purity := 50 + 45*(temp-20)/60 - 3*math.Abs(flow-3)
		energy := 2*temp + 10*flow
		comma := func(v float64) string { return strings.Replace(fmt.Sprintf("%.2f", v), ".", ",", 1) }
		return comma(purity), comma(energy)
	}
	var methods []string
	for i := range 7 {
		prop := waitFor(t, events, "a proposal", kind(record.KindProposal))
		methods = append(methods, prop.Method)
		waitFor(t, events, "a handoff", kind(record.KindHandoffOK))
		p, e := answer(prop.Point[0], prop.Point[1])
		switch i {
		case 3:
			e = ""
		case 4:
			p = "104,0"
		}
		tc.writeResult(t, "res_"+prop.Run+".csv", frontResult(p, e))
		in := waitFor(t, events, "an ingest", kind(record.KindIngest))
		switch i {
		case 3:
			if !strings.HasPrefix(in.Failed, "energy: ") {
				t.Errorf("a file without energy: failed %q, want the reason naming energy", in.Failed)
			}
		case 4:
			if !strings.Contains(in.Failed, "purity = 104 is above its physical range") {
				t.Errorf("purity 104 %%: failed %q", in.Failed)
			}
		default:
			if in.Failed != "" || len(in.Values) < 2 || in.Values["purity"].Value != in.Value || in.Values["energy"].Unit != "kJ" {
				t.Errorf("run %s: value %v, failed %q, values %v", in.Run, in.Value, in.Failed, in.Values)
			}
		}
	}
	for i, m := range methods {
		want := planner.MethodDesign
		if i >= 3 {
			want = planner.MethodHypervolume
		}
		if m != want {
			t.Errorf("proposal %d: method %q, want %q", i+1, m, want)
		}
	}
	st := record.Replay(readJournalT(t, tc))
	trials := trialsOf(tc.cfg.Campaign, st)
	if len(trials) != 5 {
		t.Fatalf("%d runs modelled, want 5 (two failed)", len(trials))
	}
	for _, tr := range trials {
		if len(tr.Values) != 2 || tr.Values[0] != tr.Value || !(tr.Values[1] > 0) {
			t.Errorf("trial %v: values %v", tr.Point, tr.Values)
		}
	}
}

// The config names each mistake in the responses with its line: both
// forms at once, a single traded response, a name twice, a worst value
// outside the range or on a single response, a response the format does
// not give.
func TestFrontConfigMistakes(t *testing.T) {
	base := strings.Replace(baseConfig, "%MAX%", "10", 1) + passLimits + "\n[formats.bench_csv.values.energy]\ncolumn = \"Energy\"\n"
	for _, c := range []struct {
		name, from, to, key, says string
	}{
		{"both forms", "[campaign.response]\nname = \"purity\"\nunit = \"%\"\ngoal = \"maximise\"\n", "[campaign.response]\nname = \"purity\"\ngoal = \"maximise\"\n" + frontHead, "campaign.response", "not both"},
		{"one traded response", "[campaign.response]\nname = \"purity\"\nunit = \"%\"\ngoal = \"maximise\"\n", "[[campaign.responses]]\nname = \"purity\"\ngoal = \"maximise\"\n", "campaign.responses", "two to four"},
		{"a name twice", "name = \"energy\"", "name = \"purity\"", "campaign.responses[1].name", "also the name"},
		{"worst outside the range", "worst = 50.0", "worst = 150.0", "campaign.responses[0].worst", "outside the physical range"},
		{"worst on one response", "goal = \"maximise\"\n", "goal = \"maximise\"\nworst = 60.0\n", "campaign.response.worst", "has no front"},
		{"a response no format gives", "name = \"energy\"", "name = \"cost\"", "formats.bench_csv.values", `"cost" is not among`},
		{"the front's stopping rule on one response", "[planner]\n", "[planner]\nstop.hypervolume_below = 0.002\n", "planner.stop.hypervolume_below", "several responses"},
	} {
		t.Run(c.name, func(t *testing.T) {
			text := base
			if c.name != "both forms" && c.name != "one traded response" && c.name != "worst on one response" && c.name != "the front's stopping rule on one response" {
				text = strings.Replace(text, "[campaign.response]\nname = \"purity\"\nunit = \"%\"\ngoal = \"maximise\"\n", frontHead, 1)
			}
			if !strings.Contains(text, c.from) {
				t.Fatalf("the config has no %q", c.from)
			}
			text = strings.Replace(text, c.from, c.to, 1)
			path := filepath.Join(t.TempDir(), "c.toml")
			os.WriteFile(path, []byte(text), 0o644)
			_, err := LoadConfig(path, parsers.Default())
			var ce *ConfigError
			if !errors.As(err, &ce) {
				t.Fatalf("err %v, want a *ConfigError", err)
			}
			for _, p := range ce.Problems {
				if p.Key == c.key && strings.Contains(p.Message, c.says) && p.Line > 0 {
					return
				}
			}
			t.Errorf("want %s saying %q with its line; got %v", c.key, c.says, err)
		})
	}
}
