package agent

import (
	"fmt"
	"os"
	"path/filepath"
	"time"
	"unicode/utf8"

	"benchtender/record"
)

// maxQuarantineBase bounds the part of a quarantined copy's name taken
// from the original's, in bytes, so that the copy's name, its note's and
// their temp names stay well under the 255 bytes file systems allow.
const maxQuarantineBase = 80

// quarantineName is the copy's name: the content hash's first 16 hex
// digits, then the original name cut to maxQuarantineBase bytes (on a
// character boundary, keeping its extension where it fits). The full
// original name is in the note.
func quarantineName(src, sha string) string {
	base := filepath.Base(src)
	if len(base) > maxQuarantineBase {
		ext := filepath.Ext(base)
		if len(ext) > 16 {
			ext = ""
		}
		keep := maxQuarantineBase - len(ext) - 1
		for keep > 0 && !utf8.RuneStart(base[keep]) {
			keep--
		}
		base = base[:keep] + "~" + ext
	}
	return sha[:16] + "-" + base
}

// quarantine copies a refused result file into dir, with a text file
// beside it saying why. The original is never moved, changed or deleted.
// Names start with the content hash, so quarantining the same content again
// overwrites the same pair; the copy is no more readable than the original
// (mode). It returns the copy's path.
func quarantine(dir, src, sha string, data []byte, reason string, now time.Time, mode os.FileMode) (string, error) {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return "", fmt.Errorf("quarantine %s: %w", src, err)
	}
	name := quarantineName(src, sha)
	if err := record.WriteFileAtomic(dir, name, data, mode&0o666); err != nil {
		return "", fmt.Errorf("quarantine %s: %w", src, err)
	}
	note := fmt.Sprintf("file:     %s\nsha256:   %s\nrefused:  %s\nreason:   %s\n\nThe original file was left where it was, unchanged.\n",
		src, sha, now.UTC().Format(time.RFC3339), reason)
	if err := record.WriteFileAtomic(dir, name+".reason.txt", []byte(note), mode&0o666|0o600); err != nil {
		return "", fmt.Errorf("quarantine %s: %w", src, err)
	}
	return filepath.Join(dir, name), nil
}

// modeOf returns the permission bits of the file at path, or 0o600 (owner
// only) when they cannot be read.
func modeOf(path string) os.FileMode {
	fi, err := os.Stat(path)
	if err != nil {
		return 0o600
	}
	return fi.Mode().Perm()
}
