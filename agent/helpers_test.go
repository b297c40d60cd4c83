package agent

import (
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"benchtender/record"
)

// testCampaign is a folder with a config, an export folder and a handoff
// folder, as an instrument PC would have them.
type testCampaign struct {
	dir, cfgPath string
	cfg          Config
}

// campaignHead is a two-factor campaign (temp, flow) maximising purity,
// without its instruments.
const campaignHead = `
[[campaign.factor]]
name = "temp"
unit = "degC"
min = 20.0
max = 80.0

[[campaign.factor]]
name = "flow"
unit = "mL/min"
min = 1.0
max = 5.0

[campaign.response]
name = "purity"
unit = "%"
goal = "maximise"
`

// baseConfig is the campaign read from semicolon files with a preamble
// and decimal commas; extra is appended (TOML tables).
const baseConfig = `
[campaign]
name = "t"
state_dir = "state"
seed = 7
max_runs = %MAX%
initial_runs = 3
` + campaignHead + `
[planner]
candidates = 300
refine = 2

[instrument]
name = "bench"
handoff_dir = "handoff"
handoff_format = "csv"
format = "bench_csv"

[instrument.watch]
dir = "exports"
pattern = "*.csv"
settle = "100ms"
rescan = "200ms"

[formats.bench_csv]
delimiter = ";"
decimal = ","
skip_lines = 2
run_id_source = "filename"
run_id_pattern = "(R[0-9]+)"

[formats.bench_csv.values.purity]
column = "Purity"
unit = "%"

[log]
file = ""

[audit]
key_file = "audit.key"
`

const defaultLimits = `
[safety.limits.temp]
hard_min = 20.0
hard_max = 80.0
review_max = 75.0

[safety.limits.flow]
hard_min = 1.0
hard_max = 5.0
`

// passLimits are hard limits at the factor bounds and no review limits:
// every proposal passes the gate.
const passLimits = `
[safety.limits.temp]
hard_min = 20.0
hard_max = 80.0

[safety.limits.flow]
hard_min = 1.0
hard_max = 5.0
`

func newTestCampaign(t *testing.T, maxRuns string, limits string) *testCampaign {
	t.Helper()
	return campaignOf(t, strings.Replace(baseConfig, "%MAX%", maxRuns, 1)+limits)
}

// campaignOf makes the folders and writes and loads the config text.
func campaignOf(t *testing.T, text string) *testCampaign {
	t.Helper()
	dir := t.TempDir()
	for _, d := range []string{"exports", "handoff"} {
		if err := os.Mkdir(filepath.Join(dir, d), 0o755); err != nil {
			t.Fatal(err)
		}
	}
	path := filepath.Join(dir, "c.toml")
	if err := os.WriteFile(path, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	cfg, err := LoadConfig(path, nil)
	if err != nil {
		t.Fatal(err)
	}
	return &testCampaign{dir: dir, cfgPath: path, cfg: cfg}
}

// positions gives the campaign's one instrument n positions: a batch of n
// proposals and a capacity of n setpoint files at once.
func (tc *testCampaign) positions(n int) {
	tc.cfg.Planner.Batch = n
	tc.cfg.Instrument.Capacity = n
	tc.cfg.Instruments[0].Capacity = n
}

// start runs an agent on the campaign with default options and returns a
// channel of its journal entries and a stop function that waits for it.
func (tc *testCampaign) start(t *testing.T) (<-chan record.Entry, func()) {
	t.Helper()
	return tc.startWith(t, Options{})
}

// waitFor reads entries until one satisfies ok, failing after 20 s.
func waitFor(t *testing.T, events <-chan record.Entry, what string, ok func(record.Entry) bool) record.Entry {
	t.Helper()
	deadline := time.After(20 * time.Second)
	for {
		select {
		case e := <-events:
			if ok(e) {
				return e
			}
		case <-deadline:
			t.Fatalf("timed out waiting for %s", what)
		}
	}
}

func kind(k string) func(record.Entry) bool { return func(e record.Entry) bool { return e.Kind == k } }

// writeResult writes a result file the way the test instrument does.
func (tc *testCampaign) writeResult(t *testing.T, name, body string) string {
	t.Helper()
	path := filepath.Join(tc.dir, "exports", name)
	if err := os.WriteFile(path, []byte(body), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

func resultFile(purity string) string {
	return "Instrument: test bench\r\nDate: 01.12.2026\r\nSample;Purity;Unit\r\nx;" + purity + ";%\r\n"
}

func readJournalT(t *testing.T, tc *testCampaign) []record.Entry {
	t.Helper()
	es, err := record.ReadJournal(journalPath(tc.cfg.Campaign.StateDir))
	if err != nil {
		t.Fatal(err)
	}
	return es
}

// noneFor reads entries for d and fails on the first that bad accepts:
// a window in which something that must not happen would show.
func noneFor(t *testing.T, events <-chan record.Entry, d time.Duration, what string, bad func(record.Entry) bool) {
	t.Helper()
	quiet := time.After(d)
	for {
		select {
		case e := <-events:
			if bad(e) {
				t.Fatalf("%s: %s %s", what, e.Kind, e.Run)
			}
		case <-quiet:
			return
		}
	}
}

// cutRecordAfter cuts the journal and the audit trail of the state folder
// sd just after journal entry last (the entries es are the journal's), as
// a crash right after that entry was journalled and audited leaves them.
func cutRecordAfter(t *testing.T, sd string, es []record.Entry, last int64) {
	t.Helper()
	var jlen int
	for _, e := range es {
		if e.Seq > last {
			break
		}
		line, _ := record.EncodeEntry(e)
		jlen += len(line)
	}
	if err := os.Truncate(journalPath(sd), int64(jlen)); err != nil {
		t.Fatal(err)
	}
	trail, _ := os.ReadFile(record.AuditPath(sd))
	var alen int
	for _, line := range strings.SplitAfter(string(trail), "\n") {
		alen += len(line)
		var ae record.AuditEntry
		json.Unmarshal([]byte(line), &ae)
		if record.DetailSeq(ae) == last {
			break
		}
	}
	if err := os.Truncate(record.AuditPath(sd), int64(alen)); err != nil {
		t.Fatal(err)
	}
}
