package agent

import (
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"strconv"
	"strings"
	"time"
)

// The journal and the audit trail vouch for each other. Every journal
// entry carries the trail's head (AuditHead, "seq:hash") as it stood when
// the entry was written, and every journal entry is copied into the trail
// (its JSON in Detail, journal seq included). So:
//
//   - entries cut from the trail's end: the journal's last entry names a
//     head the trail no longer has;
//   - entries cut from the journal's end: the trail holds journal entries
//     the journal no longer has;
//   - a trail edited or forged: its keyed chain does not verify.
//
// The one gap a crash can leave, the journal's last entry written and
// its audit entry not yet, is closed at start by auditing that entry with
// its own journal time, and only when the trail's head is exactly the one
// the entry names. Any other mismatch stops the agent before anything
// happens (ErrRecordMismatch); nothing is rebuilt. A person who has
// established what happened records that with "benchtender audit accept",
// an audited entry from which the check starts again.
//
// Cutting both files at matching points, by someone who can write the
// state folder, is not found this way; the trail's key (kept apart) stops
// a forgery, not a cut. Keep copies of the audit head elsewhere (status
// and the report print it).

// ErrRecordMismatch means the journal and the audit trail disagree in a
// way no crash explains.
var ErrRecordMismatch = errors.New("the journal and the audit trail disagree")

// actionAccept is the audit action of a person accepting a mismatch.
const actionAccept = "record mismatch accepted"

// acceptDetail is the Detail of an acceptance: the journal's last seq at
// that moment, from which the check starts again.
type acceptDetail struct {
	JournalSeq int64  `json:"journal_seq"`
	Finding    string `json:"finding"`
}

// crossCheck compares the journal's entries with the audit trail. It
// returns the journal entries to audit now (the crash gap, at most one),
// or ErrRecordMismatch saying what disagrees.
func crossCheck(entries []Entry, trail []AuditEntry) ([]Entry, error) {
	base := int64(0)
	from := 0
	for i, ae := range trail {
		if ae.Action == actionAccept {
			var d acceptDetail
			if json.Unmarshal(ae.Detail, &d) == nil {
				base, from = d.JournalSeq, i+1
			}
		}
	}
	audited := base
	for _, ae := range trail[from:] {
		if s := detailSeq(ae); s > audited {
			audited = s
		}
	}
	last := int64(0)
	if n := len(entries); n > 0 {
		last = entries[n-1].Seq
	}
	if audited > last {
		return nil, fmt.Errorf("%w: the audit trail records journal entry %d, but the journal ends at entry %d: the journal was cut or replaced", ErrRecordMismatch, audited, last)
	}
	var missing []Entry
	for _, e := range entries {
		if e.Seq > audited {
			missing = append(missing, e)
		}
	}
	head := "0:"
	if n := len(trail); n > 0 {
		head = fmt.Sprintf("%d:%s", trail[n-1].Seq, trail[n-1].Hash)
	}
	switch {
	case len(missing) > 1:
		return nil, fmt.Errorf("%w: the audit trail lacks journal entries %d to %d: it was cut after they were written; nothing is rebuilt", ErrRecordMismatch, missing[0].Seq, last)
	case len(missing) == 1 && missing[0].AuditHead != "" && missing[0].AuditHead != head:
		return nil, fmt.Errorf("%w: journal entry %d was written when the audit trail's head was %s, but the trail now ends at %s: entries were cut from the trail", ErrRecordMismatch, last, missing[0].AuditHead, head)
	case len(missing) == 1:
		return missing, nil
	}
	// Everything audited: the last journal entry's head must still be in
	// the trail as it was.
	if n := len(entries); n > 0 && entries[n-1].AuditHead != "" && entries[n-1].Seq > base {
		seq, hash, _ := strings.Cut(entries[n-1].AuditHead, ":")
		s, _ := strconv.Atoi(seq)
		switch {
		case s > len(trail):
			return nil, fmt.Errorf("%w: journal entry %d was written when the audit trail had %d entries; it has %d: entries were cut from the trail", ErrRecordMismatch, entries[n-1].Seq, s, len(trail))
		case s > 0 && trail[s-1].Hash != hash:
			return nil, fmt.Errorf("%w: audit entry %d is not the one journal entry %d saw", ErrRecordMismatch, s, entries[n-1].Seq)
		}
	}
	return nil, nil
}

// detailSeq is the journal seq an audit entry copies (0 for notes).
func detailSeq(ae AuditEntry) int64 {
	if len(ae.Detail) == 0 || ae.Action == actionAccept {
		return 0
	}
	var j struct {
		Seq int64 `json:"seq"`
	}
	if json.Unmarshal(ae.Detail, &j) != nil {
		return 0
	}
	return j.Seq
}

