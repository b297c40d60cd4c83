package agent

import (
	"fmt"
	"os"
	"path/filepath"
	"time"
)

// quarantine copies a refused result file into dir, with a text file
// beside it saying why. The original is never moved, changed or deleted.
// Names start with the content hash, so quarantining the same content again
// overwrites the same pair. It returns the copy's path.
func quarantine(dir, src, sha string, data []byte, reason string, now time.Time) (string, error) {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return "", fmt.Errorf("quarantine %s: %w", src, err)
	}
	name := sha[:16] + "-" + filepath.Base(src)
	if err := writeFileAtomic(dir, name, data, 0o644); err != nil {
		return "", fmt.Errorf("quarantine %s: %w", src, err)
	}
	note := fmt.Sprintf("file:     %s\nsha256:   %s\nrefused:  %s\nreason:   %s\n\nThe original file was left where it was, unchanged.\n",
		src, sha, now.UTC().Format(time.RFC3339), reason)
	if err := writeFileAtomic(dir, name+".reason.txt", []byte(note), 0o644); err != nil {
		return "", fmt.Errorf("quarantine %s: %w", src, err)
	}
	return filepath.Join(dir, name), nil
}
