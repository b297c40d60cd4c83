//go:build !windows

package record

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"

	"golang.org/x/sys/unix"
)

// LockState takes the state folder's exclusive lock, so that a second
// agent on the same folder refuses to start. The kernel drops the lock
// when the process dies, so a crash never leaves a stale lock.
func LockState(dir string) (func(), error) {
	path := filepath.Join(dir, "lock")
	f, err := os.OpenFile(path, os.O_CREATE|os.O_RDWR, 0o644)
	if err != nil {
		return nil, fmt.Errorf("lock %s: %w", path, err)
	}
	if err := unix.Flock(int(f.Fd()), unix.LOCK_EX|unix.LOCK_NB); err != nil {
		holder, _ := os.ReadFile(path)
		f.Close()
		if errors.Is(err, unix.EWOULDBLOCK) {
			return nil, fmt.Errorf("%w: %s is locked by %s", ErrLocked, dir, strings.TrimSpace(string(holder)))
		}
		return nil, fmt.Errorf("lock %s: %w", path, err)
	}
	f.Truncate(0)
	fmt.Fprintf(f, "process %d\n", os.Getpid())
	f.Sync()
	return func() { unix.Flock(int(f.Fd()), unix.LOCK_UN); f.Close() }, nil
}