// reconcile runs crossCheck on the open journal and trail and audits the
// crash gap with the entry's own time.
func (a *Agent) reconcile(entries []Entry) error {
	trail, err := ReadAudit(auditPath(a.cfg.Campaign.StateDir))
	if err != nil {
		return err
	}
	if err := checkWitness(a.cfg, trail); err != nil {
		return err
	}
	gap, err := crossCheck(entries, trail)
	if err != nil {
		return err
	}
	for _, e := range gap {
		a.log.Warn().Int64("seq", e.Seq).Msg("the journal's last entry was not in the audit trail (a crash between the two writes, or the trail's last line was cut); audited now with its own time")
		if err := a.auditEntryAt(e, e.Time); err != nil {
			return err
		}
		if err := a.auditNote("audit trail completed", "audit trail", fmt.Sprintf("journal entry %d was not in the trail (a crash between the two writes, or its line was cut); added with its own time", e.Seq)); err != nil {
			return err
		}
	}
	return nil
}

// AcceptMismatch records, after a person has established what happened,
// that the journal and the audit trail disagree: an audited entry with
// the person's id, printed name and reason, from which the check starts
// again. It takes the state folder's lock (so no daemon runs) and
// verifies the trail's chain first.
func AcceptMismatch(cfg Config, by, name, reason string, now time.Time) (string, error) {
	if strings.TrimSpace(by) == "" || strings.TrimSpace(name) == "" || strings.TrimSpace(reason) == "" {
		return "", errors.New("audit accept: an id, a printed name and a reason are required")
	}
	sd := cfg.Campaign.StateDir
	unlock, err := lockState(sd)
	if err != nil {
		return "", err
	}
	defer unlock()
	key, err := LoadAuditKey(cfg, false)
	if err != nil {
		return "", err
	}
	entries, err := ReadJournal(journalPath(sd))
	if err != nil {
		return "", err
	}
	trail, err := ReadAudit(auditPath(sd))
	if err != nil {
		return "", err
	}
	finding := checkWitness(cfg, trail)
	if finding == nil {
		_, finding = crossCheck(entries, trail)
	}
	if finding == nil {
		return "", errors.New("audit accept: the journal and the audit trail agree; there is nothing to accept")
	}
	log, _, err := openAudit(auditPath(sd), key)
	if err != nil {
		return "", err
	}
	defer log.close()
	last := int64(0)
	if n := len(entries); n > 0 {
		last = entries[n-1].Seq
	}
	detail, _ := json.Marshal(acceptDetail{JournalSeq: last, Finding: finding.Error()})
	e, err := log.append(AuditEntry{Actor: by, Name: name, Action: actionAccept, Subject: "journal and audit trail",
		Reason: reason, Meaning: "acceptance of a gap in the record", Detail: detail}, now)
	if err != nil {
		return "", err
	}
	if err := writeWitness(cfg, e.Seq, e.Hash, now); err != nil {
		return "", fmt.Errorf("audit accept: recorded as entry %d, but the witness could not be updated: %w", e.Seq, err)
	}
	return fmt.Sprintf("audit entry %d: %s", e.Seq, finding), nil
}

// CheckRecord verifies the audit trail's keyed chain and that the journal
// and the trail agree; it returns the number of audit entries.
func CheckRecord(cfg Config) (int, error) {
	sd := cfg.Campaign.StateDir
	key, err := LoadAuditKey(cfg, false)
	if err != nil {
		if _, serr := os.Stat(auditPath(sd)); errors.Is(serr, os.ErrNotExist) {
			return 0, nil // nothing recorded yet
		}
		return 0, err
	}
	n, err := VerifyAudit(auditPath(sd), key)
	if err != nil {
		return n, fmt.Errorf("%s: %w", auditPath(sd), err)
	}
	entries, err := ReadJournal(journalPath(sd))
	if err != nil {
		return n, err
	}
	trail, err := ReadAudit(auditPath(sd))
	if err != nil {
		return n, err
	}
	if err := checkWitness(cfg, trail); err != nil {
		return n, err
	}
	gap, err := crossCheck(entries, trail)
	if err != nil {
		return n, err
	}
	if len(gap) > 0 {
		return n, fmt.Errorf("%w: the audit trail lacks the journal's last entry, %d: a crash between the two writes, or the trail's last line was cut; the daemon adds it back, with its own time, at its next start", ErrRecordMismatch, gap[0].Seq)
	}
	return n, nil
}
