package agent

import (
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"os"
	"path/filepath"

	"benchtender/record"
	"benchtender/watch"
)

// maxResultFile is the largest result file read (instrument exports are
// kilobytes; this bounds what a runaway writer can make the agent hold).
const maxResultFile = 64 << 20

// errTooLarge marks a result file over maxResultFile: refused, with a
// note, and not read.
var errTooLarge = errors.New("over the size limit for a result file")

// readExport reads a result file through an os.Root on the export folder:
// no name, ".." part or symbolic link can lead the read out of it. The
// export folder is only ever read.
func (a *Agent) readExport(f watch.File) ([]byte, error) {
	rel := f.Rel
	if rel == "" {
		var err error
		if rel, err = filepath.Rel(a.cfg.Instruments[a.instrumentOf(f.Path)].Watch.Dir, f.Path); err != nil {
			return nil, fmt.Errorf("read %s: %w", watch.Quote(f.Path), err)
		}
	}
	if !filepath.IsLocal(rel) {
		return nil, fmt.Errorf("read %s: %q is not a path inside the export folder", watch.Quote(f.Path), rel)
	}
	root, err := os.OpenRoot(a.cfg.Instruments[a.instrumentOf(f.Path)].Watch.Dir)
	if err != nil {
		return nil, fmt.Errorf("read %s: %w", watch.Quote(f.Path), err)
	}
	defer root.Close()
	fi, err := root.Stat(rel)
	if err != nil {
		return nil, fmt.Errorf("read %s: %w", watch.Quote(f.Path), err)
	}
	if fi.Size() > maxResultFile {
		return nil, fmt.Errorf("%w: %s has %d bytes, the limit is %d", errTooLarge, watch.Quote(f.Path), fi.Size(), maxResultFile)
	}
	return root.ReadFile(rel)
}

// archivePath is where the content with hash sha is kept: the state
// folder's archive, fanned out by the hash's first two hex digits.
func archivePath(stateDir, sha string) string {
	return filepath.Join(stateDir, "archive", sha[:2], sha)
}

// archive keeps a true copy of an ingested file, named by its SHA-256,
// so the record survives the instrument PC purging its exports. The same
// content is kept once, read-only, no more readable than the original
// (mode). It returns the copy's path.
func archive(stateDir, sha string, data []byte, mode os.FileMode) (string, error) {
	path := archivePath(stateDir, sha)
	if b, err := os.ReadFile(path); err == nil {
		if sum := sha256.Sum256(b); hex.EncodeToString(sum[:]) == sha {
			return path, nil
		}
		// A damaged copy is replaced below.
	} else if !errors.Is(err, os.ErrNotExist) {
		return "", fmt.Errorf("archive: %w", err)
	}
	dir := filepath.Dir(path)
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return "", fmt.Errorf("archive: %w", err)
	}
	if err := record.WriteFileAtomic(dir, sha, data, mode&0o444); err != nil {
		return "", fmt.Errorf("archive: %w", err)
	}
	return path, nil
}

// refuseName records a file the watcher found but would not let be read
// (a hostile name, a link out of the folder): a note in the quarantine
// folder says why; nothing of the file is read or copied. Recorded once,
// also across restarts.
func (a *Agent) refuseName(f watch.File) error {
	return a.refuseUnread(f.Path, f.Problem)
}

// refuseUnread records a file refused without reading it (its name, its
// size): a note in the quarantine folder says why; recorded once, also
// across restarts.
func (a *Agent) refuseUnread(path, problem string) error {
	f := watch.File{Path: path, Problem: problem}
	if a.state.Refused[f.Path] {
		return nil
	}
	dir := filepath.Join(a.cfg.Campaign.StateDir, "quarantine")
	if err := os.MkdirAll(dir, 0o755); err != nil {
		a.log.Error().Err(err).Msg("cannot write the quarantine note")
		return nil
	}
	sum := sha256.Sum256([]byte(f.Path))
	name := "name-" + hex.EncodeToString(sum[:8]) + ".reason.txt"
	note := fmt.Sprintf("file:     %s\nrefused:  %s\nreason:   %s\n\nThe file was not read, moved or changed.\n",
		watch.Quote(f.Path), a.opt.Now().UTC().Format("2006-01-02T15:04:05Z"), f.Problem)
	if err := record.WriteFileAtomic(dir, name, []byte(note), 0o644); err != nil {
		a.log.Error().Err(err).Msg("cannot write the quarantine note")
		return nil
	}
	a.log.Warn().Str("file", f.Path).Str("reason", f.Problem).Msg("result file refused; not read")
	return a.record(record.Entry{Kind: record.KindQuarantine, File: f.Path, Reason: f.Problem, Copy: filepath.Join(dir, name)})
}
