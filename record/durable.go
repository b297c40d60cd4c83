package record

import (
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
)

// TempPrefix starts the name of every file the agent is still writing. It
// begins with a dot and the name ends in ".tmp", so instrument software
// that lists *.csv or skips hidden files never sees a half-written file.
const TempPrefix = ".benchtender-"

// WriteFileAtomic writes data to dir/name so that a reader sees either no
// file or the whole file: write a temp file in the same folder, fsync it,
// rename it into place, fsync the folder.
func WriteFileAtomic(dir, name string, data []byte, perm os.FileMode) error {
	return Writer{}.Write(dir, name, data, perm)
}

// Staged is a file written and synced under a temp name beside its
// target: complete on disk, not yet visible under its own name.
type Staged interface {
	// Commit renames the file into place and syncs the folder. After an
	// error wrapping ErrInPlace the file is visible although the
	// folder's sync failed; after any other error it is not, and the
	// temp file is gone.
	Commit() error
	// Abort removes the temp file.
	Abort()
}

// ErrInPlace marks a Commit error after the rename: the file is visible
// under its name, but the rename may not survive a power cut.
var ErrInPlace = errors.New("file in place, folder not synced")

// Writer is WriteFileAtomic with its fsync replaceable, so that
// tests can make the disk fail where real disks fail.
type Writer struct {
	Sync func(*os.File) error // (*os.File).Sync when nil
}

// Write writes data to dir/name atomically (see WriteFileAtomic).
func (w Writer) Write(dir, name string, data []byte, perm os.FileMode) error {
	st, err := w.Stage(dir, name, data, perm)
	if err != nil {
		return err
	}
	return st.Commit()
}

// Stage writes data to a temp file in dir and fsyncs it. A handoff is
// staged before its intent is journalled, so that after a crash a missing
// temp file and a missing target together mean the instrument took it.
func (w Writer) Stage(dir, name string, data []byte, perm os.FileMode) (Staged, error) {
	sync := w.Sync
	if sync == nil {
		sync = (*os.File).Sync
	}
	f, err := os.CreateTemp(dir, TempPrefix+name+".*.tmp")
	if err != nil {
		return nil, fmt.Errorf("write %s: %w", filepath.Join(dir, name), err)
	}
	tmp := f.Name()
	fail := func(err error) (Staged, error) {
		f.Close()
		os.Remove(tmp)
		return nil, fmt.Errorf("write %s: %w", filepath.Join(dir, name), err)
	}
	if _, err := f.Write(data); err != nil {
		return fail(err)
	}
	if err := f.Chmod(perm); err != nil && !errors.Is(err, errors.ErrUnsupported) {
		return fail(err)
	}
	// An fsync error means the data may not be on disk: the temp file is
	// removed and the error returned, never retried as if it worked.
	if err := sync(f); err != nil {
		return fail(err)
	}
	if err := f.Close(); err != nil {
		os.Remove(tmp)
		return nil, fmt.Errorf("write %s: %w", filepath.Join(dir, name), err)
	}
	return stagedFile{dir: dir, name: name, tmp: tmp}, nil
}

type stagedFile struct{ dir, name, tmp string }

func (s stagedFile) Commit() error {
	target := filepath.Join(s.dir, s.name)
	if err := os.Rename(s.tmp, target); err != nil {
		os.Remove(s.tmp)
		return fmt.Errorf("write %s: %w", target, err)
	}
	if err := syncDir(s.dir); err != nil {
		return fmt.Errorf("write %s: sync folder: %w: %w", target, ErrInPlace, err)
	}
	return nil
}

func (s stagedFile) Abort() { os.Remove(s.tmp) }

// SweptFile is a temp file removed by SweepTemp, with its first bytes.
type SweptFile struct{ Name, Head string }

// SweepTemp removes temp files left in dir by an earlier run that died
// while writing, and returns their names and first 4 KiB.
func SweepTemp(dir string) ([]SweptFile, error) {
	entries, err := os.ReadDir(dir)
	if err != nil {
		return nil, err
	}
	var removed []SweptFile
	for _, e := range entries {
		if e.Type().IsRegular() && strings.HasPrefix(e.Name(), TempPrefix) && strings.HasSuffix(e.Name(), ".tmp") {
			path := filepath.Join(dir, e.Name())
			head := readHead(path, 4096)
			if err := os.Remove(path); err != nil {
				return removed, err
			}
			removed = append(removed, SweptFile{Name: e.Name(), Head: head})
		}
	}
	return removed, nil
}

// readHead returns up to n bytes from the start of a file ("" when it
// cannot be read).
func readHead(path string, n int) string {
	f, err := os.Open(path)
	if err != nil {
		return ""
	}
	defer f.Close()
	b := make([]byte, n)
	k, _ := io.ReadFull(f, b)
	return string(b[:k])
}

// TempTarget returns the file name a temp file was for:
// ".benchtender-R0001.csv.123.tmp" -> "R0001.csv".
func TempTarget(temp string) string {
	t := strings.TrimSuffix(strings.TrimPrefix(temp, TempPrefix), ".tmp")
	if i := strings.LastIndexByte(t, '.'); i >= 0 {
		t = t[:i]
	}
	return t
}
