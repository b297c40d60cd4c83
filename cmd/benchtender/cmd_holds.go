package main

import (
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"time"

	"benchtender/agent"
	"benchtender/campaign"
)

// cmdHolds lists the moves waiting for sign-off.
func cmdHolds(args []string, stdout io.Writer) error {
	cfg, path, st, err := campaignFromArgs("holds", args)
	if err != nil {
		return err
	}
	if st.AllStop != "" {
		fmt.Fprintf(stdout, "ALL-STOP in effect: %s\n  (clear with: benchtender resume --by ID --name NAME --reason TEXT --config %s)\n\n", st.AllStop, path)
	}
	held := st.Held()
	if len(held) == 0 {
		fmt.Fprintf(stdout, "campaign %s: no moves held for sign-off\n", cfg.Campaign.Name)
		return nil
	}
	fmt.Fprintf(stdout, "campaign %s: %d move(s) held for sign-off (limits version %s)\n", cfg.Campaign.Name, len(held), cfg.Safety.Version())
	for _, r := range held {
		fmt.Fprintf(stdout, "\n%s  proposed %s by %s; lapses %s\n  setpoint: %s\n", r.ID, r.Proposed.Format(time.RFC3339), r.Method,
			r.Proposed.Add(cfg.Safety.Holds()).Format(time.RFC3339), describePoint(cfg.Campaign.Factors, r.Point))
		for _, why := range r.Decision.Reasons {
			fmt.Fprintf(stdout, "  held because %s\n", why.Message)
		}
		if r.Alternative != nil {
			fmt.Fprintf(stdout, "  best move inside every limit: %s\n", describePoint(cfg.Campaign.Factors, r.Alternative))
		}
		if r.Decision.NeedsTwo(cfg.Safety) {
			fmt.Fprintf(stdout, "  needs two different people to approve; approved so far by: %s\n", orNone(r.Approvers))
		}
	}
	fmt.Fprintf(stdout, "\napprove with: benchtender approve RUN --by ID --name \"PRINTED NAME\" --reason TEXT [--set factor=value,...] --config %s\n", path)
	return nil
}

func orNone(s []string) string {
	if len(s) == 0 {
		return "nobody yet"
	}
	return strings.Join(s, ", ")
}

// cmdSignoff approves or rejects a held move, or clears an all-stop
// (resume). The decision goes into the campaign's inbox; the daemon
// applies it, checks it once more and records it.
func cmdSignoff(action string, args []string, stdout io.Writer) error {
	fs := flag.NewFlagSet(action, flag.ContinueOnError)
	config := fs.String("config", "", "configuration file")
	by := fs.String("by", "", "user id of the person signing (required)")
	name := fs.String("name", "", "printed name of the person signing (required)")
	reason := fs.String("reason", "", "why (required)")
	set := fs.String("set", "", "approve with edited values: factor=value,factor=value")
	pos, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	want := 1
	if action == "resume" {
		want = 0
	}
	if len(pos) != want {
		return usageError{fmt.Sprintf("%s: give %d RUN id", action, want)}
	}
	if strings.TrimSpace(*by) == "" || strings.TrimSpace(*name) == "" || strings.TrimSpace(*reason) == "" {
		return usageError{action + ": --by, --name and --reason are all required"}
	}
	path := *config
	if path == "" {
		path = "benchtender.toml"
	}
	cfg, err := loadConfig(path)
	if err != nil {
		return err
	}
	req := agent.SignoffRequest{By: *by, Name: *name, Reason: *reason}
	switch action {
	case "approve":
		req.Action, req.Run = agent.ActionApprove, pos[0]
	case "reject":
		req.Action, req.Run = agent.ActionReject, pos[0]
	default:
		req.Action = agent.ActionResume
	}
	if *set != "" {
		if action != "approve" {
			return usageError{"--set is only for approve"}
		}
		req.Edit = map[string]float64{}
		for _, kv := range strings.Split(*set, ",") {
			k, v, ok := strings.Cut(kv, "=")
			f, err := strconv.ParseFloat(strings.TrimSpace(v), 64)
			if !ok || err != nil {
				return usageError{fmt.Sprintf("--set: %q is not factor=value", kv)}
			}
			req.Edit[strings.TrimSpace(k)] = f
		}
	}
	file, err := agent.RequestSignoff(cfg, req)
	if err != nil {
		return err
	}
	subject := "run " + req.Run
	if action == "resume" {
		subject = "the all-stop"
	}
	fmt.Fprintf(stdout, "%s of %s by %s (%s) recorded in %s; the running campaign checks and applies it within a second (or at its next start)\n",
		action, subject, *name, *by, filepath.Base(file))
	return nil
}

// cmdAllStop halts every handoff at once by creating the all-stop file.
// Anybody may do the same by creating the file by hand.
func cmdAllStop(args []string, stdout io.Writer) error {
	fs := flag.NewFlagSet("all-stop", flag.ContinueOnError)
	config := fs.String("config", "", "configuration file")
	reason := fs.String("reason", "", "why (written into the file)")
	by := fs.String("by", "", "who")
	pos, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	path, err := configArg(*config, pos, "all-stop")
	if err != nil {
		return err
	}
	cfg, err := loadConfig(path)
	if err != nil {
		return err
	}
	file := agent.AllStopPath(cfg)
	text := fmt.Sprintf("all-stop by %s at %s: %s\n", orDefault(*by, "(not given)"), time.Now().UTC().Format(time.RFC3339), orDefault(*reason, "(no reason given)"))
	if err := os.WriteFile(file, []byte(text), 0o644); err != nil {
		return err
	}
	fmt.Fprintf(stdout, "all-stop file written: %s\nevery handoff halts at the next look (within one tick); clear it with benchtender resume\n", file)
	return nil
}

func orDefault(a, b string) string {
	if a == "" {
		return b
	}
	return a
}

// campaignFromArgs handles the arguments of a command that only looks at a
// campaign ([CONFIG] or --config CONFIG): it loads the configuration and
// replays the journal.
func campaignFromArgs(name string, args []string) (agent.Config, string, *agent.State, error) {
	fs := flag.NewFlagSet(name, flag.ContinueOnError)
	config := fs.String("config", "", "configuration file")
	pos, err := parseFlags(fs, args)
	if err != nil {
		return agent.Config{}, "", nil, err
	}
	path, err := configArg(*config, pos, name)
	if err != nil {
		return agent.Config{}, "", nil, err
	}
	cfg, err := loadConfig(path)
	if err != nil {
		return agent.Config{}, "", nil, err
	}
	st, err := readState(cfg)
	return cfg, path, st, err
}

func readState(cfg agent.Config) (*agent.State, error) {
	entries, err := agent.ReadJournal(filepath.Join(cfg.Campaign.StateDir, "journal.log"))
	if err != nil {
		return nil, err
	}
	return agent.Replay(entries), nil
}

func describePoint(space campaign.Space, p campaign.Point) string {
	parts := make([]string, 0, len(p))
	for i, f := range space {
		if i >= len(p) {
			break
		}
		s := fmt.Sprintf("%s=%s", f.Name, f.Display(p[i]))
		if f.Unit != "" {
			s += " " + f.Unit
		}
		parts = append(parts, s)
	}
	return strings.Join(parts, ", ")
}
