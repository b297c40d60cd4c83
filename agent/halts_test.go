package agent

import (
	"fmt"
	"strings"
	"testing"

	"benchtender/campaign"
	"benchtender/planner"
	"benchtender/safety"
)

func TestSetAsideNote(t *testing.T) {
	pass := safety.Decision{Verdict: safety.Pass}
	var es []Entry
	for i := 1; i <= 6; i++ {
		run := fmt.Sprintf("R%04d", i)
		es = append(es, Entry{Kind: KindProposal, Run: run, Point: campaign.Point{float64(i), 2}, Method: "test", Decision: &pass},
			Entry{Kind: KindIngest, Run: run, File: run + ".csv", SHA256: run, Value: float64(i)})
	}
	st := Replay(es)
	d := planner.Diagnostics{Runs: 6, SetAside: []int{1, 3}, SearchFrom: 4}
	want := "set aside after no progress: the basins of R0002, R0004; the search outside them began with R0005"
	if got := SetAsideNote(st, d); got != want {
		t.Errorf("note %q, want %q", got, want)
	}
	d.SearchFrom = 6
	if got := SetAsideNote(st, d); !strings.HasSuffix(got, "began with the next run") {
		t.Errorf("a search whose first run is still to come: %q", got)
	}
	if got := SetAsideNote(st, planner.Diagnostics{Runs: 6}); got != "" {
		t.Errorf("nothing set aside: %q", got)
	}
	if got := SetAsideNote(st, planner.Diagnostics{Runs: 5, SetAside: []int{1}}); got != "" {
		t.Errorf("diagnostics of other runs: %q", got)
	}
}
