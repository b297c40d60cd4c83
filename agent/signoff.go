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
	"unicode"

	"benchtender/campaign"
)

// SignoffRequest is a person's decision on a held move, left in the
// campaign's sign-off inbox by the holds commands and applied by the
// daemon, which alone writes the journal. That way approve and reject work
// while the daemon runs, and are kept when it does not.
type SignoffRequest struct {
	Run    string    `json:"run"`
	Action string    `json:"action"`
	By     string    `json:"by"`
	Reason string    `json:"reason"`
	Time   time.Time `json:"time"`
}

// Validate checks the request on its own; whether the run is held is for
// the daemon to decide.
func (r SignoffRequest) Validate() error {
	if !campaign.ValidRunID(r.Run) {
		return fmt.Errorf("sign-off: %q is not a run id", r.Run)
	}
	if r.Action != ActionApprove && r.Action != ActionReject {
		return fmt.Errorf("sign-off: action must be %q or %q, got %q", ActionApprove, ActionReject, r.Action)
	}
	if strings.TrimSpace(r.By) == "" {
		return errors.New("sign-off: who signs (--by) is required")
	}
	if strings.TrimSpace(r.Reason) == "" {
		return errors.New("sign-off: a reason (--reason) is required")
	}
	for _, s := range []string{r.By, r.Reason} {
		if strings.IndexFunc(s, unicode.IsControl) >= 0 {
			return errors.New("sign-off: name and reason must be one line of text")
		}
	}
	return nil
}

func inboxDir(stateDir string) string    { return filepath.Join(stateDir, "signoff") }
func journalPath(stateDir string) string { return filepath.Join(stateDir, "journal.log") }

// RequestSignoff checks a sign-off against the journal (the run must be
// held) and leaves it in the inbox for the daemon. It returns the path of
// the request file.
func RequestSignoff(cfg Config, req SignoffRequest) (string, error) {
	if req.Time.IsZero() {
		req.Time = time.Now().UTC()
	}
	if err := req.Validate(); err != nil {
		return "", err
	}
	entries, err := ReadJournal(journalPath(cfg.Campaign.StateDir))
	if err != nil {
		return "", err
	}
	st := Replay(entries)
	r, ok := st.Runs[req.Run]
	switch {
	case !ok:
		return "", fmt.Errorf("sign-off: campaign %s has no run %s", cfg.Campaign.Name, req.Run)
	case r.Status != StatusHeld:
		return "", fmt.Errorf("sign-off: run %s is %s, not held", req.Run, r.Status)
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
	if err := writeFileAtomic(dir, name, data, 0o644); err != nil {
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
