//go:build windows

package record

// syncDir is a no-op on Windows, where folders cannot be opened for fsync;
// NTFS makes the rename itself durable through its own log.
func syncDir(dir string) error { return nil }
