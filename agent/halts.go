package agent

import "fmt"

// Halts says, in words for the morning's reader, what stops handoffs now:
// an all-stop, an edited config that does not validate, trouble with the
// state folder's disk. It reads the journal's state and the audit trail
// (the last word on each kind of halt wins).
func Halts(cfg Config, st *State) []string {
	var out []string
	if st.AllStop != "" {
		out = append(out, fmt.Sprintf("ALL-STOP: every handoff halted: %s (clear with benchtender resume)", st.AllStop))
	}
	trail, err := ReadAudit(auditPath(cfg.Campaign.StateDir))
	if err != nil {
		return append(out, fmt.Sprintf("audit trail unreadable: %v", err))
	}
	last := func(halt, clear string) *AuditEntry {
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
