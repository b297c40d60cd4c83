package record

import (
	"fmt"
	"slices"
	"time"

	"benchtender/campaign"
	"benchtender/planner"
	"benchtender/safety"
)

// Run statuses.
const (
	StatusHeld     = "held"       // waiting for sign-off
	StatusReady    = "ready"      // passed or approved, not yet handed off
	StatusRejected = "rejected"   // a person rejected it
	StatusRefused  = "refused"    // the gate refused it
	StatusHanded   = "handed off" // setpoint written, result awaited
	StatusDone     = "done"       // result ingested
	StatusFailed   = "failed"     // the instrument reported no usable value
	StatusExpired  = "expired"    // held, and lapsed unsigned
)

// Run is one run as the journal tells it.
type Run struct {
	ID       string
	Point    campaign.Point
	Method   string
	Decision safety.Decision
	Status   string
	Proposed time.Time
	// Value is the latest result, valid when Status is StatusDone.
	Value float64
	// Failed says why the instrument gave no value.
	Failed string
	// Values are every value the latest result file gave.
	Values map[string]Reading
	// Files are the result files ingested for this run, oldest first.
	Files []string
	// SignedBy, SignReason record the sign-off, if any; Approvers every
	// approval so far (a two-person move needs two).
	SignedBy, SignReason string
	Approvers            []string
	// ApprovedUnder is the limits version of the approval.
	ApprovedUnder string
	// First is the first of two approvals a move needs, while the second
	// is awaited: who gave it, when, and the exact values it approves.
	First *Approval
	// Alternative is the best proposal inside every limit, for a held
	// move.
	Alternative campaign.Point
	// External marks a run that came from a result file alone, not from
	// a handoff of ours.
	External bool
	// ActionID is the id of the run's handoff; Confirmed says the file
	// was seen in place.
	ActionID  string
	Confirmed bool
	// Instrument is the instrument the run was handed off to ("" in
	// journals from before instruments were named: the first one).
	Instrument string
}

// Approval is one person's approval of a held move.
type Approval struct {
	By, Name, Reason string
	Time             time.Time
	// Point is the setpoint approved (the held one, or edited values).
	Point campaign.Point
	// Replaces says which earlier first approval this one took the place
	// of ("" when none).
	Replaces string
}

// Describe says who gave the approval and when.
func (f *Approval) Describe(space campaign.Space) string {
	return fmt.Sprintf("%s (%s) at %s", f.By, f.Name, f.Time.UTC().Format(time.RFC3339))
}

// State is the campaign as replayed from its journal.
type State struct {
	Runs   map[string]*Run
	Order  []string        // run ids in the order first seen
	Hashes map[string]bool // content hashes already ingested or quarantined
	// Seen maps a content hash to the files it has been recorded under.
	Seen map[string][]string
	// Refused holds the files refused by name alone (never read).
	Refused   map[string]bool
	Proposals int // proposals made (the planner's index)
	Handoffs  int // setpoint files written
	// Stopped, when not empty, says why the planner stopped proposing.
	Stopped string
	// Asides are the regions the planner set aside, oldest first, and the
	// run at each one's centre.
	Asides    []planner.Aside
	AsideRuns []string
	// Stopping is the stopping rule's verdict at the latest proposal,
	// test by test (empty when the rule is off).
	Stopping string
	// AllStop, when not empty, says who or what halted every handoff.
	AllStop string
	// Ingests counts the results recorded: the campaign state an
	// approval is bound to.
	Ingests int
	// Requests holds the sign-off requests already used.
	Requests map[string]bool
	// LastHandoff is the setpoint most recently handed off; LastOn the
	// one most recently handed off to each instrument, by name.
	LastHandoff campaign.Point
	LastOn      map[string]campaign.Point
	// HandoffTimes are the times of the handoffs, oldest first.
	HandoffTimes []time.Time
}

