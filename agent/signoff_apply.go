package agent

import (
	"fmt"
	"os"

	"benchtender/campaign"
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
func (a *Agent) judgeSignoff(it inboxItem) (Entry, string) {
	req := it.req
	if it.err != nil {
		return Entry{}, it.err.Error()
	}
	if a.state.Requests[req.ID] {
		return Entry{}, "this request was used already (a replay)"
	}
	if age := a.opt.Now().Sub(req.Time); age > a.cfg.Safety.Approvals() {
		return Entry{}, fmt.Sprintf("given %v ago, longer than approval_expiry %v", age.Round(1e9), a.cfg.Safety.Approvals())
	}
	e := Entry{Kind: KindSignoff, Run: req.Run, Action: req.Action, By: req.By, Name: req.Name, Reason: req.Reason, Request: req.ID, Limits: a.gate.Version()}
	if req.Action == ActionCorrect {
		e.Kind, e.Corrects = KindCorrection, req.Corrects
		return e, ""
	}
	if req.Action == ActionResume {
		if a.state.AllStop == "" {
			return Entry{}, "no all-stop is in effect"
		}
		if _, err := os.Stat(allStopPath(a.cfg)); err == nil {
			return Entry{}, "the all-stop file is still there"
		}
		e.Kind = KindResume
		return e, ""
	}
	r, ok := a.state.Runs[req.Run]
	switch {
	case !ok:
		return Entry{}, "no such run"
	case r.Status != StatusHeld:
		return Entry{}, fmt.Sprintf("run %s is %s, not held", r.ID, r.Status)
	case req.Limits != a.gate.Version():
		return Entry{}, fmt.Sprintf("the limits changed since it was given (version %s, now %s): sign the move again", req.Limits, a.gate.Version())
	case req.State != a.state.Ingests:
		return Entry{}, fmt.Sprintf("%d new result(s) arrived since it was given: look at the move again and sign again", a.state.Ingests-req.State)
	}
	if req.Action == ActionReject {
		return e, ""
	}
	point := r.Point
	if len(req.Edit) > 0 {
		point = r.Point.Clone()
		for name, v := range req.Edit {
			i := a.cfg.Campaign.Factors.Index(name)
			if i < 0 {
				return Entry{}, fmt.Sprintf("edit names %q, which is not a factor", name)
			}
			point[i] = v
		}
		point = roundPoint(a.cfg.Campaign.Factors, point)
		if v := a.planner.Violated(point); v != "" {
			return Entry{}, fmt.Sprintf("the edited move breaks constraint %s", v)
		}
		e.Point = point
	}
	// The gate checks the move again, edited or not: the limits apply to
	// what is approved, and nothing refused can be signed through.
	d := a.gate.Check(campaign.Setpoint{RunID: r.ID, Point: point}, a.previous())
	if d.Verdict == safety.Refuse {
		return Entry{}, "the gate refuses the move: " + d.Summary()
	}
	e.Decision = &d
	if d.NeedsTwo(a.cfg.Safety) {
		for _, by := range r.Approvers {
			if by == req.By {
				return Entry{}, fmt.Sprintf("%s approved this move already; a second, different person must approve it", req.By)
			}
		}
		if len(r.Approvers) == 0 {
			e.Partial = true
		} else if !samePoint(r.PartialPoint, point) {
			return Entry{}, fmt.Sprintf("the first approver signed %v, this approval %v: both must sign the same values", r.PartialPoint, point)
		}
	}
	return e, ""
}

func samePoint(a, b campaign.Point) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}
