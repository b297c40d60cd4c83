//go:build windows

package agent

import "golang.org/x/sys/windows"

// freeBytes is the room left for the caller on dir's disk.
func freeBytes(dir string) (int64, bool) {
	p, err := windows.UTF16PtrFromString(dir)
	if err != nil {
		return 0, false
	}
	var free, total, all uint64
	if windows.GetDiskFreeSpaceEx(p, &free, &total, &all) != nil {
		return 0, false
	}
	return int64(free), true
}
