package agent

import (
	"crypto/rand"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"

	"benchtender/record"
)

// AuditConfig is the [audit] section: where the audit trail's key is
// kept.
type AuditConfig struct {
	// KeyFile holds the secret key of the audit trail's keyed chain (64
	// hex digits). It must be kept apart from the state folder: anyone
	// who has the key and the trail can rewrite the trail. Default: a file
	// named after the campaign in the user's configuration folder
	// (os.UserConfigDir()/benchtender/audit-keys/).
	KeyFile string `toml:"key_file"`
	// WitnessDir, when set, is a folder on another disk or share where
	// the trail's head (sequence, hash, time) is copied after every
	// entry: an independent witness. At start and in audit verify the
	// trail must still hold that head; cutting the trail and the journal
	// together is then found too.
	WitnessDir string `toml:"witness_dir"`
}

// AuditKeyPath is the key file in force for cfg.
func AuditKeyPath(cfg Config) (string, error) {
	if cfg.Audit.KeyFile != "" {
		return cfg.Audit.KeyFile, nil
	}
	dir, err := os.UserConfigDir()
	if err != nil {
		return "", fmt.Errorf("audit key: no user configuration folder (%v); set [audit] key_file", err)
	}
	abs, _ := filepath.Abs(cfg.Campaign.StateDir)
	sum := sha256.Sum256([]byte(abs))
	return filepath.Join(dir, "benchtender", "audit-keys", cfg.Campaign.Name+"-"+hex.EncodeToString(sum[:4])+".key"), nil
}

// ErrAuditKey means the audit trail's key is missing or unreadable while
// the trail has entries: nothing may be written to or verified against the
// trail, and a new key is never made for an existing trail.
var ErrAuditKey = errors.New("audit trail key unavailable")

// LoadAuditKey returns the key of cfg's audit trail. With create, a new
// key is made (0600, in a folder of mode 0700) when there is none and the
// trail is empty or absent; a trail with entries and no key is
// ErrAuditKey, always.
func LoadAuditKey(cfg Config, create bool) ([]byte, error) {
	path, err := AuditKeyPath(cfg)
	if err != nil {
		return nil, err
	}
	data, err := os.ReadFile(path)
	switch {
	case err == nil:
		key, derr := hex.DecodeString(strings.TrimSpace(string(data)))
		if derr != nil || len(key) != 32 {
			return nil, fmt.Errorf("%w: %s does not hold 64 hex digits", ErrAuditKey, path)
		}
		return key, nil
	case !errors.Is(err, os.ErrNotExist):
		return nil, fmt.Errorf("%w: %v", ErrAuditKey, err)
	}
	if fi, serr := os.Stat(record.AuditPath(cfg.Campaign.StateDir)); serr == nil && fi.Size() > 0 {
		return nil, fmt.Errorf("%w: %s is missing but the audit trail %s has entries; restore the key from your backup (a new key is never made for an existing trail)", ErrAuditKey, path, record.AuditPath(cfg.Campaign.StateDir))
	}
	if !create {
		return nil, fmt.Errorf("%w: %s does not exist (the daemon makes it at its first start)", ErrAuditKey, path)
	}
	key := make([]byte, 32)
	if _, err := rand.Read(key); err != nil {
		return nil, fmt.Errorf("audit key: %w", err)
	}
	if err := os.MkdirAll(filepath.Dir(path), 0o700); err != nil {
		return nil, fmt.Errorf("audit key: %w", err)
	}
	f, err := os.OpenFile(path, os.O_WRONLY|os.O_CREATE|os.O_EXCL, 0o600)
	if err != nil {
		return nil, fmt.Errorf("audit key: %w", err)
	}
	if _, err := f.WriteString(hex.EncodeToString(key) + "\n"); err != nil {
		f.Close()
		return nil, fmt.Errorf("audit key: %w", err)
	}
	if err := f.Sync(); err != nil {
		f.Close()
		return nil, fmt.Errorf("audit key: %w", err)
	}
	return key, f.Close()
}