func newState() *State {
	return &State{Runs: map[string]*Run{}, Hashes: map[string]bool{}, Requests: map[string]bool{}, Seen: map[string][]string{}, Refused: map[string]bool{}, LastOn: map[string]campaign.Point{}}
}

// Replay builds the state from journal entries.
func Replay(entries []Entry) *State {
	s := newState()
	for _, e := range entries {
		s.Apply(e)
	}
	return s
}

func (s *State) run(id string) *Run {
	r, ok := s.Runs[id]
	if !ok {
		r = &Run{ID: id}
		s.Runs[id] = r
		s.Order = append(s.Order, id)
	}
	return r
}

// Apply folds one entry into the state.
func (s *State) Apply(e Entry) {
	switch e.Kind {
	case KindProposal:
		s.Proposals++
		s.Stopping = e.Stopping
		r := s.run(e.Run)
		r.Point, r.Method, r.Proposed, r.Alternative = e.Point, e.Method, e.Time, e.Alternative
		if e.Decision != nil {
			r.Decision = *e.Decision
		}
		switch r.Decision.Verdict {
		case safety.Pass:
			r.Status = StatusReady
		case safety.Hold:
			r.Status = StatusHeld
		default:
			r.Status = StatusRefused
		}
	case KindSetAside:
		if e.Aside != nil {
			s.Asides = append(s.Asides, *e.Aside)
			s.AsideRuns = append(s.AsideRuns, e.Run)
		}
	case KindSignoff, KindResume:
		if e.Request != "" {
			s.Requests[e.Request] = true
		}
		if e.Kind == KindResume {
			s.AllStop = ""
			break
		}
		if e.Request != "" {
			s.Requests[e.Request] = true
		}
		r := s.run(e.Run)
		r.SignedBy, r.SignReason = e.By, e.Reason
		if e.Replaces != "" {
			r.Approvers, r.First = nil, nil // the earlier first approval no longer counts
		}
		switch {
		case e.Action == ActionApprove && e.Partial:
			r.Approvers = append(r.Approvers, e.By)
			r.First = &Approval{By: e.By, Name: e.Name, Reason: e.Reason, Time: e.Time, Point: r.Point, Replaces: e.Replaces}
			if len(e.Point) > 0 {
				r.First.Point = e.Point
			}
		case e.Action == ActionApprove:
			r.Approvers = append(r.Approvers, e.By)
			r.Status, r.ApprovedUnder, r.First = StatusReady, e.Limits, nil
			if len(e.Point) > 0 {
				r.Point = e.Point // approved with edited values
			}
			if e.Decision != nil {
				r.Decision = *e.Decision
			}
		default:
			r.Status = StatusRejected
		}
	case KindExpire:
		s.run(e.Run).Status = StatusExpired
	case KindRegate:
		r := s.run(e.Run)
		r.Status, r.Approvers, r.ApprovedUnder, r.First = StatusHeld, nil, "", nil
		if e.Decision != nil {
			r.Decision = *e.Decision
		}
	case KindAllStop:
		s.AllStop = e.Reason
	case KindCorrection, KindRefit:
		if e.Request != "" {
			s.Requests[e.Request] = true
		}
	case KindHandoff:
		s.Handoffs++
		r := s.run(e.Run)
		r.Status, r.ActionID, r.Confirmed, r.Instrument = StatusHanded, e.ActionID, false, e.Instrument
		s.LastHandoff = e.Point
		s.LastOn[e.Instrument] = e.Point
		s.HandoffTimes = append(s.HandoffTimes, e.Time)
	case KindHandoffOK:
		s.run(e.Run).Confirmed = true
	case KindHandoffNo:
		s.Handoffs--
		r := s.run(e.Run)
		r.Status, r.ActionID = StatusReady, ""
		if n := len(s.HandoffTimes); n > 0 {
			s.HandoffTimes = s.HandoffTimes[:n-1]
		}
	case KindIngest:
		s.Ingests++
		s.Hashes[e.SHA256] = true
		s.Seen[e.SHA256] = append(s.Seen[e.SHA256], e.File)
		r := s.run(e.Run)
		if r.Point == nil && len(e.Point) > 0 {
			r.Point, r.External = e.Point, true
		}
		r.Files = append(r.Files, e.File)
		r.Values = e.Values
		if e.Failed != "" {
			r.Status, r.Failed = StatusFailed, e.Failed
		} else {
			r.Status, r.Value, r.Failed = StatusDone, e.Value, ""
		}
	case KindQuarantine, KindDuplicate:
		if e.SHA256 == "" {
			s.Refused[e.File] = true
			break
		}
		s.Hashes[e.SHA256] = true
		s.Seen[e.SHA256] = append(s.Seen[e.SHA256], e.File)
	case KindStop:
		s.Stopped = e.Reason
	}
}

