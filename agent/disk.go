package agent

import (
	"errors"
	"os"
	"path/filepath"

	"benchtender/record"
	"benchtender/watch"
)

// storageError marks a failure to write the journal or the audit trail
// (a full or read-only disk, a failed fsync). The agent does not exit on
// one: it stops handing off and proposing, and waits for room.
type storageError struct{ err error }

func (e storageError) Error() string { return e.err.Error() }
func (e storageError) Unwrap() error { return e.err }

// reserveBytes is the room kept on the state folder's disk for the
// journal and the audit trail: a file of this size is deleted the moment a
// write fails, so that the agent can still record what happened and what
// it does about it.
const reserveBytes = 256 << 10

func reservePath(stateDir string) string { return filepath.Join(stateDir, "reserve") }

// makeReserve creates the reserve file if it is missing.
func makeReserve(stateDir string) error {
	path := reservePath(stateDir)
	if fi, err := os.Stat(path); err == nil && fi.Size() >= reserveBytes {
		return nil
	}
	return record.WriteFileAtomic(stateDir, "reserve", make([]byte, reserveBytes), 0o644)
}

// enterDegraded stops handoffs after a storage error: it frees the
// reserve, reopens the journal and the audit trail from what is really on
// disk (a failed fsync is never taken as a success), and records the
// trouble if there is room to.
func (a *Agent) enterDegraded(cause error) {
	if a.storage == "" {
		a.log.Error().Err(cause).Msg("cannot write the journal or the audit trail: every handoff halted until there is room again")
	}
	a.storage = cause.Error()
	os.Remove(reservePath(a.cfg.Campaign.StateDir))
	if err := a.reopen(); err != nil {
		a.log.Error().Err(err).Msg("cannot reopen the journal yet; will retry")
		return
	}
	if err := a.auditNote("storage trouble", a.cfg.Campaign.StateDir, "handoffs halted: "+a.storage); err != nil {
		a.log.Error().Err(err).Msg("cannot even record the storage trouble; will retry")
		a.closeStores()
	}
}

// tryRecover, while degraded, resumes once the disk has room again for
// the reserve and some more.
func (a *Agent) tryRecover() {
	sd := a.cfg.Campaign.StateDir
	if free, ok := freeBytes(sd); ok && free < 4*reserveBytes {
		return
	}
	if !a.journal.Usable() || !a.audit.Usable() {
		if err := a.reopen(); err != nil {
			return
		}
	}
	if err := makeReserve(sd); err != nil {
		return
	}
	was := a.storage
	a.storage = ""
	if err := a.auditNote("storage recovered", sd, "room again on the state folder's disk; handoffs resume (was: "+was+")"); err != nil {
		a.enterDegraded(err)
		return
	}
	a.log.Info().Msg("room again on the state folder's disk; handoffs resume")
	retry := a.retry
	a.retry = nil
	for _, f := range retry {
		if err := a.ingest(f); err != nil {
			a.noteStorage(err, f)
			return
		}
	}
}

// reopen closes and reopens the journal and the audit trail, replays the
// journal and audits what it holds beyond the trail.
func (a *Agent) reopen() error {
	a.closeStores()
	sd := a.cfg.Campaign.StateDir
	audit, _, err := record.OpenAudit(record.AuditPath(sd), a.auditKey)
	if err != nil {
		return err
	}
	j, entries, _, err := record.OpenJournal(journalPath(sd))
	if err != nil {
		audit.Close()
		return err
	}
	a.audit, a.journal, a.state = audit, j, record.Replay(entries)
	return a.reconcile(entries)
}

func (a *Agent) closeStores() {
	if a.journal != nil {
		a.journal.Close()
	}
	if a.audit != nil {
		a.audit.Close()
	}
}

// noteStorage handles an error from a step: a storage error makes the
// agent degraded (and the file, if any, is kept to ingest later); any
// other error is returned.
func (a *Agent) noteStorage(err error, file watch.File) error {
	var se storageError
	if !errors.As(err, &se) {
		return err
	}
	if file.Path != "" {
		a.retry = append(a.retry, file)
	}
	a.enterDegraded(se.err)
	return nil
}
