package main

import (
	"context"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"

	"github.com/rs/zerolog"

	"benchtender/agent"
)

// cmdRun runs the campaign until SIGINT or SIGTERM.
func cmdRun(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("run", flag.ContinueOnError)
	pos, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	if len(pos) != 1 {
		return usageError{"run: give one CONFIG file"}
	}
	cfg, err := loadConfig(pos[0])
	if err != nil {
		return err
	}
	log, closeLog, err := newLogger(cfg, stderr, true)
	if err != nil {
		return err
	}
	defer closeLog()
	for _, w := range cfg.Warnings() {
		log.Warn().Msg(w)
	}
	a, err := agent.New(cfg, agent.Options{Logger: log, ConfigPath: pos[0], Tick: cfg.Instrument.LookEvery})
	if err != nil {
		return err
	}
	return a.Run(ctx)
}

// newLogger returns a logger writing JSON lines to the configured log file
// (for lab IT) and, when terminal is set, readable lines to stderr.
func newLogger(cfg agent.Config, stderr io.Writer, terminal bool) (zerolog.Logger, func(), error) {
	level, err := zerolog.ParseLevel(cfg.Log.Level)
	if err != nil {
		return zerolog.Nop(), nil, fmt.Errorf("log.level: %w", err)
	}
	var writers []io.Writer
	closeFn := func() {}
	if cfg.Log.File != "" {
		if err := os.MkdirAll(filepath.Dir(cfg.Log.File), 0o755); err != nil {
			return zerolog.Nop(), nil, fmt.Errorf("log file: %w", err)
		}
		f, err := os.OpenFile(cfg.Log.File, os.O_CREATE|os.O_WRONLY|os.O_APPEND, 0o644)
		if err != nil {
			return zerolog.Nop(), nil, fmt.Errorf("log file: %w", err)
		}
		writers = append(writers, f)
		closeFn = func() { f.Close() }
	}
	if terminal {
		writers = append(writers, zerolog.ConsoleWriter{Out: stderr, TimeFormat: "15:04:05"})
	}
	if len(writers) == 0 {
		return zerolog.Nop(), closeFn, nil
	}
	return zerolog.New(zerolog.MultiLevelWriter(writers...)).Level(level).With().Timestamp().Logger(), closeFn, nil
}
