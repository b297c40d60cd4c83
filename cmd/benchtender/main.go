// Command benchtender runs closed-loop experiment campaigns on lab
// instruments: it watches export folders for result files, fits a
// surrogate, proposes the next setpoints, gates them and hands them off.
//
// Usage:
//
//	benchtender check CONFIG            validate a configuration file
//	benchtender run [--include-old] CONFIG...   run the campaigns (the daemon)
//	benchtender holds [--config C]      list moves held for sign-off
//	benchtender approve RUN --by ID --name NAME --reason TEXT [--set f=v] [--config C]
//	benchtender reject RUN --by ID --name NAME --reason TEXT [--config C]
//	benchtender all-stop [--reason TEXT] [--config C]   halt every handoff now
//	benchtender resume --by ID --name NAME --reason TEXT  clear the all-stop
//	benchtender refit --by ID --name NAME --reason TEXT   fit the model afresh at the next proposal
//	benchtender audit verify [--config C]   check the audit trail's hash chain
//	benchtender status [--config C]     runs so far, the model, where the optimum is
//	benchtender report [--config C] [--out report.html]   the campaign in one HTML file
//	benchtender export [--config C] [--out runs.csv] [--json]   the runs as data (RFC 4180 CSV or JSON)
//	benchtender parse --config C [--format NAME] FILE   what a result file would give
//	benchtender audit correct --entry N --by ID --name NAME --reason TEXT [--config C]
//	benchtender audit accept --by ID --name NAME --reason TEXT [--config C]   after a journal/trail mismatch
//	benchtender demo [--dir DIR] [--runs N] [--seed N] [--responses 1|2]   an invented campaign on a simulated instrument
//	benchtender service install|remove  a Windows service that survives a reboot
//	benchtender version                 version, commit and Go version
//
// Every subcommand answers --help with its usage and flags.
package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"os/signal"
	"strings"
	"syscall"
)

func main() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	err := run(ctx, os.Args[1:], os.Stdout, os.Stderr)
	stop()
	os.Exit(exitCode(err, os.Stderr))
}

// usageError marks a mistake in how the command was called.
type usageError struct{ msg string }

func (e usageError) Error() string { return e.msg }

// helpRequest is a subcommand's --help (or -h): run prints the
// subcommand's usage and its flags to standard output and exits 0.
type helpRequest struct{ fs *flag.FlagSet }

func (h helpRequest) Error() string { return h.fs.Name() + ": help requested" }
func (h helpRequest) Unwrap() error { return flag.ErrHelp }

// isHelp reports whether a command-line word asks for help.
func isHelp(s string) bool { return s == "-h" || s == "-help" || s == "--help" }

// printHelp writes the usage lines of the subcommand named name and the
// flags of fs.
func printHelp(w io.Writer, name string, fs *flag.FlagSet) {
	fmt.Fprintln(w, "usage:")
	for _, line := range strings.Split(usage, "\n") {
		if strings.HasPrefix(strings.TrimSpace(line), "benchtender "+name+" ") || strings.TrimSpace(line) == "benchtender "+name {
			fmt.Fprintln(w, line)
		}
	}
	n := 0
	fs.VisitAll(func(*flag.Flag) { n++ })
	if n > 0 {
		fmt.Fprintln(w, "\nflags:")
		fs.SetOutput(w)
		fs.PrintDefaults()
	}
}

// configError marks a configuration that did not validate; its problems
// were already printed.
type configError struct{ err error }

func (e configError) Error() string { return e.err.Error() }
func (e configError) Unwrap() error { return e.err }

// exitCode maps an error to the process exit code: 0 for success, 2 for a
// bad command line or configuration, 1 for everything else.
func exitCode(err error, stderr io.Writer) int {
	var ue usageError
	var ce configError
	switch {
	case err == nil:
		return 0
	case errors.Is(err, flag.ErrHelp):
		return 0
	case errors.As(err, &ue):
		fmt.Fprintf(stderr, "benchtender: %v\n\n%s", err, usage)
		return 2
	case errors.As(err, &ce):
		fmt.Fprintf(stderr, "benchtender: %v\n", err)
		return 2
	case errors.Is(err, errWouldRefuse):
		return 1 // the reason is printed already
	default:
		fmt.Fprintf(stderr, "benchtender: %v\n", err)
		return 1
	}
}

