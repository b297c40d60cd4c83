package export

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"os"
	"os/exec"
	"path/filepath"
	"reflect"
	"strings"
	"testing"
	"time"

	"benchtender/agent"
	"benchtender/campaign"
	"benchtender/record"
	"benchtender/safety"
)

// journal is a small campaign as the journal records it: a run done on
// its second result file, a failed run, a run approved by two people with
// edited values, a rejected one. The texts carry what breaks naive CSV:
// commas, quotes, a line break, a leading '=', non-ASCII units.
func journal(t *testing.T) (agent.Config, []record.Entry) {
	t.Helper()
	cfg := agent.DefaultConfig()
	cfg.Campaign.Name = "export_test"
	cfg.Campaign.Factors = campaign.Space{
		{Name: "temp", Unit: "°C", Min: 20, Max: 80},
		{Name: "solvent", Kind: campaign.Categorical, Categories: []string{"water", "ethanol"}, Min: 0, Max: 1},
	}
	cfg.Campaign.Response = campaign.Response{Name: "yield", Unit: "%", Goal: "maximise"}
	t0 := time.Date(2026, 12, 4, 9, 0, 0, 0, time.UTC)
	at := func(m int) time.Time { return t0.Add(time.Duration(m) * time.Minute) }
	pass := &safety.Decision{Verdict: safety.Pass}
	held := &safety.Decision{Verdict: safety.Hold, Reasons: []safety.Reason{{Message: "temp 78 °C is above review_max 70 °C"}}}
	return cfg, []record.Entry{
		{Seq: 1, Time: at(0), Kind: record.KindProposal, Run: "R0001", Point: campaign.Point{41.5, 1}, Method: "initial design", Decision: pass},
		{Seq: 2, Time: at(1), Kind: record.KindHandoff, Run: "R0001", File: "handoff/R0001.csv", Point: campaign.Point{41.5, 1}},
		{Seq: 2, Time: at(1), Kind: record.KindHandoffOK, Run: "R0001", File: "handoff/R0001.csv"},
		{Seq: 3, Time: at(30), Kind: record.KindIngest, Run: "R0001", File: `exports/R0001, "first".csv`, SHA256: "aa11", Value: 61.2,
			Values: map[string]record.Reading{"yield": {Value: 61.2, Unit: "%"}, "purity": {Value: 97.5, Unit: "%"}, "viscosity": {Value: 1.2e-3, Unit: "Pa·s"}}},
		{Seq: 4, Time: at(40), Kind: record.KindIngest, Run: "R0001", File: "exports/R0001_rerun.csv", SHA256: "bb22", Value: 62.0, Revision: 2,
			Values: map[string]record.Reading{"yield": {Value: 62.0, Unit: "%"}, "purity": {Value: 97.9, Unit: "%"}}},
		{Seq: 5, Time: at(41), Kind: record.KindProposal, Run: "R0002", Point: campaign.Point{30, 0}, Method: "expected improvement", Decision: pass},
		{Seq: 6, Time: at(42), Kind: record.KindHandoff, Run: "R0002", File: "handoff/R0002.csv", Point: campaign.Point{30, 0}},
		{Seq: 6, Time: at(42), Kind: record.KindHandoffOK, Run: "R0002", File: "handoff/R0002.csv"},
		{Seq: 7, Time: at(70), Kind: record.KindIngest, Run: "R0002", File: "exports/R0002.csv", SHA256: "cc33", Failed: "=SUM(A1) flagged\nby the instrument"},
		{Seq: 8, Time: at(71), Kind: record.KindProposal, Run: "R0003", Point: campaign.Point{78, 1}, Method: "expected improvement", Decision: held},
		{Seq: 9, Time: at(80), Kind: record.KindSignoff, Run: "R0003", Action: record.ActionApprove, Partial: true, By: "ada", Name: "Ada Tech", Reason: "cooler, please", Point: campaign.Point{72, 1}},
		{Seq: 10, Time: at(85), Kind: record.KindSignoff, Run: "R0003", Action: record.ActionApprove, By: "bo", Name: "Bo Kim", Reason: "agree", Point: campaign.Point{72, 1}},
		{Seq: 11, Time: at(86), Kind: record.KindHandoff, Run: "R0003", File: "handoff/R0003.csv", Point: campaign.Point{72, 1}},
		{Seq: 11, Time: at(86), Kind: record.KindHandoffOK, Run: "R0003", File: "handoff/R0003.csv"},
		{Seq: 12, Time: at(87), Kind: record.KindProposal, Run: "R0004", Point: campaign.Point{79, 0}, Method: "expected improvement", Decision: held},
		{Seq: 13, Time: at(90), Kind: record.KindSignoff, Run: "R0004", Action: record.ActionReject, By: "ada", Name: "Ada Tech", Reason: `too hot, "no"`},
	}
}

