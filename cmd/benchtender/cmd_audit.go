package main

import (
	"fmt"
	"io"
	"path/filepath"

	"benchtender/agent"
)

// cmdAudit verifies the audit trail's hash chain: `benchtender audit
// verify [--config C]`.
func cmdAudit(args []string, stdout io.Writer) error {
	if len(args) == 0 || args[0] != "verify" {
		return usageError{"audit: the only subcommand is verify"}
	}
	cfg, _, _, err := campaignFromArgs("audit verify", args[1:])
	if err != nil {
		return err
	}
	path := filepath.Join(cfg.Campaign.StateDir, "audit.log")
	n, err := agent.VerifyAudit(path)
	if err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	fmt.Fprintf(stdout, "%s: %d entries, the chain verifies\n", path, n)
	return nil
}
