package main

import (
	"context"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"

	"benchtender/console"
)

// cmdReport writes the campaign's report: one self-contained HTML file
// with the figures inline, for a lab notebook.
func cmdReport(ctx context.Context, args []string, stdout io.Writer) error {
	fs := flag.NewFlagSet("report", flag.ContinueOnError)
	config := fs.String("config", "", "configuration file")
	out := fs.String("out", "report.html", "file to write")
	pairX := fs.String("x", "", "first factor of the 2-D optimum map")
	pairY := fs.String("y", "", "second factor of the 2-D optimum map")
	pos, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	path, err := configArg(*config, pos, "report")
	if err != nil {
		return err
	}
	cfg, err := loadConfig(path)
	if err != nil {
		return err
	}
	v, err := console.Build(ctx, cfg, console.BuildOptions{Model: true, PairX: *pairX, PairY: *pairY})
	if err != nil {
		return err
	}
	if err := writeOut(*out, func(w io.Writer) error { return console.Report(w, v) }); err != nil {
		return fmt.Errorf("report: %w", err)
	}
	fmt.Fprintf(stdout, "report of campaign %s (%d runs, %d figures) written to %s\n", cfg.Campaign.Name, len(v.Runs), len(v.Figures), *out)
	return nil
}

// writeOut writes a file whole or not at all: into a temp file beside it,
// renamed into place once complete.
func writeOut(out string, write func(io.Writer) error) error {
	tmp, err := os.CreateTemp(filepath.Dir(out), ".benchtender-out-*.tmp")
	if err != nil {
		return err
	}
	defer os.Remove(tmp.Name())
	if err := tmp.Chmod(0o644); err != nil {
		tmp.Close()
		return err
	}
	if err := write(tmp); err != nil {
		tmp.Close()
		return err
	}
	if err := tmp.Close(); err != nil {
		return err
	}
	return os.Rename(tmp.Name(), out)
}
