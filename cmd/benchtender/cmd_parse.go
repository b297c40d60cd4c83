package main

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"sort"

	"benchtender/parsers"
)

// errWouldRefuse marks a file that the agent would quarantine or hold
// back; its reason has been printed.
var errWouldRefuse = errors.New("the file would not be ingested")

// cmdParse shows what would be ingested from a result file: every value
// with the line and column it came from, the run id, units and warnings.
// This is how a new instrument is hooked in: write the format, try it on a
// sample file, repeat.
func cmdParse(args []string, stdout io.Writer) error {
	fs := flag.NewFlagSet("parse", flag.ContinueOnError)
	config := fs.String("config", "", "configuration file (required)")
	format := fs.String("format", "", "format name in [formats] (default: the instrument's)")
	pos, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	if len(pos) != 1 || *config == "" {
		return usageError{"parse: give --config CONFIG and one FILE"}
	}
	cfg, err := loadConfig(*config)
	if err != nil {
		return err
	}
	name := *format
	if name == "" {
		name = cfg.Instrument.Format
	}
	spec, ok := cfg.Formats[name]
	if !ok {
		names := make([]string, 0, len(cfg.Formats))
		for n := range cfg.Formats {
			names = append(names, n)
		}
		sort.Strings(names)
		return usageError{fmt.Sprintf("parse: no format %q (have %v)", name, names)}
	}
	p, err := parsers.Default().New(spec)
	if err != nil {
		return err
	}
	file := pos[0]
	data, err := os.ReadFile(file)
	if err != nil {
		return err
	}
	rec, err := p.Parse(file, data)
	if errors.Is(err, parsers.ErrIncomplete) {
		fmt.Fprintf(stdout, "%v\nthe agent would wait for the file to be completed, and quarantine it after %v\n", err, spec.IncompleteTimeout)
		return errWouldRefuse
	}
	if err != nil {
		fmt.Fprintf(stdout, "%v\nthe agent would quarantine this file (a copy, with this reason beside it; the original stays)\n", err)
		return errWouldRefuse
	}
	fmt.Fprintf(stdout, "%s: format %s (%s), read as %s\n", filepath.Base(file), name, spec.Format, rec.Encoding)
	run := rec.RunID
	if run == "" {
		run = "(none in the file)"
	}
	fmt.Fprintf(stdout, "run id: %s, from %s\n", run, rec.RunIDFrom)
	show := func(title string, vals map[string]parsers.Value) {
		if len(vals) == 0 {
			return
		}
		fmt.Fprintf(stdout, "%s:\n", title)
		names := make([]string, 0, len(vals))
		for n := range vals {
			names = append(names, n)
		}
		sort.Strings(names)
		for _, n := range names {
			v := vals[n]
			where := fmt.Sprintf("line %d, column %d", v.Line, v.Column)
			if v.Expression != "" {
				where = "= " + v.Expression
			} else if v.Rows > 1 {
				where += fmt.Sprintf(" (%d occurrences reduced)", v.Rows)
			}
			if v.Failed != "" {
				fmt.Fprintf(stdout, "  %-16s FAILED: %s   %s\n", n, v.Failed, where)
				continue
			}
			fmt.Fprintf(stdout, "  %-16s %-14s %s\n", n, fmt.Sprintf("%.6g %s", v.Number, v.Unit), where)
		}
	}
	show("values", rec.Values)
	show("factors", rec.Factors)
	for _, w := range rec.Warnings {
		fmt.Fprintf(stdout, "warning: %s\n", w)
	}
	if name == cfg.Instrument.Format {
		resp := cfg.Campaign.Response
		v := rec.Values[resp.Name]
		if v.Failed != "" {
			fmt.Fprintf(stdout, "the campaign's response %s: none (%s); the run would be recorded as failed\n", resp.Name, v.Failed)
		} else {
			fmt.Fprintf(stdout, "the campaign's response %s: %.6g %s\n", resp.Name, v.Number, resp.Unit)
		}
	}
	return nil
}
