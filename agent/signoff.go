package agent

import (
	"crypto/rand"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"time"
	"unicode"

	"benchtender/campaign"
	"benchtender/record"
	"benchtender/safety"
)

// SignoffRequest is a person's decision on a held move, left in the
// campaign's sign-off inbox by the holds commands and applied by the
// daemon, which alone writes the journal. That way approve and reject work
// while the daemon runs, and are kept when it does not.
type SignoffRequest struct {
	// ID makes the request usable once.
	ID  string `json:"id"`
	Run string `json:"run"`
	// Action is approve, reject or resume (clear the all-stop).
	Action string `json:"action"`
	// By is the person's user id, Name their printed name (21 CFR Part
	// 11 §11.50: printed name, time and meaning of a signature).
	By     string    `json:"by"`
	Name   string    `json:"name"`
	Reason string    `json:"reason"`
	Time   time.Time `json:"time"`
	// Edit sets factor values of the held move before it is approved;
	// the edited move passes the gate again.
	Edit map[string]float64 `json:"edit,omitempty"`
	// Replace lets an approval of other values than a pending first
	// approval's take its place (recorded as replacing it); without it
	// such an approval is refused, showing both sets of values.
	Replace bool `json:"replace,omitempty"`
	// Corrects is the audit entry a correction refers to.
	Corrects int64 `json:"corrects,omitempty"`
	// Limits and State bind the approval to the version of the limits
	// and to the number of results recorded when it was given: if either
	// has changed by the time it is applied, it is refused and the move
	// must be signed again.
	Limits string `json:"limits"`
	State  int    `json:"state"`
}

// Actions besides approve and reject: resume clears an all-stop; correct
// adds a correction to the audit trail, pointing at the entry it corrects;
// refit has the next proposal fit the model's hyperparameters afresh,
// from every start, instead of holding them (planner hold_fit_from).
const (
	ActionResume  = "resume"
	ActionCorrect = "correct"
	ActionRefit   = "refit"
)

// Validate checks the request on its own; whether the run is held is for
// the daemon to decide.
func (r SignoffRequest) Validate() error {
	if !campaign.ValidRunID(r.Run) {
		return fmt.Errorf("sign-off: %q is not a run id", r.Run)
	}
	switch r.Action {
	case record.ActionApprove, record.ActionReject, ActionResume, ActionRefit:
	case ActionCorrect:
		if r.Corrects < 1 {
			return errors.New("correction: name the audit entry it corrects (--entry)")
		}
	default:
		return fmt.Errorf("sign-off: action must be %q, %q, %q, %q or %q, got %q", record.ActionApprove, record.ActionReject, ActionResume, ActionCorrect, ActionRefit, r.Action)
	}
	if strings.TrimSpace(r.By) == "" {
		return errors.New("sign-off: who signs (--by, a user id) is required")
	}
	if strings.TrimSpace(r.Name) == "" {
		return errors.New("sign-off: the signer's printed name (--name) is required")
	}
	if r.ID == "" {
		return errors.New("sign-off: request has no id")
	}
	for k, v := range r.Edit {
		if !campaign.ValidName(k) || math.IsNaN(v) || math.IsInf(v, 0) {
			return fmt.Errorf("sign-off: edit %s=%v is not a factor and a finite value", k, v)
		}
	}
	if r.Action != record.ActionApprove && (len(r.Edit) > 0 || r.Replace) {
		return errors.New("sign-off: only an approval may edit values or replace a first approval")
	}
	if strings.TrimSpace(r.Reason) == "" {
		return errors.New("sign-off: a reason (--reason) is required")
	}
	for _, s := range []string{r.By, r.Name, r.Reason} {
		if strings.IndexFunc(s, unicode.IsControl) >= 0 {
			return errors.New("sign-off: name and reason must be one line of text")
		}
	}
	return nil
}

func inboxDir(stateDir string) string { return filepath.Join(stateDir, "signoff") }

// AllStopPath is where the campaign's all-stop file lives.
func AllStopPath(cfg Config) string { return allStopPath(cfg) }

// allStopPath is where the all-stop file lives.
func allStopPath(cfg Config) string {
	p := cfg.Safety.StopFile()
	if filepath.IsAbs(p) {
		return p
	}
	return filepath.Join(cfg.Campaign.StateDir, p)
}
func journalPath(stateDir string) string { return filepath.Join(stateDir, "journal.log") }

