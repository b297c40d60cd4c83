package agent

import (
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"time"

	"benchtender/record"
)

// Halts says, in words for the morning's reader, what stops handoffs now:
// an all-stop, an edited config that does not validate, trouble with the
// state folder's disk. It reads the journal's state and the audit trail
// (the last word on each kind of halt wins).
func Halts(cfg Config, st *record.State) []string {
	var out []string
	if st.AllStop != "" {
		// The reason says what was true when it was recorded ("... exists");
		// say what is true now.
		now := "the all-stop file is still there"
		if _, err := os.Stat(allStopPath(cfg)); errors.Is(err, os.ErrNotExist) {
			now = "the all-stop file has since been removed, but handoffs stay halted until a person resumes them"
		}
		out = append(out, fmt.Sprintf("ALL-STOP: every handoff halted since: %s; %s (clear with benchtender resume)", st.AllStop, now))
	}
	trail, err := record.ReadAudit(record.AuditPath(cfg.Campaign.StateDir))
	if err != nil {
		return append(out, fmt.Sprintf("audit trail unreadable: %v", err))
	}
	last := func(halt, clear string) *record.AuditEntry {
		for i := len(trail) - 1; i >= 0; i-- {
			switch trail[i].Action {
			case halt:
				return &trail[i]
			case clear:
				return nil
			}
		}
		return nil
	}
	if e := last("config refused", "limits edited"); e != nil {
		out = append(out, fmt.Sprintf("HANDOFFS HALTED since %s: the edited config does not validate: %s", e.Time, e.Reason))
	}
	if e := last("storage trouble", "storage recovered"); e != nil {
		out = append(out, fmt.Sprintf("HANDOFFS HALTED since %s: the state folder's disk: %s", e.Time, e.Reason))
	}
	return out
}

// WatchStatus is an export folder's state as the running agent last saw
// it (state/watch.json holds one per instrument).
type WatchStatus struct {
	Instrument string    `json:"instrument,omitempty"`
	Dir        string    `json:"dir"`
	OK         bool      `json:"ok"`
	Problem    string    `json:"problem,omitempty"`
	Polling    string    `json:"polling,omitempty"` // why file events are off
	Since      time.Time `json:"since"`
}

func watchStatusPath(stateDir string) string { return filepath.Join(stateDir, "watch.json") }

func writeWatchStatus(stateDir string, byDir map[string]WatchStatus) error {
	list := make([]WatchStatus, 0, len(byDir))
	for _, ws := range byDir {
		list = append(list, ws)
	}
	sort.Slice(list, func(i, j int) bool { return list[i].Dir < list[j].Dir })
	b, err := json.MarshalIndent(list, "", "  ")
	if err != nil {
		return err
	}
	return record.WriteFileAtomic(stateDir, "watch.json", b, 0o644)
}

// ReadWatchStatus returns the watch status the agent last wrote, one per
// export folder.
func ReadWatchStatus(cfg Config) ([]WatchStatus, error) {
	var list []WatchStatus
	b, err := os.ReadFile(watchStatusPath(cfg.Campaign.StateDir))
	if err != nil {
		return nil, err
	}
	return list, json.Unmarshal(b, &list)
}

// PlanTrouble is the planner's failure as the running agent last saw it:
// state/planning.json exists only while proposals fail, and the agent
// removes it when one succeeds or when it starts.
type PlanTrouble struct {
	Problem  string    `json:"problem"`
	Since    time.Time `json:"since"`
	Attempts int       `json:"attempts"`
	Next     time.Time `json:"next"`
}

const planTroubleFile = "planning.json"

func planTroublePath(stateDir string) string { return filepath.Join(stateDir, planTroubleFile) }

func writePlanTrouble(stateDir string, pt PlanTrouble) error {
	b, err := json.MarshalIndent(pt, "", "  ")
	if err != nil {
		return err
	}
	return record.WriteFileAtomic(stateDir, planTroubleFile, b, 0o644)
}

func clearPlanTrouble(stateDir string) error {
	if err := os.Remove(planTroublePath(stateDir)); err != nil && !errors.Is(err, os.ErrNotExist) {
		return err
	}
	return nil
}

// Notices says what is wrong without halting handoffs: proposals failing
// (no setpoint is written meanwhile), an export folder lost, file events
// off (only the scan finds files).
func Notices(cfg Config) []string {
	var out []string
	if b, err := os.ReadFile(planTroublePath(cfg.Campaign.StateDir)); err == nil {
		var pt PlanTrouble
		if json.Unmarshal(b, &pt) == nil {
			tries := "1 attempt"
			if pt.Attempts != 1 {
				tries = fmt.Sprintf("%d attempts", pt.Attempts)
			}
			out = append(out, fmt.Sprintf("PROPOSALS FAILING since %s (%s): %s; no setpoint is written until the planner succeeds (next attempt %s)",
				pt.Since.Format(time.RFC3339), tries, pt.Problem, pt.Next.Format(time.RFC3339)))
		}
	}
	list, err := ReadWatchStatus(cfg)
	if err != nil {
		return out
	}
	for _, ws := range list {
		if !ws.OK {
			out = append(out, fmt.Sprintf("export folder %s lost since %s: %s (looking again with back-off); handoffs to %s are held until it can be read", ws.Dir, ws.Since.Format(time.RFC3339), ws.Problem, instrumentLabel(ws.Instrument)))
		}
		if ws.Polling != "" {
			out = append(out, fmt.Sprintf("file events off for %s since %s: %s; the scan alone finds files", ws.Dir, ws.Since.Format(time.RFC3339), ws.Polling))
		}
	}
	return out
}

// SetAsideNote says, in a line for status and the console, which runs'
// basins the planner has set aside after progress stalled there, why, and
// how many runs the search outside them has made, or when regions were
// last released; empty when none ever was.
func SetAsideNote(st *record.State) string {
	var parts []string
	released := ""
	from := 0
	for i, a := range st.Asides {
		if a.Release {
			parts, released, from = nil, a.Reason, a.From
			continue
		}
		parts = append(parts, fmt.Sprintf("%s (%s)", orUnknown(st.AsideRuns[i]), a.Reason))
		from = a.From
	}
	done := max(0, len(st.Trials())-from)
	switch {
	case len(parts) > 0:
		return fmt.Sprintf("set aside after no progress: the basins of %s; the search outside them has %d completed runs", strings.Join(parts, "; "), done)
	case released != "":
		return fmt.Sprintf("regions set aside earlier were released (%s); %d runs since", released, done)
	}
	return ""
}

func orUnknown(s string) string {
	if s == "" {
		return "an unknown run"
	}
	return s
}

func instrumentLabel(name string) string {
	if name == "" {
		return "its instrument"
	}
	return "instrument " + name
}
