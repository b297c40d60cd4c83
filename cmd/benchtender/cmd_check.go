package main

import (
	"errors"
	"flag"
	"fmt"
	"io"

	"benchtender/agent"
	"benchtender/parsers"
)

// cmdCheck validates a configuration file and prints every problem with
// its line and key.
func cmdCheck(args []string, stdout io.Writer) error {
	fs := flag.NewFlagSet("check", flag.ContinueOnError)
	pos, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	if len(pos) != 1 {
		return usageError{"check: give one CONFIG file"}
	}
	cfg, err := loadConfig(pos[0])
	if err != nil {
		return err
	}
	for _, w := range append(cfg.Warnings(), cfg.FolderProblems()...) {
		fmt.Fprintf(stdout, "warning: %s\n", w)
	}
	fmt.Fprintf(stdout, "%s: campaign %s is valid: %d factors, response %s (%s), instrument %s\n",
		pos[0], cfg.Campaign.Name, cfg.Campaign.Factors.Dim(), cfg.Campaign.Response.Name, cfg.Campaign.Response.Goal, cfg.Instrument.Name)
	return nil
}

// loadConfig loads and validates a configuration; a file that does not
// validate becomes a configError (exit code 2).
func loadConfig(path string) (agent.Config, error) {
	cfg, err := agent.LoadConfig(path, parsers.Default())
	var ce *agent.ConfigError
	if errors.As(err, &ce) {
		return cfg, configError{err}
	}
	if err != nil {
		return cfg, configError{err}
	}
	return cfg, nil
}
