package agent

import (
	"fmt"
	"os"
	"path/filepath"

	"benchtender/record"
)

// FolderProblems looks at every instrument's folders as the daemon would
// use them and says, in a line each, what is wrong: an export folder that
// does not exist or cannot be listed (results would never be seen; run
// holds handoffs to that instrument until it can be read), a handoff
// folder that does not exist, is not a folder or cannot be written. Each
// may be a share not mounted yet, so these are warnings for check, not
// refusals.
func (c Config) FolderProblems() []string {
	var out []string
	for _, ic := range c.Instruments {
		if _, err := os.ReadDir(ic.Watch.Dir); err != nil {
			out = append(out, fmt.Sprintf("instrument %s: export folder %s cannot be read (%v): results would never be seen, and run holds handoffs to this instrument until it can be read; check the path, or mount the share", ic.Name, ic.Watch.Dir, unwrapPath(err)))
		}
		fi, err := os.Stat(ic.HandoffDir)
		switch {
		case err != nil:
			out = append(out, fmt.Sprintf("instrument %s: handoff folder %s cannot be used (%v): run will not start until it exists", ic.Name, ic.HandoffDir, unwrapPath(err)))
		case !fi.IsDir():
			out = append(out, fmt.Sprintf("instrument %s: handoff folder %s is not a folder: run will not start", ic.Name, ic.HandoffDir))
		default:
			if err := probeWrite(ic.HandoffDir); err != nil {
				out = append(out, fmt.Sprintf("instrument %s: handoff folder %s cannot be written (%v): setpoints could not be handed off", ic.Name, ic.HandoffDir, unwrapPath(err)))
			}
		}
	}
	return out
}

// probeWrite creates and removes a temporary file (with the prefix the
// instrument is told to ignore) in dir.
func probeWrite(dir string) error {
	f, err := os.CreateTemp(dir, record.TempPrefix+"probe-*.tmp")
	if err != nil {
		return err
	}
	name := f.Name()
	f.Close()
	return os.Remove(name)
}

// unwrapPath drops the path from a *PathError, which the message already
// names.
func unwrapPath(err error) error {
	if pe, ok := err.(*os.PathError); ok {
		return pe.Err
	}
	return err
}

// exportLost reports whether instrument i's export folder is lost, as
// the watcher last said (or as found at start).
func (a *Agent) exportLost(i int) bool {
	return a.folderLost[filepath.Clean(a.cfg.Instruments[i].Watch.Dir)]
}
