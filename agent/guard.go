package agent

import (
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"strings"
	"time"

	"benchtender/record"
	"benchtender/safety"
)

// checkAllStop halts every handoff while the all-stop file exists. Anyone
// may create it, without the agent's cooperation; only a person clears the
// stop (benchtender resume), which the journal records.
func (a *Agent) checkAllStop() error {
	path := allStopPath(a.cfg)
	data, err := os.ReadFile(path)
	switch {
	case err == nil && a.state.AllStop == "":
		why := strings.TrimSpace(string(data))
		if len(why) > 200 {
			why = why[:200]
		}
		if why == "" {
			why = "(no reason written in the file)"
		}
		reason := fmt.Sprintf("%s exists: %s", path, why)
		a.log.Error().Str("file", path).Msg("ALL-STOP: every handoff halted until a person clears it (benchtender resume)")
		return a.record(record.Entry{Kind: record.KindAllStop, Reason: reason, By: "all-stop file"})
	case err != nil && !errors.Is(err, os.ErrNotExist) && a.state.AllStop == "":
		// Cannot tell whether the file is there: fail closed.
		return a.record(record.Entry{Kind: record.KindAllStop, Reason: fmt.Sprintf("cannot read %s: %v", path, err), By: actorAgent})
	}
	return nil
}

// rateAllows reports whether another handoff fits under
// max_handoffs_per_hour. Handoffs of this process are counted by the
// monotonic clock; those before it started by their journal time.
func (a *Agent) rateAllows() bool {
	max := a.cfg.Safety.MaxHandoffsPerHour
	if max <= 0 {
		return true
	}
	now := a.opt.Now()
	n := 0
	for _, t := range a.state.HandoffTimes {
		if now.Sub(t) < time.Hour {
			n++
		}
	}
	if n < max {
		a.rateSaid = false
		return true
	}
	if !a.rateSaid {
		a.rateSaid = true
		a.log.Warn().Int("max_handoffs_per_hour", max).Msg("rate limit reached; the next setpoint waits")
	}
	return false
}

// expireHolds lets holds lapse that waited longer than hold_expiry, by
// this process's monotonic clock (a clock step or a change to daylight
// saving time neither shortens nor lengthens a hold).
func (a *Agent) expireHolds() error {
	limit := a.cfg.Safety.Holds()
	now := a.opt.Now()
	for _, r := range a.state.Held() {
		seen, ok := a.holdSeen[r.ID]
		if !ok {
			a.holdSeen[r.ID] = now
			continue
		}
		if now.Sub(seen) >= limit {
			a.log.Warn().Str("run", r.ID).Stringer("after", limit).Msg("held move lapsed unsigned")
			if err := a.record(record.Entry{Kind: record.KindExpire, Run: r.ID, Reason: fmt.Sprintf("held %v without sign-off", limit)}); err != nil {
				return err
			}
			delete(a.holdSeen, r.ID)
		}
	}
	return nil
}

// reloadConfig rereads an edited config file. An edit that does not
// validate stops every handoff and proposal until it is fixed (fail
// closed); a valid one applies its safety section at once. Approvals given
// under the old limits no longer count.
func (a *Agent) reloadConfig() error {
	if a.opt.ConfigPath == "" {
		return nil
	}
	fi, err := os.Stat(a.opt.ConfigPath)
	if err != nil {
		if a.cfgBroken == "" {
			a.cfgBroken = fmt.Sprintf("cannot read %s: %v", a.opt.ConfigPath, err)
			return a.auditNote("config refused", a.opt.ConfigPath, a.cfgBroken)
		}
		return nil
	}
	if fi.ModTime().Equal(a.cfgMod) {
		return nil
	}
	a.cfgMod = fi.ModTime()
	cfg, err := LoadConfig(a.opt.ConfigPath, a.opt.Registry)
	if err != nil {
		a.cfgBroken = strings.ReplaceAll(err.Error(), "\n", "; ")
		a.log.Error().Err(err).Msg("the edited config does not validate: no setpoint is written until it is fixed")
		return a.auditNote("config refused", a.opt.ConfigPath, a.cfgBroken)
	}
	was, wasCfg := a.gate.Version(), a.cfg.Safety
	a.cfgBroken = ""
	a.cfg.Safety = cfg.Safety
	a.gate = safety.NewGate(cfg.Safety, a.cfg.Campaign.Factors)
	a.log.Info().Str("limits_was", was).Str("limits", a.gate.Version()).Msg("config reloaded; the safety section applies now, other sections at the next start")
	what := "no limit changed"
	if ch := cfg.Safety.Changes(wasCfg, a.cfg.Campaign.Factors); len(ch) > 0 {
		what = strings.Join(ch, "; ")
	}
	return a.auditNote("limits edited", a.opt.ConfigPath, fmt.Sprintf("%s (limits version %s replaced %s)", what, a.gate.Version(), was))
}

