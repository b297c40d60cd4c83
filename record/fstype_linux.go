//go:build linux

package record

import (
	"fmt"

	"golang.org/x/sys/unix"
)

// Network file system magic numbers (linux/magic.h; common practice to
// test them with statfs).
var networkFS = map[int64]string{
	0x6969:     "NFS",
	0x517B:     "SMB",
	0xFF534D42: "CIFS",
	0xFE534D42: "SMB2",
	0x65735546: "FUSE (sshfs and the like)",
	0x564c:     "NCP",
	0x73757245: "Coda",
	0x47504653: "GPFS",
	0x0BD00BD0: "Lustre",
}

// CheckLocalFS refuses a state folder on a network file system: locks and
// fsync there do not give the guarantees the journal needs.
func CheckLocalFS(dir string) error {
	var st unix.Statfs_t
	if err := unix.Statfs(dir, &st); err != nil {
		return fmt.Errorf("statfs %s: %w", dir, err)
	}
	if name, ok := networkFS[int64(st.Type)]; ok {
		return fmt.Errorf("%w: %s is on %s; keep the state folder on a local disk (file locks and fsync on network file systems do not protect the journal)", ErrNetworkFS, dir, name)
	}
	return nil
}