// InFlight returns the runs handed off and still awaiting a result.
func (s *State) InFlight() []*Run { return s.withStatus(StatusHanded) }

// Held returns the runs waiting for sign-off.
func (s *State) Held() []*Run { return s.withStatus(StatusHeld) }

// Ready returns the runs cleared for handoff but not yet handed off.
func (s *State) Ready() []*Run { return s.withStatus(StatusReady) }

func (s *State) withStatus(st string) []*Run {
	var out []*Run
	for _, id := range s.Order {
		if r := s.Runs[id]; r.Status == st {
			out = append(out, r)
		}
	}
	return out
}

// TrialRuns returns the completed runs with a usable value, in the order
// Trials lists them.
func (s *State) TrialRuns() []*Run {
	var out []*Run
	for _, id := range s.Order {
		if r := s.Runs[id]; r.Status == StatusDone && r.Point != nil {
			out = append(out, r)
		}
	}
	return out
}

// Trials returns the completed runs with a usable value.
func (s *State) Trials() []campaign.Trial {
	runs := s.TrialRuns()
	out := make([]campaign.Trial, len(runs))
	for i, r := range runs {
		out[i] = campaign.Trial{Point: r.Point, Value: r.Value}
	}
	return out
}

// TrialsOf returns the completed runs with a usable value as Trials does,
// each also with its values of the named responses (Trial.Values), for a
// campaign with several responses: ingest records a run as done only
// when every response gave a usable value.
func (s *State) TrialsOf(names []string) []campaign.Trial {
	out := s.Trials()
	for i, r := range s.TrialRuns() {
		out[i].Values = make([]float64, len(names))
		for k, n := range names {
			out[i].Values[k] = r.Values[n].Value
		}
	}
	return out
}

// points returns the setpoints of the runs whose status is one of sts.
func (s *State) points(sts ...string) []campaign.Point {
	var out []campaign.Point
	for _, id := range s.Order {
		r := s.Runs[id]
		if r.Point != nil && slices.Contains(sts, r.Status) {
			out = append(out, r.Point)
		}
	}
	return out
}

// Pending returns the setpoints proposed and not yet answered: held,
// ready or in flight.
func (s *State) Pending() []campaign.Point { return s.points(StatusHeld, StatusReady, StatusHanded) }

// FailedPoints returns the setpoints of runs that gave no usable value.
func (s *State) FailedPoints() []campaign.Point { return s.points(StatusFailed) }

// Avoid returns the setpoints a person rejected or the gate refused.
func (s *State) Avoid() []campaign.Point {
	return s.points(StatusRejected, StatusRefused, StatusExpired)
}

// LastHandoffOn is the setpoint last handed off to the named instrument; with a
// single instrument, the last handed off at all (journals from before
// instruments were named).
func (s *State) LastHandoffOn(name string, single bool) campaign.Point {
	if single {
		return s.LastHandoff
	}
	return s.LastOn[name]
}

// Best returns the best completed run, or nil.
func (s *State) Best(resp campaign.Response) *Run {
	var best *Run
	for _, id := range s.Order {
		r := s.Runs[id]
		if r.Status == StatusDone && (best == nil || resp.Better(r.Value, best.Value)) {
			best = r
		}
	}
	return best
}
