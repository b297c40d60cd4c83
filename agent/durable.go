package agent

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"
)

// tempPrefix starts the name of every file the agent is still writing. It
// begins with a dot and the name ends in ".tmp", so instrument software
// that lists *.csv or skips hidden files never sees a half-written file.
const tempPrefix = ".benchtender-"

// writeFileAtomic writes data to dir/name so that a reader sees either no
// file or the whole file: write a temp file in the same folder, fsync it,
// rename it into place, fsync the folder.
func writeFileAtomic(dir, name string, data []byte, perm os.FileMode) error {
	return atomicWriter{}.write(dir, name, data, perm)
}

// atomicWriter is writeFileAtomic with its fsync replaceable, so that
// tests can make the disk fail where real disks fail.
type atomicWriter struct {
	sync func(*os.File) error // (*os.File).Sync when nil
}

func (w atomicWriter) write(dir, name string, data []byte, perm os.FileMode) error {
	sync := w.sync
	if sync == nil {
		sync = (*os.File).Sync
	}
	f, err := os.CreateTemp(dir, tempPrefix+name+".*.tmp")
	if err != nil {
		return fmt.Errorf("write %s: %w", filepath.Join(dir, name), err)
	}
	tmp := f.Name()
	fail := func(err error) error {
		f.Close()
		os.Remove(tmp)
		return fmt.Errorf("write %s: %w", filepath.Join(dir, name), err)
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
		return fmt.Errorf("write %s: %w", filepath.Join(dir, name), err)
	}
	if err := os.Rename(tmp, filepath.Join(dir, name)); err != nil {
		os.Remove(tmp)
		return fmt.Errorf("write %s: %w", filepath.Join(dir, name), err)
	}
	if err := syncDir(dir); err != nil {
		return fmt.Errorf("write %s: sync folder: %w", filepath.Join(dir, name), err)
	}
	return nil
}

// sweepTemp removes temp files left in dir by an earlier run that died
// while writing, and returns their names.
func sweepTemp(dir string) ([]string, error) {
	entries, err := os.ReadDir(dir)
	if err != nil {
		return nil, err
	}
	var removed []string
	for _, e := range entries {
		if e.Type().IsRegular() && strings.HasPrefix(e.Name(), tempPrefix) && strings.HasSuffix(e.Name(), ".tmp") {
			if err := os.Remove(filepath.Join(dir, e.Name())); err != nil {
				return removed, err
			}
			removed = append(removed, e.Name())
		}
	}
	return removed, nil
}

// tempTarget returns the file name a temp file was for:
// ".benchtender-R0001.csv.123.tmp" -> "R0001.csv".
func tempTarget(temp string) string {
	t := strings.TrimSuffix(strings.TrimPrefix(temp, tempPrefix), ".tmp")
	if i := strings.LastIndexByte(t, '.'); i >= 0 {
		t = t[:i]
	}
	return t
}
