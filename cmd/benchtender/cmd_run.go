package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"

	"github.com/rs/zerolog"

	"benchtender/agent"
	"benchtender/console"
)

// cmdRun runs the campaign until SIGINT or SIGTERM.
func cmdRun(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("run", flag.ContinueOnError)
	includeOld := fs.Bool("include-old", false, "ingest result files older than the watch's max_age too")
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
	opt := agent.Options{Logger: log, ConfigPath: pos[0], Tick: cfg.Instrument.LookEvery, IncludeOld: *includeOld}
	if cfg.Console.Listen == "" {
		a, err := agent.New(cfg, opt)
		if err != nil {
			return err
		}
		return a.Run(ctx)
	}
	// The console is part of the daemon: it must bind before the
	// campaign starts, and when either ends, both do.
	metrics := console.NewMetrics(cfg)
	srv, err := console.New(cfg, console.Options{Logger: log, ConfigPath: pos[0], Metrics: metrics})
	if err != nil {
		return err
	}
	if err := srv.Listen(); err != nil {
		return err
	}
	opt.Notify, opt.Observer = metrics.Entry, metrics
	a, err := agent.New(cfg, opt)
	if err != nil {
		return err
	}
	fmt.Fprintf(stdout, "console: http://%s/\n", srv.Addr())
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	served := make(chan error, 1)
	go func() { served <- srv.Serve(ctx) }()
	err = a.Run(ctx)
	cancel()
	if serr := <-served; err == nil && serr != nil && !errors.Is(serr, context.Canceled) {
		err = serr
	}
	return err
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