// The CSV reads back with encoding/csv to exactly the document: one row
// per run, units in the header, the latest revision's values, the earlier
// file named, failures and rejections with their reasons, both
// signatures, and formula-looking text defused.
func TestCSVRoundTrip(t *testing.T) {
	cfg, entries := journal(t)
	doc := Build(cfg, entries, time.Date(2026, 12, 5, 8, 0, 0, 0, time.UTC), "benchtender test")
	var b bytes.Buffer
	if err := doc.WriteCSV(&b); err != nil {
		t.Fatal(err)
	}
	if !bytes.Contains(b.Bytes(), []byte("\r\n")) || bytes.HasPrefix(b.Bytes(), []byte("\xef\xbb\xbf")) {
		t.Error("not CRLF-terminated UTF-8 without a byte-order mark (RFC 4180 section 2)")
	}
	recs, err := csv.NewReader(bytes.NewReader(b.Bytes())).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if len(recs) != 1+4 {
		t.Fatalf("%d records, want a header and 4 runs", len(recs))
	}
	col := map[string]int{}
	for i, h := range recs[0] {
		col[h] = i
	}
	for _, h := range []string{"temp [°C]", "solvent", "yield [%]", "purity [%]", "viscosity [Pa·s]", "result sha256", "sign-offs"} {
		if _, ok := col[h]; !ok {
			t.Fatalf("header %q lacks %q", recs[0], h)
		}
	}
	if col["yield [%]"] > col["purity [%]"] {
		t.Error("the response is not the first value column")
	}
	get := func(run int, h string) string { return recs[run][col[h]] }
	checks := []struct {
		run        int
		head, want string
	}{
		{1, "yield [%]", "62"}, {1, "purity [%]", "97.9"}, {1, "viscosity [Pa·s]", ""}, // the latest revision counts
		{1, "revisions", "2"}, {1, "result sha256", "bb22"}, {1, "temp [°C]", "41.5"}, {1, "solvent", "ethanol"},
		{1, "earlier files", `exports/R0001, "first".csv (sha256 aa11, revision 1)`},
		{2, "status", "failed"}, {2, "reason", "'=SUM(A1) flagged\nby the instrument"}, {2, "yield [%]", ""},
		{3, "status", "handed off"}, {4, "status", "rejected"}, {4, "reason", `rejected by ada: too hot, "no"`},
		{1, "proposed (UTC)", "2026-12-04T09:00:00Z"}, {1, "handed off (UTC)", "2026-12-04T09:01:00Z"},
	}
	for _, c := range checks {
		if got := get(c.run, c.head); got != c.want {
			t.Errorf("run %d %s = %q, want %q", c.run, c.head, got, c.want)
		}
	}
	s := get(3, "sign-offs")
	for _, want := range []string{"first of two approvals by ada (Ada Tech) at 2026-12-04T10:20:00Z: cooler, please [edited values temp=72, solvent=ethanol]", "approval by bo (Bo Kim)"} {
		if !strings.Contains(s, want) {
			t.Errorf("sign-offs %q lack %q", s, want)
		}
	}
}

// Python's csv module (an implementation outside this project) reads the
// file to the same cells as encoding/csv; skipped where Python is absent.
func TestCSVReadByPython(t *testing.T) {
	py, err := exec.LookPath("python3")
	if err != nil {
		t.Skip("python3 not installed: the cross-check with its csv module is skipped")
	}
	cfg, entries := journal(t)
	doc := Build(cfg, entries, time.Now(), "benchtender test")
	path := filepath.Join(t.TempDir(), "runs.csv")
	var b bytes.Buffer
	if err := doc.WriteCSV(&b); err != nil {
		t.Fatal(err)
	}
	os.WriteFile(path, b.Bytes(), 0o644)
	out, err := exec.Command(py, "-c", `import csv, json, sys
with open(sys.argv[1], newline="", encoding="utf-8") as f:
    print(json.dumps(list(csv.reader(f))))`, path).Output()
	if err != nil {
		t.Fatalf("python: %v", err)
	}
	var pyRecs [][]string
	if err := json.Unmarshal(out, &pyRecs); err != nil {
		t.Fatal(err)
	}
	goRecs, _ := csv.NewReader(bytes.NewReader(b.Bytes())).ReadAll()
	if !reflect.DeepEqual(pyRecs, goRecs) {
		t.Errorf("Python reads\n%q\nGo reads\n%q", pyRecs, goRecs)
	}
}

// JSON carries the same with numbers as numbers and times in RFC 3339.
func TestJSON(t *testing.T) {
	cfg, entries := journal(t)
	doc := Build(cfg, entries, time.Now(), "benchtender test")
	var b bytes.Buffer
	if err := doc.WriteJSON(&b); err != nil {
		t.Fatal(err)
	}
	var back Document
	if err := json.Unmarshal(b.Bytes(), &back); err != nil {
		t.Fatal(err)
	}
	if len(back.Runs) != 4 || back.Runs[0].Values["purity"] != 97.9 || back.Runs[0].Setpoint["solvent"] != "ethanol" || back.Runs[0].Setpoint["temp"] != 41.5 {
		t.Errorf("read back %+v", back.Runs[0])
	}
	if len(back.Runs[2].Signoffs) != 2 || back.Runs[2].Signoffs[0].Meaning != "first of two approvals" {
		t.Errorf("sign-offs %+v", back.Runs[2].Signoffs)
	}
	if back.Values[0].Name != "yield" || back.Values[0].Unit != "%" {
		t.Errorf("value columns %+v", back.Values)
	}
}
