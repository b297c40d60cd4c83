package main

import (
	"flag"
	"fmt"
	"io"

	"benchtender/internal/version"
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

func versionLine() string { return version.Line() }
