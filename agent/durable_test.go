package agent

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"benchtender/campaign"
)

func TestWriteFileAtomicLeavesNoTemp(t *testing.T) {
	dir := t.TempDir()
	if err := writeFileAtomic(dir, "R0001.csv", []byte("a"), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := writeFileAtomic(dir, "R0001.csv", []byte("b"), 0o644); err != nil {
		t.Fatal(err)
	}
	names, _ := os.ReadDir(dir)
	if len(names) != 1 || names[0].Name() != "R0001.csv" {
		t.Fatalf("folder holds %v", names)
	}
	if got, _ := os.ReadFile(filepath.Join(dir, "R0001.csv")); string(got) != "b" {
		t.Errorf("content %q", got)
	}
}

func TestSweepTempRemovesOnlyOurTempFiles(t *testing.T) {
	dir := t.TempDir()
	for _, n := range []string{".benchtender-R0001.csv.123.tmp", "R0002.csv", ".other.tmp", ".benchtender-notes.txt"} {
		if err := os.WriteFile(filepath.Join(dir, n), []byte("run,action\nR0001,R0001-9\n"), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	removed, err := sweepTemp(dir)
	if err != nil || len(removed) != 1 || removed[0].name != ".benchtender-R0001.csv.123.tmp" || removed[0].head != "run,action\nR0001,R0001-9\n" {
		t.Fatalf("removed %v, %v", removed, err)
	}
	left, _ := os.ReadDir(dir)
	if len(left) != 3 {
		t.Errorf("left %v", left)
	}
}

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
