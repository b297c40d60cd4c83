package main

import (
	"flag"
	"fmt"
	"io"
	"runtime/debug"
)

// cmdVersion prints the module version, the commit it was built from
// (with "modified" when the work tree had changes) and the Go version,
// from the build information the Go toolchain embeds.
func cmdVersion(args []string, stdout io.Writer) error {
	fs := flag.NewFlagSet("version", flag.ContinueOnError)
	pos, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	if len(pos) > 0 {
		return usageError{"version: takes no arguments"}
	}
	fmt.Fprintln(stdout, versionLine())
	return nil
}

// versionLine is "benchtender VERSION, commit REV[ (modified)], TIME, GO".
func versionLine() string {
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
