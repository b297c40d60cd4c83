package main

import (
	"flag"
	"fmt"
	"io"
	"path/filepath"
	"time"

	"benchtender/agent"
)

// cmdAudit verifies the audit trail's hash chain: `benchtender audit
// verify [--config C]`.
func cmdAudit(args []string, stdout io.Writer) error {
	if len(args) > 0 && args[0] == "correct" {
		return cmdAuditCorrect(args[1:], stdout)
	}
	if len(args) > 0 && args[0] == "accept" {
		return cmdAuditAccept(args[1:], stdout)
	}
	if len(args) > 0 && isHelp(args[0]) {
		return helpRequest{flag.NewFlagSet("audit", flag.ContinueOnError)}
	}
	if len(args) == 0 || args[0] != "verify" {
		return usageError{"audit: the subcommands are verify, correct and accept"}
	}
	cfg, _, _, err := campaignFromArgs("audit verify", args[1:])
	if err != nil {
		return err
	}
	path := filepath.Join(cfg.Campaign.StateDir, "audit.log")
	n, err := agent.CheckRecord(cfg)
	if err != nil {
		return err
	}
	fmt.Fprintf(stdout, "%s: %d entries, the keyed chain verifies and the journal agrees with it\n", path, n)
	return nil
}

// cmdAuditCorrect adds a correction: a new entry pointing at the one it
// corrects (nothing in the trail is ever edited or deleted).
func cmdAuditCorrect(args []string, stdout io.Writer) error {
	fs := flag.NewFlagSet("audit correct", flag.ContinueOnError)
	config := fs.String("config", "", "configuration file")
	entry := fs.Int64("entry", 0, "the audit entry corrected (its seq)")
	by := fs.String("by", "", "user id (required)")
	name := fs.String("name", "", "printed name (required)")
	reason := fs.String("reason", "", "the correction (required)")
	pos, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	path, err := configArg(*config, pos, "audit correct")
	if err != nil {
		return err
	}
	if *entry < 1 || *by == "" || *name == "" || *reason == "" {
		return usageError{"audit correct: --entry, --by, --name and --reason are all required"}
	}
	cfg, err := loadConfig(path)
	if err != nil {
		return err
	}
	file, err := agent.RequestSignoff(cfg, agent.SignoffRequest{Action: agent.ActionCorrect, Corrects: *entry, By: *by, Name: *name, Reason: *reason})
	if err != nil {
		return err
	}
	fmt.Fprintf(stdout, "correction of audit entry %d by %s (%s) recorded in %s; the running campaign appends it\n", *entry, *name, *by, filepath.Base(file))
	return nil
}

// cmdAuditAccept records that a person has established what happened when
// the journal and the audit trail disagree (the daemon then refuses to
// start): an audited entry from which the check starts again. The daemon
// must not be running.
func cmdAuditAccept(args []string, stdout io.Writer) error {
	fs := flag.NewFlagSet("audit accept", flag.ContinueOnError)
	config := fs.String("config", "", "configuration file")
	by := fs.String("by", "", "user id (required)")
	name := fs.String("name", "", "printed name (required)")
	reason := fs.String("reason", "", "what was found and decided (required)")
	pos, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	path, err := configArg(*config, pos, "audit accept")
	if err != nil {
		return err
	}
	if *by == "" || *name == "" || *reason == "" {
		return usageError{"audit accept: --by, --name and --reason are all required"}
	}
	cfg, err := loadConfig(path)
	if err != nil {
		return err
	}
	what, err := agent.AcceptMismatch(cfg, *by, *name, *reason, time.Now())
	if err != nil {
		return err
	}
	fmt.Fprintf(stdout, "recorded as %s\nthe daemon checks the record from here on\n", what)
	return nil
}
