package console

import (
	"bytes"
	"fmt"
	"math"
	"net/http/httptest"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"benchtender/agent"
	"benchtender/campaign"
	"benchtender/record"
)

// frontText is the console test campaign trading purity against energy.
var frontText = strings.Replace(strings.Replace(campaignText, `[campaign.response]
name = "purity"
unit = "%"
goal = "maximise"`, `[[campaign.responses]]
name = "purity"
unit = "%"
goal = "maximise"
worst = 50.0

[[campaign.responses]]
name = "energy"
unit = "kJ"
goal = "minimise"`, 1), "max_runs = 4", "max_runs = 20", 1) + `
[formats.bench_csv.values.energy]
column = "Energy"
unit = "kJ"
`

// A campaign with two responses shows its Pareto front, worked by hand
// from a journal of eight runs, in the view and the report: the members
// best-first in purity with their values and setpoints, the reference
// point, the hypervolume, a figure of purity against energy and one of
// the hypervolume over runs; and no single best run.
func TestFrontInViewAndReport(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "c.toml")
	if err := os.WriteFile(path, []byte(frontText), 0o644); err != nil {
		t.Fatal(err)
	}
	cfg, err := agent.LoadConfig(path, nil)
	if err != nil {
		t.Fatal(err)
	}
	if err := os.MkdirAll(cfg.Campaign.StateDir, 0o755); err != nil {
		t.Fatal(err)
	}
	j, _, _, err := record.OpenJournal(filepath.Join(cfg.Campaign.StateDir, "journal.log"))
	if err != nil {
		t.Fatal(err)
	}
	// purity, energy: R3 (90, 240), R5 (80, 180) and R7 (70, 150) are the
	// front; the others are each beaten by one of them.
	runs := [][2]float64{{60, 200}, {75, 250}, {90, 240}, {65, 190}, {80, 180}, {85, 260}, {70, 150}, {55, 170}}
	at := time.Date(2026, 12, 5, 8, 0, 0, 0, time.UTC)
	for i, v := range runs {
		id := fmt.Sprintf("R%04d", i+1)
		pt := campaign.Point{20 + 7*float64(i), 1 + 0.5*float64(i)}
		for _, e := range []record.Entry{
			{Kind: record.KindProposal, Run: id, Point: pt, Method: "initial design"},
			{Kind: record.KindHandoff, Run: id, Point: pt, ActionID: id + "-1"},
			{Kind: record.KindHandoffOK, Run: id, ActionID: id + "-1"},
			{Kind: record.KindIngest, Run: id, File: id + ".csv", SHA256: id, Value: v[0],
				Values: map[string]record.Reading{"purity": {Value: v[0], Unit: "%"}, "energy": {Value: v[1], Unit: "kJ"}}},
		} {
			e.Time = at
			if _, err := j.Append(e); err != nil {
				t.Fatal(err)
			}
		}
	}
	j.Close()
	v, err := Build(t.Context(), cfg, BuildOptions{Model: true})
	if err != nil {
		t.Fatal(err)
	}
	f := v.Front
	if f == nil || v.Best != nil {
		t.Fatalf("front %v, best %v: want a front and no single best", f, v.Best)
	}
	var ids []string
	for _, m := range f.Members {
		ids = append(ids, m.ID)
	}
	if strings.Join(ids, " ") != "R0003 R0005 R0007" {
		t.Errorf("members %v, want R0003 R0005 R0007 (best purity first)", ids)
	}
	if m := f.Members[1]; strings.Join(m.Values, ", ") != "80 %, 180 kJ" || m.Setpoint[0].Text == "" || math.IsNaN(m.Sure) {
		t.Errorf("R0005: %+v", m)
	}
	// Reference: purity 50 % as given; energy the worst seen, 260 kJ, plus
	// a tenth of the range 150-260: 271 kJ. Hypervolume by hand, in
	// (purity above 50) × (energy below 271): R3 40 × 31, R5 adds
	// 30 × 60, R7 adds 20 × 30: 1240 + 1800 + 600 = 3640.
	if f.Reference != "purity 50 %, energy 271 kJ" || math.Abs(f.Hypervolume-3640) > 1e-9 {
		t.Errorf("reference %q, hypervolume %v; want purity 50 %%, energy 271 kJ and 3640", f.Reference, f.Hypervolume)
	}
	if v.Figure("front-purity-energy") == nil || v.Figure("hypervolume") == nil {
		t.Errorf("figures %v", names(v))
	}
	var out bytes.Buffer
	if err := Report(&out, v); err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{"Pareto front", "R0005", "180 kJ", "3 of 8 completed runs are on the front", "purity 50 %, energy 271 kJ"} {
		if !strings.Contains(out.String(), want) {
			t.Errorf("the report has no %q", want)
		}
	}
	// The console's overview and model pages show it too (the second
	// from the cached view: it once lost the front).
	cfg.Console.Listen = "127.0.0.1:0"
	srv, err := New(cfg, Options{ConfigPath: path})
	if err != nil {
		t.Fatal(err)
	}
	web := httptest.NewServer(srv.Handler())
	defer web.Close()
	for _, page := range []string{"/", "/model"} {
		code, html, _ := get(t, web.Client(), web.URL+page)
		if code != 200 || !strings.Contains(html, "Pareto front") || !strings.Contains(html, "R0007") {
			t.Errorf("%s: status %d, front table shown: %v", page, code, strings.Contains(html, "R0007"))
		}
	}
}

func names(v *View) []string {
	var out []string
	for _, f := range v.Figures {
		out = append(out, f.Name)
	}
	return out
}

// With three responses the front is shown as a panel for each pair (three)
// besides the hypervolume over runs, each panel ringing the runs no run
// beats in its pair.
func TestFrontPanelsForThreeResponses(t *testing.T) {
	cc := campaign.Config{Name: "three", StateDir: t.TempDir(), Seed: 1, MaxRuns: 20,
		Factors:   campaign.Space{{Name: "a", Min: 0, Max: 1}, {Name: "b", Min: 0, Max: 1}},
		Responses: []campaign.Response{{Name: "y1", Goal: campaign.Minimise}, {Name: "y2", Goal: campaign.Minimise}, {Name: "y3", Goal: campaign.Maximise}}}
	cc.Normalise()
	cfg := agent.DefaultConfig()
	cfg.Campaign = cc
	var es []record.Entry
	for i := range 6 {
		id := fmt.Sprintf("R%04d", i+1)
		a, b := float64(i)/5, float64((i*3)%6)/5
		es = append(es,
			record.Entry{Kind: record.KindProposal, Run: id, Point: campaign.Point{a, b}},
			record.Entry{Kind: record.KindHandoff, Run: id, Point: campaign.Point{a, b}, ActionID: id},
			record.Entry{Kind: record.KindHandoffOK, Run: id, ActionID: id},
			record.Entry{Kind: record.KindIngest, Run: id, SHA256: id, Value: a, Values: map[string]record.Reading{"y1": {Value: a}, "y2": {Value: 1 - a + b}, "y3": {Value: b}}})
	}
	f, figs, err := SummariseFront(t.Context(), cfg, record.Replay(es))
	if err != nil {
		t.Fatal(err)
	}
	var got []string
	for _, fig := range figs {
		got = append(got, fig.Name)
	}
	if strings.Join(got, " ") != "front-y1-y2 front-y1-y3 front-y2-y3 hypervolume" || len(f.Members) == 0 {
		t.Errorf("figures %v, members %d", got, len(f.Members))
	}
}
