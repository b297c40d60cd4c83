package agent

import (
	"fmt"
	"os"

	"benchtender/campaign"
	"benchtender/record"
	"benchtender/safety"
)

// applySignoffs applies the decisions left in the inbox. Each is checked
// here, where the journal is: the move must still be held; the request is
// used once, within approval_expiry, under the limits and the campaign
// state it was given against; an edited move passes the gate again; a move
// of a two-person kind needs two different people. A refused request is
// set aside with the reason in the log and the audit trail.
func (a *Agent) applySignoffs() error {
	items, err := pendingSignoffs(a.cfg.Campaign.StateDir)
	if err != nil {
		a.log.Warn().Err(err).Msg("cannot read the sign-off inbox")
		return nil
	}
	for _, it := range items {
		entry, why := a.judgeSignoff(it)
		if why != "" {
			a.log.Warn().Str("request", it.path).Str("run", it.req.Run).Str("by", it.req.By).Str("reason", why).Msg("sign-off refused")
			if err := a.auditNote("sign-off refused", it.req.Run, fmt.Sprintf("%s by %s (%s): %s", it.req.Action, it.req.By, it.req.Name, why)); err != nil {
				return err
			}
		} else {
			if err := a.record(entry); err != nil {
				return err
			}
			if entry.Kind == record.KindRefit {
				// The next proposal fits afresh; the one after holds
				// what it fitted, as usual.
				a.lastModel, a.warm = nil, nil
			}
			a.log.Info().Str("run", entry.Run).Str("action", entry.Action).Bool("first_of_two", entry.Partial).
				Str("by", entry.By).Str("name", entry.Name).Str("reason", entry.Reason).Msg("sign-off applied")
		}
		if err := os.Remove(it.path); err != nil {
			a.log.Warn().Err(err).Str("request", it.path).Msg("cannot remove sign-off request")
		}
	}
	return nil
}

// judgeSignoff returns the journal entry a request makes, or why it is
// refused.
func (a *Agent) judgeSignoff(it inboxItem) (record.Entry, string) {
	req := it.req
	if it.err != nil {
		return record.Entry{}, it.err.Error()
	}
	if a.state.Requests[req.ID] {
		return record.Entry{}, "this request was used already (a replay)"
	}
	if age := a.opt.Now().Sub(req.Time); age > a.cfg.Safety.Approvals() {
		return record.Entry{}, fmt.Sprintf("given %v ago, longer than approval_expiry %v", age.Round(1e9), a.cfg.Safety.Approvals())
	}
	e := record.Entry{Kind: record.KindSignoff, Run: req.Run, Action: req.Action, By: req.By, Name: req.Name, Reason: req.Reason, Request: req.ID, Limits: a.gate.Version()}
	if req.Action == ActionCorrect {
		e.Kind, e.Corrects = record.KindCorrection, req.Corrects
		return e, ""
	}
	if req.Action == ActionRefit {
		e.Kind = record.KindRefit
		return e, ""
	}
	if req.Action == ActionResume {
		if a.state.AllStop == "" {
			return record.Entry{}, "no all-stop is in effect"
		}
		if _, err := os.Stat(allStopPath(a.cfg)); err == nil {
			return record.Entry{}, "the all-stop file is still there"
		}
		e.Kind = record.KindResume
		return e, ""
	}
	r, ok := a.state.Runs[req.Run]
	switch {
	case !ok:
		return record.Entry{}, "no such run"
	case r.Status != record.StatusHeld:
		return record.Entry{}, fmt.Sprintf("run %s is %s, not held", r.ID, r.Status)
	case req.Limits != a.gate.Version():
		return record.Entry{}, fmt.Sprintf("the limits changed since it was given (version %s, now %s): sign the move again", req.Limits, a.gate.Version())
	case req.State != a.state.Ingests:
		return record.Entry{}, fmt.Sprintf("%d new result(s) arrived since it was given: look at the move again and sign again", a.state.Ingests-req.State)
	}
	if req.Action == record.ActionReject {
		return e, ""
	}
	point, err := editedPoint(a.cfg.Campaign.Factors, r.Point, req.Edit)
	if err != nil {
		return record.Entry{}, err.Error()
	}
	if len(req.Edit) > 0 {
		if v := a.planner.Violated(point); v != "" {
			return record.Entry{}, fmt.Sprintf("the edited move breaks constraint %s", v)
		}
		e.Point = point
	}
	// The gate checks the move again, edited or not: the limits apply to
	// what is approved, and nothing refused can be signed through.
	d := a.gate.Check(campaign.Setpoint{RunID: r.ID, Point: point}, a.previous())
	if d.Verdict == safety.Refuse {
		return record.Entry{}, "the gate refuses the move: " + d.Summary()
	}
	e.Decision = &d
	// A pending first approval is never dropped silently: a second
	// approval signs the same values, or says it replaces the first.
	first := r.First
	if why := secondApproval(a.cfg.Campaign.Factors, first, req, point); why != "" {
		return record.Entry{}, why
	}
	if first != nil && !first.Point.Equal(point) {
		e.Replaces = first.Describe(a.cfg.Campaign.Factors) + ", signing " + a.cfg.Campaign.Factors.Describe(first.Point)
		first = nil
	}
	if first == nil && d.NeedsTwo(a.cfg.Safety) {
		e.Partial = true
	}
	return e, ""
}

// secondApproval says why an approval cannot follow the pending first
// approval (nil when there is none), or "".
func secondApproval(space campaign.Space, first *record.Approval, req SignoffRequest, point campaign.Point) string {
	if first == nil {
		return ""
	}
	if !first.Point.Equal(point) {
		if req.Replace {
			return ""
		}
		return fmt.Sprintf("the first approval, by %s, signs %s; this approval signs %s. Approve those same values to complete it, or approve again with replace set (--replace; the console's replace box) to start a new first approval in its place",
			first.Describe(space), space.Describe(first.Point), space.Describe(point))
	}
	if first.By == req.By {
		return fmt.Sprintf("%s gave the first approval of this move; a second, different person must approve it", req.By)
	}
	return ""
}

// editedPoint is the held setpoint with a sign-off's edits applied and
// rounded to the factors' levels.
func editedPoint(space campaign.Space, held campaign.Point, edit map[string]float64) (campaign.Point, error) {
	if len(edit) == 0 {
		return held, nil
	}
	point := held.Clone()
	for name, v := range edit {
		i := space.Index(name)
		if i < 0 {
			return nil, fmt.Errorf("edit names %q, which is not a factor", name)
		}
		point[i] = v
	}
	return roundPoint(space, point), nil
}
