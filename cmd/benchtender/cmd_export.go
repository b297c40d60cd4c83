package main

import (
	"flag"
	"fmt"
	"io"
	"path/filepath"
	"strings"
	"time"

	"benchtender/export"
	"benchtender/record"
)

// cmdExport writes the campaign's runs as data: RFC 4180 CSV, or JSON.
func cmdExport(args []string, stdout io.Writer) error {
	fs := flag.NewFlagSet("export", flag.ContinueOnError)
	config := fs.String("config", "", "configuration file")
	out := fs.String("out", "", "file to write (runs.csv, or runs.json with --json); - for standard output")
	asJSON := fs.Bool("json", false, "write JSON instead of CSV")
	pos, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	path, err := configArg(*config, pos, "export")
	if err != nil {
		return err
	}
	cfg, err := loadConfig(path)
	if err != nil {
		return err
	}
	entries, err := record.ReadJournal(filepath.Join(cfg.Campaign.StateDir, "journal.log"))
	if err != nil {
		return fmt.Errorf("export: %w", err)
	}
	doc := export.Build(cfg, entries, time.Now(), versionLine())
	write := doc.WriteCSV
	if *asJSON || strings.HasSuffix(strings.ToLower(*out), ".json") {
		write = doc.WriteJSON
	}
	switch *out {
	case "-":
		return write(stdout)
	case "":
		*out = "runs.csv"
		if *asJSON {
			*out = "runs.json"
		}
	}
	if err := writeOut(*out, write); err != nil {
		return fmt.Errorf("export: %w", err)
	}
	fmt.Fprintf(stdout, "%d runs of campaign %s written to %s\n", len(doc.Runs), cfg.Campaign.Name, *out)
	return nil
}