// actorAgent is the agent's own identity in the audit trail.
const actorAgent = "benchtender"

// auditEntry writes the audit trail's entry for a journal entry.
// The audit entry carries the journal entry's own time, so that the two
// records agree to the nanosecond and a lost audit line can be put back
// exactly as it was.
func (a *Agent) auditEntry(e record.Entry) error { return a.auditEntryAt(e, e.Time) }

// auditEntryAt audits a journal entry with the time given (its own, when
// a crash delayed its audit entry).
func (a *Agent) auditEntryAt(e record.Entry, at time.Time) error {
	ae := record.AuditEntry{Actor: actorAgent, Subject: e.Run, Reason: e.Reason}
	switch e.Kind {
	case record.KindIngest, record.KindQuarantine, record.KindDuplicate:
		ae.Action, ae.Subject = e.Kind, e.File
		if e.Run != "" {
			ae.Subject = e.Run + " " + e.File
		}
		if e.Failed != "" {
			ae.Reason = "failed run: " + e.Failed
		}
	case record.KindProposal:
		ae.Action = "proposal; gate " + string(e.Decision.Verdict)
		ae.Reason = e.Decision.Summary()
	case record.KindSignoff:
		ae.Actor, ae.Name = e.By, e.Name
		ae.Action = e.Action
		ae.Meaning = e.SignoffMeaning()
		if e.Action == record.ActionApprove && len(e.Point) > 0 {
			ae.Action = "approve with edited values " + a.cfg.Campaign.Factors.Describe(e.Point)
		}
		if e.Replaces != "" {
			ae.Meaning += "; replaces the first approval by " + e.Replaces
		}
	case record.KindResume:
		ae.Actor, ae.Name, ae.Action, ae.Meaning, ae.Subject = e.By, e.Name, "all-stop cleared", "resumption", "all-stop"
	case record.KindCorrection:
		ae.Actor, ae.Name, ae.Action, ae.Meaning = e.By, e.Name, "correction", "correction of an earlier entry"
		ae.Subject, ae.Corrects = fmt.Sprintf("audit entry %d", e.Corrects), e.Corrects
	case record.KindAllStop:
		ae.Actor, ae.Action, ae.Subject = e.By, "all-stop", "every handoff"
	case record.KindRefit:
		ae.Actor, ae.Name, ae.Action, ae.Subject = e.By, e.Name, "model refit requested", "model"
	default:
		ae.Action = e.Kind
	}
	detail, _ := json.Marshal(e)
	ae.Detail = detail
	if a.audit == nil {
		return storageError{fmt.Errorf("agent: audit trail not open")}
	}
	return a.appendAudit(ae, at)
}

// appendAudit appends to the trail and copies its new head to the
// witness, if one is configured (a witness that cannot be written is
// logged: the trail itself is written).
func (a *Agent) appendAudit(ae record.AuditEntry, at time.Time) error {
	e, err := a.audit.Append(ae, at)
	if err != nil {
		a.log.Error().Err(err).Msg("audit trail write failed; nothing more happens until it can be recorded")
		return storageError{fmt.Errorf("agent: %w", err)}
	}
	if err := writeWitness(a.cfg, e.Seq, e.Hash, a.opt.Now()); err != nil {
		a.log.Error().Err(err).Str("dir", a.cfg.Audit.WitnessDir).Msg("cannot copy the audit head to the witness folder")
	}
	return nil
}

// auditNote writes an audit entry that has no journal entry.
func (a *Agent) auditNote(action, subject, reason string) error {
	if a.audit == nil {
		return storageError{fmt.Errorf("agent: audit trail not open")}
	}
	return a.appendAudit(record.AuditEntry{Actor: actorAgent, Action: action, Subject: subject, Reason: reason}, a.opt.Now())
}
