// Package version says which build of benchtender is running, from the
// build information the Go toolchain embeds, for the version command, the
// report and the export.
package version

import (
	"fmt"
	"runtime/debug"
)

// Line is "benchtender VERSION, commit REV[ (modified)], TIME, GO".
func Line() string {
	bi, ok := debug.ReadBuildInfo()
	if !ok {
		return "benchtender (no build information)"
	}
	version := bi.Main.Version
	if version == "" {
		version = "(devel)"
	}
	var rev, at, dirty string
	for _, s := range bi.Settings {
		switch s.Key {
		case "vcs.revision":
			rev = s.Value
		case "vcs.time":
			at = s.Value
		case "vcs.modified":
			if s.Value == "true" {
				dirty = " (modified)"
			}
		}
	}
	if rev == "" {
		rev = "unknown (the build holds no version-control information)"
	}
	line := fmt.Sprintf("benchtender %s, commit %s%s", version, rev, dirty)
	if at != "" {
		line += ", " + at
	}
	return line + ", " + bi.GoVersion
}
