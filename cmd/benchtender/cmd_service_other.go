//go:build !windows

package main

import (
	"context"
	"flag"
	"io"
)

// cmdService is for Windows; elsewhere a service manager runs
// "benchtender run CONFIG" (examples/benchtender.service for systemd).
func cmdService(_ context.Context, args []string, _, _ io.Writer) error {
	if len(args) > 0 && isHelp(args[0]) {
		return helpRequest{flag.NewFlagSet("service", flag.ContinueOnError)}
	}
	return usageError{"service: installs a Windows service; on Linux use the systemd unit in examples/benchtender.service (README, Running as a service)"}
}
