//go:build !windows

package main

import (
	"context"
	"io"
)

// cmdService is for Windows; elsewhere a service manager runs
// "benchtender run CONFIG" (examples/benchtender.service for systemd).
func cmdService(_ context.Context, _ []string, _, _ io.Writer) error {
	return usageError{"service: installs a Windows service; on Linux use the systemd unit in examples/benchtender.service (README, Running as a service)"}
}
