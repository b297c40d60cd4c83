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

// cmdRun runs one or more campaigns in one process until SIGINT or
// SIGTERM. Every config is checked before anything starts; when one
// campaign stops with an error, all stop (a service manager restarts the
// process, and every campaign recovers from its journal).
func cmdRun(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("run", flag.ContinueOnError)
	includeOld := fs.Bool("include-old", false, "ingest result files older than the watch's max_age too")
	pos, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	if len(pos) == 0 {
		return usageError{"run: give one or more CONFIG files"}
	}
	var cfgs []agent.Config
	for _, p := range pos {
		cfg, err := loadConfig(p)
		if err != nil {
			return err
		}
		cfgs = append(cfgs, cfg)
	}
	if err := distinctCampaigns(pos, cfgs); err != nil {
		return err
	}
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	var runs []func() error
	for i, cfg := range cfgs {
		run, closeLog, err := prepareCampaign(ctx, pos[i], cfg, *includeOld, stdout, stderr)
		if err != nil {
			return err
		}
		defer closeLog()
		runs = append(runs, run)
	}
	errs := make(chan error, len(runs))
	for _, run := range runs {
		go func() { errs <- run() }()
	}
	var first error
	for range runs {
		if err := <-errs; err != nil && first == nil {
			first = err
			cancel()
		}
	}
	return first
}

// distinctCampaigns refuses two configs that share a state folder, an
// export folder or a handoff folder: each campaign has its own.
func distinctCampaigns(paths []string, cfgs []agent.Config) error {
	seen := map[string]string{}
	for i, c := range cfgs {
		dirs := [][2]string{{"state folder", c.Campaign.StateDir}}
		for _, ic := range c.Instruments {
			dirs = append(dirs, [2]string{"export folder", ic.Watch.Dir}, [2]string{"handoff folder", ic.HandoffDir})
		}
		for _, d := range dirs {
			key := d[0] + "\x00" + filepath.Clean(d[1])
			if other, ok := seen[key]; ok && other != paths[i] {
				return configError{fmt.Errorf("%s and %s use the same %s %s; each campaign needs its own", other, paths[i], d[0], d[1])}
			} else if ok {
				return configError{fmt.Errorf("%s is given twice (the same state folder %s)", paths[i], c.Campaign.StateDir)}
			}
			seen[key] = paths[i]
		}
	}
	return nil
}

// prepareCampaign sets up one campaign (its log, its console if any, its
// agent) and returns the function that runs it until ctx ends.
func prepareCampaign(ctx context.Context, path string, cfg agent.Config, includeOld bool, stdout, stderr io.Writer) (func() error, func(), error) {
	log, closeLog, err := newLogger(cfg, stderr, true)
	if err != nil {
		return nil, nil, err
	}
	for _, w := range cfg.Warnings() {
		log.Warn().Msg(w)
	}
	opt := agent.Options{Logger: log, ConfigPath: path, Tick: cfg.Instrument.LookEvery, IncludeOld: includeOld}
	if cfg.Console.Listen == "" {
		a, err := agent.New(cfg, opt)
		if err != nil {
			closeLog()
			return nil, nil, err
		}
		return func() error { return a.Run(ctx) }, closeLog, nil
	}
	// The console is part of the daemon: it binds before the campaign
	// starts, and when either ends, both do.
	metrics := console.NewMetrics(cfg)
	srv, err := console.New(cfg, console.Options{Logger: log, ConfigPath: path, Metrics: metrics})
	if err != nil {
		closeLog()
		return nil, nil, err
	}
	if err := srv.Listen(); err != nil {
		closeLog()
		return nil, nil, err
	}
	opt.Notify, opt.Observer = metrics.Entry, metrics
	a, err := agent.New(cfg, opt)
	if err != nil {
		closeLog()
		return nil, nil, err
	}
	fmt.Fprintf(stdout, "console of %s: http://%s/\n", cfg.Campaign.Name, srv.Addr())
	return func() error {
		cctx, cancel := context.WithCancel(ctx)
		defer cancel()
		served := make(chan error, 1)
		go func() { served <- srv.Serve(cctx) }()
		err := a.Run(cctx)
		cancel()
		if serr := <-served; err == nil && serr != nil && !errors.Is(serr, context.Canceled) {
			err = serr
		}
		return err
	}, closeLog, nil
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
		// Colour only on a terminal: redirected to a file or a service
		// manager's journal, escape codes would be written into it.
		writers = append(writers, zerolog.ConsoleWriter{Out: stderr, TimeFormat: "15:04:05", NoColor: !isTerminal(stderr)})
	}
	if len(writers) == 0 {
		return zerolog.Nop(), closeFn, nil
	}
	return zerolog.New(zerolog.MultiLevelWriter(writers...)).Level(level).With().Timestamp().Str("campaign", cfg.Campaign.Name).Logger(), closeFn, nil
}

// isTerminal reports whether w is a character device (a terminal), not a
// file or a pipe.
func isTerminal(w io.Writer) bool {
	f, ok := w.(*os.File)
	if !ok {
		return false
	}
	fi, err := f.Stat()
	return err == nil && fi.Mode()&os.ModeCharDevice != 0
}
