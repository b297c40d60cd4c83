//go:build !windows

package agent

import "golang.org/x/sys/unix"

// freeBytes is the room left for an unprivileged writer on dir's disk.
func freeBytes(dir string) (int64, bool) {
	var st unix.Statfs_t
	if unix.Statfs(dir, &st) != nil {
		return 0, false
	}
	return int64(st.Bavail) * int64(st.Bsize), true
}
