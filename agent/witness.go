package agent

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"time"

	"benchtender/record"
)

// The witness: a copy of the audit trail's head, kept where the state
// folder's writers cannot reach (another disk, a share). It is one line,
// "<seq> <hash> <time>", rewritten durably after every audit entry. A
// trail that no longer holds the head its witness saw was cut or
// replaced.

// witnessPath is the witness file of cfg's campaign ("" when none is
// configured).
func witnessPath(cfg Config) string {
	if cfg.Audit.WitnessDir == "" {
		return ""
	}
	return filepath.Join(cfg.Audit.WitnessDir, cfg.Campaign.Name+".audit-head")
}

// writeWitness records the head; an error is reported, not fatal: the
// witness is a second copy, and the trail itself is already written.
func writeWitness(cfg Config, seq int64, hash string, at time.Time) error {
	dir := cfg.Audit.WitnessDir
	if dir == "" {
		return nil
	}
	line := fmt.Sprintf("%d %s %s\n", seq, hash, at.UTC().Format(time.RFC3339Nano))
	return record.WriteFileAtomic(dir, filepath.Base(witnessPath(cfg)), []byte(line), 0o644)
}

// checkWitness compares the trail with its witness: the trail must hold
// the witnessed entry with the witnessed hash. No witness file yet (a new
// campaign, or a witness folder just configured) is not a mismatch.
func checkWitness(cfg Config, trail []record.AuditEntry) error {
	path := witnessPath(cfg)
	if path == "" {
		return nil
	}
	data, err := os.ReadFile(path)
	if errors.Is(err, os.ErrNotExist) {
		return nil
	}
	if err != nil {
		return fmt.Errorf("audit witness %s: %w", path, err)
	}
	f := strings.Fields(string(data))
	if len(f) < 2 {
		return fmt.Errorf("%w: the witness %s holds no head", record.ErrRecordMismatch, path)
	}
	seq, err := strconv.Atoi(f[0])
	if err != nil || seq < 0 {
		return fmt.Errorf("%w: the witness %s holds no head", record.ErrRecordMismatch, path)
	}
	switch {
	case seq > len(trail):
		return fmt.Errorf("%w: the witness %s saw the audit trail at entry %d; it now ends at %d: entries were cut", record.ErrRecordMismatch, path, seq, len(trail))
	case seq > 0 && trail[seq-1].Hash != f[1]:
		return fmt.Errorf("%w: the witness %s saw another entry %d: the trail was replaced", record.ErrRecordMismatch, path, seq)
	}
	return nil
}