// RequestSignoff checks a sign-off against the journal (the run must be
// held; a resume needs an all-stop) and leaves it in the inbox for the
// daemon, bound to the current limits and campaign state. It returns the
// path of the request file.
func RequestSignoff(cfg Config, req SignoffRequest) (string, error) {
	if req.Time.IsZero() {
		req.Time = time.Now().UTC()
	}
	if req.ID == "" {
		var b [8]byte
		if _, err := rand.Read(b[:]); err != nil {
			return "", err
		}
		req.ID = hex.EncodeToString(b[:])
	}
	if req.Action == ActionResume && req.Run == "" {
		req.Run = "all-stop"
	}
	if req.Action == ActionCorrect && req.Run == "" {
		req.Run = "audit"
	}
	if req.Action == ActionRefit && req.Run == "" {
		req.Run = "model"
	}
	if err := req.Validate(); err != nil {
		return "", err
	}
	entries, err := record.ReadJournal(journalPath(cfg.Campaign.StateDir))
	if err != nil {
		return "", err
	}
	st := record.Replay(entries)
	req.Limits, req.State = cfg.Safety.Version(), st.Ingests
	r, ok := st.Runs[req.Run]
	switch {
	case req.Action == ActionCorrect:
		key, err := LoadAuditKey(cfg, false)
		if err != nil {
			return "", err
		}
		n, err := record.VerifyAudit(record.AuditPath(cfg.Campaign.StateDir), key)
		if err != nil {
			return "", err
		}
		if req.Corrects > int64(n) {
			return "", fmt.Errorf("correction: the audit trail has %d entries, not %d", n, req.Corrects)
		}
	case req.Action == ActionResume:
		// Anyone may stop; only a person, by name, clears the stop:
		// the request removes the file and the daemon records it.
		if err := os.Remove(allStopPath(cfg)); err != nil && !errors.Is(err, os.ErrNotExist) {
			return "", fmt.Errorf("resume: %w", err)
		}
	case req.Action == ActionRefit:
		// About the model, not a run.
	case !ok:
		return "", fmt.Errorf("sign-off: campaign %s has no run %s", cfg.Campaign.Name, req.Run)
	case r.Status != record.StatusHeld:
		return "", fmt.Errorf("sign-off: run %s is %s, not held", req.Run, r.Status)
	}
	if req.Action == record.ActionApprove {
		// Edits that repeat the held value are no edits (a form sends
		// every factor).
		for k, v := range req.Edit {
			one, err := editedPoint(cfg.Campaign.Factors, r.Point, map[string]float64{k: v})
			if err == nil && one.Equal(r.Point) {
				delete(req.Edit, k)
			}
		}
		// Told now rather than only in the daemon's log: a second
		// approval that does not match the first, or edited values the
		// gate refuses.
		point, err := editedPoint(cfg.Campaign.Factors, r.Point, req.Edit)
		if err != nil {
			return "", fmt.Errorf("sign-off: %w", err)
		}
		if why := secondApproval(cfg.Campaign.Factors, r.First, req, point); why != "" {
			return "", fmt.Errorf("sign-off of %s refused: %s", req.Run, why)
		}
		if len(req.Edit) > 0 {
			gate := safety.NewGate(cfg.Safety, cfg.Campaign.Factors)
			d := gate.Check(campaign.Setpoint{RunID: r.ID, Point: point}, st.LastHandoffOn(cfg.Instruments[0].Name, len(cfg.Instruments) == 1))
			if d.Verdict == safety.Refuse {
				return "", fmt.Errorf("sign-off of %s refused: the gate refuses the edited values %s: %s", req.Run, cfg.Campaign.Factors.Describe(point), d.Summary())
			}
		}
	}
	dir := inboxDir(cfg.Campaign.StateDir)
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return "", fmt.Errorf("sign-off: %w", err)
	}
	data, err := json.Marshal(req)
	if err != nil {
		return "", err
	}
	name := fmt.Sprintf("%020d-%s-%s.json", req.Time.UnixNano(), req.Run, req.Action)
	if err := record.WriteFileAtomic(dir, name, data, 0o644); err != nil {
		return "", fmt.Errorf("sign-off: %w", err)
	}
	return filepath.Join(dir, name), nil
}

// pendingSignoffs returns the requests waiting in the inbox, oldest first,
// with their paths. Unreadable requests are returned with their error, so
// the daemon can log and set them aside.
type inboxItem struct {
	path string
	req  SignoffRequest
	err  error
}

func pendingSignoffs(stateDir string) ([]inboxItem, error) {
	dir := inboxDir(stateDir)
	entries, err := os.ReadDir(dir)
	if errors.Is(err, os.ErrNotExist) {
		return nil, nil
	}
	if err != nil {
		return nil, err
	}
	var names []string
	for _, e := range entries {
		if e.Type().IsRegular() && strings.HasSuffix(e.Name(), ".json") && !strings.HasPrefix(e.Name(), ".") {
			names = append(names, e.Name())
		}
	}
	sort.Strings(names)
	out := make([]inboxItem, 0, len(names))
	for _, n := range names {
		it := inboxItem{path: filepath.Join(dir, n)}
		data, err := os.ReadFile(it.path)
		if err == nil {
			err = json.Unmarshal(data, &it.req)
		}
		if err == nil {
			err = it.req.Validate()
		}
		it.err = err
		out = append(out, it)
	}
	return out, nil
}

// WriteAllStop writes the all-stop file, which halts every handoff at the
// daemon's next look; the file says who, when and why, and the daemon
// records it. The command line and the console both stop this way.
func WriteAllStop(cfg Config, by, reason string, now time.Time) (string, error) {
	for _, s := range []string{by, reason} {
		if strings.IndexFunc(s, unicode.IsControl) >= 0 {
			return "", errors.New("all-stop: who and why must be one line of text")
		}
	}
	if by == "" {
		by = "(not given)"
	}
	if reason == "" {
		reason = "(no reason given)"
	}
	file := allStopPath(cfg)
	text := fmt.Sprintf("all-stop by %s at %s: %s\n", by, now.UTC().Format(time.RFC3339), reason)
	// Whole or not at all: a daemon looking while a plain write was under
	// way read the file empty and recorded the stop without its reason.
	if err := record.WriteFileAtomic(filepath.Dir(file), filepath.Base(file), []byte(text), 0o644); err != nil {
		return "", fmt.Errorf("all-stop: %w", err)
	}
	return file, nil
}
