package agent

import (
	"fmt"
	"testing"

	"benchtender/campaign"
	"benchtender/planner"
	"benchtender/record"
	"benchtender/safety"
)

// Regions set aside are journalled once and replayed as they were: the
// state holds them in order with their centre runs, and the note names
// each with its reason and counts the new search's runs.
func TestSetAsideNote(t *testing.T) {
	pass := safety.Decision{Verdict: safety.Pass}
	var es []record.Entry
	for i := 1; i <= 6; i++ {
		run := fmt.Sprintf("R%04d", i)
		es = append(es, record.Entry{Kind: record.KindProposal, Run: run, Point: campaign.Point{float64(i), 2}, Method: "test", Decision: &pass},
			record.Entry{Kind: record.KindIngest, Run: run, File: run + ".csv", SHA256: run, Value: float64(i)})
		if i == 4 {
			es = append(es, record.Entry{Kind: record.KindSetAside, Run: "R0002", Aside: &planner.Aside{Run: 1, Centre: campaign.Point{2, 2}, Scales: []float64{0.1, 0.1}, From: 4, Reason: "15 runs without progress since run 2, the best of its search"}})
		}
	}
	st := record.Replay(es)
	if len(st.Asides) != 1 || st.Asides[0].From != 4 || st.AsideRuns[0] != "R0002" {
		t.Fatalf("replayed regions %+v, runs %v", st.Asides, st.AsideRuns)
	}
	want := "set aside after no progress: the basins of R0002 (15 runs without progress since run 2, the best of its search); the search outside them has 2 completed runs"
	if got := SetAsideNote(st); got != want {
		t.Errorf("note %q, want %q", got, want)
	}
	if got := SetAsideNote(record.Replay(es[:4])); got != "" {
		t.Errorf("nothing set aside: %q", got)
	}
	rel := append(append([]record.Entry(nil), es...), record.Entry{Kind: record.KindSetAside, Aside: &planner.Aside{Release: true, From: 5, Reason: "nothing better outside"}})
	if got := SetAsideNote(record.Replay(rel)); got != "regions set aside earlier were released (nothing better outside); 1 runs since" {
		t.Errorf("after a release: %q", got)
	}
}
