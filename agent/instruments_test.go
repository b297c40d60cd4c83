package agent

import (
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"benchtender/record"
)

// twoInstruments is a campaign run on two instruments, each with its own
// export and handoff folders; "b" writes no run id in its files.
const twoInstruments = `
[campaign]
name = "pair"
state_dir = "state"
seed = 3
max_runs = 6
initial_runs = 3

` + campaignHead + `
[[instruments]]
name = "a"
handoff_dir = "handoff_a"
format = "named"
look_every = "50ms"
[instruments.watch]
dir = "exports_a"
pattern = "*.csv"
settle = "100ms"
rescan = "200ms"

[[instruments]]
name = "b"
handoff_dir = "handoff_b"
format = "anonymous"
[instruments.watch]
dir = "exports_b"
pattern = "*.txt"
settle = "100ms"
rescan = "200ms"

[formats.named]
run_id_pattern = "(R[0-9]+)"
[formats.named.values.purity]
column = "purity"

[formats.anonymous]
run_id_source = "oldest_handoff"
[formats.anonymous.values.purity]
column = "purity"
` + passLimits + `
[log]
file = ""
`

func newTwoInstrumentCampaign(t *testing.T, text string) (*testCampaign, error) {
	t.Helper()
	dir := t.TempDir()
	for _, d := range []string{"exports_a", "exports_b", "handoff_a", "handoff_b"} {
		os.Mkdir(filepath.Join(dir, d), 0o755)
	}
	path := filepath.Join(dir, "c.toml")
	os.WriteFile(path, []byte(text), 0o644)
	cfg, err := LoadConfig(path, nil)
	return &testCampaign{dir: dir, cfgPath: path, cfg: cfg}, err
}

// Two instruments run one campaign: each setpoint goes to the instrument
// with the fewest runs in flight, so both are busy at once; each one's
// results come from its own folder, in its own format, and a result
// without a run id answers the oldest run on that instrument alone.
func TestTwoInstrumentsShareACampaign(t *testing.T) {
	tc, err := newTwoInstrumentCampaign(t, twoInstruments)
	if err != nil {
		t.Fatal(err)
	}
	events, stop := tc.startWith(t, Options{Proposer: fixedAt})
	defer stop()
	on := map[string][]string{}
	inFlight := map[string]string{}
	answered := 0
	for answered < 6 {
		e := waitFor(t, events, "a handoff or an ingest", func(e record.Entry) bool { return e.Kind == record.KindHandoff || e.Kind == record.KindIngest })
		switch e.Kind {
		case record.KindHandoff:
			if prev, busy := inFlight[e.Instrument]; busy {
				t.Fatalf("%s handed to %s while %s is still in flight there", e.Run, e.Instrument, prev)
			}
			if filepath.Base(filepath.Dir(e.File)) != "handoff_"+e.Instrument {
				t.Fatalf("%s for instrument %s written to %s", e.Run, e.Instrument, e.File)
			}
			inFlight[e.Instrument] = e.Run
			on[e.Instrument] = append(on[e.Instrument], e.Run)
			// The instrument answers.
			if e.Instrument == "a" {
				tc.writeFile(t, "exports_a", "res_"+e.Run+".csv", "run,purity\n"+e.Run+",80.5\n")
			} else {
				// Its files differ only by the value (identical content
				// would be a duplicate).
				tc.writeFile(t, "exports_b", "result_"+e.Run[1:]+".txt", fmt.Sprintf("purity\n%d.25\n", 69+len(on["b"])))
			}
		case record.KindIngest:
			inst := "a"
			if strings.Contains(e.File, "exports_b") {
				inst = "b"
			}
			if inFlight[inst] != e.Run {
				t.Fatalf("a result from %s answered %s; %s is in flight there", inst, e.Run, inFlight[inst])
			}
			delete(inFlight, inst)
			answered++
		}
	}
	stop()
	if len(on["a"]) < 2 || len(on["b"]) < 2 {
		t.Errorf("runs by instrument: %v", on)
	}
	st := record.Replay(readJournalT(t, tc))
	for _, r := range st.TrialRuns() {
		onB := contains(on["b"], r.ID)
		if (onB && (r.Value < 70 || r.Value > 79)) || (!onB && r.Value != 80.5) || (r.Instrument == "b") != onB {
			t.Errorf("%s on %s = %v", r.ID, r.Instrument, r.Value)
		}
	}
}

func contains(s []string, v string) bool {
	for _, x := range s {
		if x == v {
			return true
		}
	}
	return false
}

func (tc *testCampaign) writeFile(t *testing.T, sub, name, body string) {
	t.Helper()
	if err := os.WriteFile(filepath.Join(tc.dir, sub, name), []byte(body), 0o644); err != nil {
		t.Fatal(err)
	}
}

// The config refuses instruments that share a name or a folder, and a
// file with both [instrument] and [[instruments]].
func TestInstrumentsConfigProblems(t *testing.T) {
	for name, c := range map[string]struct {
		edit func(string) string
		want string
	}{
		"same name":   {func(s string) string { return strings.Replace(s, `name = "b"`, `name = "a"`, 1) }, `instruments[1].name`},
		"same export": {func(s string) string { return strings.Replace(s, `dir = "exports_b"`, `dir = "exports_a"`, 1) }, `instruments[1].watch.dir`},
		"both kinds": {func(s string) string {
			return s + "\n[instrument]\nname = \"c\"\nhandoff_dir = \"h\"\nformat = \"named\"\n[instrument.watch]\ndir = \"e\"\n"
		}, "not both"},
	} {
		t.Run(name, func(t *testing.T) {
			_, err := newTwoInstrumentCampaign(t, c.edit(twoInstruments))
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Errorf("error %v, want it to mention %q", err, c.want)
			}
		})
	}
}