const usage = `usage:
  benchtender check CONFIG
  benchtender run [--include-old] CONFIG [CONFIG...]
  benchtender holds [--config CONFIG]
  benchtender approve RUN --by ID --name NAME --reason TEXT [--set f=v,...] [--replace] [--config CONFIG]
  benchtender reject RUN --by ID --name NAME --reason TEXT [--config CONFIG]
  benchtender all-stop [--reason TEXT] [--by ID] [--config CONFIG]
  benchtender resume --by ID --name NAME --reason TEXT [--config CONFIG]
  benchtender refit --by ID --name NAME --reason TEXT [--config CONFIG]
  benchtender audit verify [--config CONFIG]
  benchtender audit correct --entry N --by ID --name NAME --reason TEXT [--config CONFIG]
  benchtender audit accept --by ID --name NAME --reason TEXT [--config CONFIG]
  benchtender status [--config CONFIG]
  benchtender report [--config CONFIG] [--out report.html] [--x FACTOR --y FACTOR]
  benchtender export [--config CONFIG] [--out runs.csv] [--json]
  benchtender parse --config CONFIG [--format NAME] FILE
  benchtender demo [--dir DIR] [--runs N] [--seed N] [--responses 1|2]
  benchtender service install --config CONFIG [--name NAME]   (Windows)
  benchtender service remove [--name NAME]                    (Windows)
  benchtender version
  benchtender help

Every command answers --help with its usage and flags.
`

func run(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	if len(args) == 0 {
		return usageError{"no command given"}
	}
	cmd, rest := args[0], args[1:]
	err := dispatch(ctx, cmd, rest, stdout, stderr)
	var h helpRequest
	if errors.As(err, &h) {
		printHelp(stdout, h.fs.Name(), h.fs)
		return nil
	}
	return err
}

func dispatch(ctx context.Context, cmd string, rest []string, stdout, stderr io.Writer) error {
	switch cmd {
	case "check":
		return cmdCheck(rest, stdout)
	case "run":
		return cmdRun(ctx, rest, stdout, stderr)
	case "holds":
		return cmdHolds(rest, stdout)
	case "approve", "reject", "resume", "refit":
		return cmdSignoff(cmd, rest, stdout)
	case "all-stop":
		return cmdAllStop(rest, stdout)
	case "audit":
		return cmdAudit(rest, stdout)
	case "export":
		return cmdExport(rest, stdout)
	case "status":
		return cmdStatus(ctx, rest, stdout)
	case "report":
		return cmdReport(ctx, rest, stdout)
	case "parse":
		return cmdParse(rest, stdout)
	case "demo":
		return cmdDemo(ctx, rest, stdout)
	case "service":
		return cmdService(ctx, rest, stdout, stderr)
	case "version", "-version", "--version":
		return cmdVersion(rest, stdout)
	case "help", "-h", "--help":
		fmt.Fprint(stdout, usage)
		return nil
	}
	return usageError{fmt.Sprintf("unknown command %q", cmd)}
}

// parseFlags parses fs over args, letting flags and positional arguments
// mix in any order, and returns the positional ones.
func parseFlags(fs *flag.FlagSet, args []string) ([]string, error) {
	fs.SetOutput(io.Discard)
	var pos []string
	for {
		if err := fs.Parse(args); err != nil {
			if errors.Is(err, flag.ErrHelp) {
				return nil, helpRequest{fs}
			}
			return nil, usageError{fmt.Sprintf("%s: %v", fs.Name(), err)}
		}
		args = fs.Args()
		if len(args) == 0 {
			return pos, nil
		}
		pos = append(pos, args[0])
		args = args[1:]
	}
}

// configArg returns the configuration path from a --config flag or the
// single positional argument.
func configArg(flagValue string, pos []string, name string) (string, error) {
	switch {
	case len(pos) == 1 && flagValue == "":
		return pos[0], nil
	case len(pos) == 0 && flagValue != "":
		return flagValue, nil
	case len(pos) == 0:
		return "benchtender.toml", nil
	}
	return "", usageError{fmt.Sprintf("%s: give the configuration once, as CONFIG or --config", name)}
}
