package agent

import (
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"strings"
	"time"

	"benchtender/record"
)

// The journal and the audit trail vouch for each other (record.CrossCheck
// says how); this file checks them against each other at start, and lets a
// person accept a mismatch they have explained.

// reconcile runs CrossCheck on the open journal and trail and audits the
// crash gap with the entry's own time.
func (a *Agent) reconcile(entries []record.Entry) error {
	trail, err := record.ReadAudit(record.AuditPath(a.cfg.Campaign.StateDir))
	if err != nil {
		return err
	}
	if err := checkWitness(a.cfg, trail); err != nil {
		return err
	}
	gap, err := record.CrossCheck(entries, trail)
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
	unlock, err := record.LockState(sd)
	if err != nil {
		return "", err
	}
	defer unlock()
	key, err := LoadAuditKey(cfg, false)
	if err != nil {
		return "", err
	}
	entries, err := record.ReadJournal(journalPath(sd))
	if err != nil {
		return "", err
	}
	trail, err := record.ReadAudit(record.AuditPath(sd))
	if err != nil {
		return "", err
	}
	finding := checkWitness(cfg, trail)
	if finding == nil {
		_, finding = record.CrossCheck(entries, trail)
	}
	if finding == nil {
		return "", errors.New("audit accept: the journal and the audit trail agree; there is nothing to accept")
	}
	log, _, err := record.OpenAudit(record.AuditPath(sd), key)
	if err != nil {
		return "", err
	}
	defer log.Close()
	last := int64(0)
	if n := len(entries); n > 0 {
		last = entries[n-1].Seq
	}
	detail, _ := json.Marshal(record.AcceptDetail{JournalSeq: last, Finding: finding.Error()})
	e, err := log.Append(record.AuditEntry{Actor: by, Name: name, Action: record.ActionAccept, Subject: "journal and audit trail",
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
		if _, serr := os.Stat(record.AuditPath(sd)); errors.Is(serr, os.ErrNotExist) {
			return 0, nil // nothing recorded yet
		}
		return 0, err
	}
	n, err := record.VerifyAudit(record.AuditPath(sd), key)
	if err != nil {
		return n, fmt.Errorf("%s: %w", record.AuditPath(sd), err)
	}
	entries, err := record.ReadJournal(journalPath(sd))
	if err != nil {
		return n, err
	}
	trail, err := record.ReadAudit(record.AuditPath(sd))
	if err != nil {
		return n, err
	}
	if err := checkWitness(cfg, trail); err != nil {
		return n, err
	}
	gap, err := record.CrossCheck(entries, trail)
	if err != nil {
		return n, err
	}
	if len(gap) > 0 {
		return n, fmt.Errorf("%w: the audit trail lacks the journal's last entry, %d: a crash between the two writes, or the trail's last line was cut; the daemon adds it back, with its own time, at its next start", record.ErrRecordMismatch, gap[0].Seq)
	}
	return n, nil
}
