package main

import (
	"flag"
	"fmt"
	"io"
	"path/filepath"
	"strings"
	"time"

	"benchtender/agent"
	"benchtender/campaign"
	"benchtender/record"
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
			r.Proposed.Add(cfg.Safety.Holds()).Format(time.RFC3339), cfg.Campaign.Factors.Describe(r.Point))
		for _, why := range r.Decision.Reasons {
			fmt.Fprintf(stdout, "  held because %s\n", why.Message)
		}
		if r.Alternative != nil {
			fmt.Fprintf(stdout, "  best move inside every limit: %s\n", cfg.Campaign.Factors.Describe(r.Alternative))
		}
		if f := r.First; f != nil {
			fmt.Fprintf(stdout, "  FIRST OF TWO APPROVALS given by %s, reason %q\n    it approves: %s\n", f.Describe(cfg.Campaign.Factors), f.Reason, cfg.Campaign.Factors.Describe(f.Point))
			if !f.Point.Equal(r.Point) {
				fmt.Fprintf(stdout, "    (edited: not the setpoint proposed)\n")
			}
			if f.Replaces != "" {
				fmt.Fprintf(stdout, "    it replaced the first approval by %s\n", f.Replaces)
			}
			fmt.Fprintf(stdout, "  a second, different person completes it by approving the same values%s; other values need --replace\n", setHint(cfg.Campaign.Factors, f.Point, r.Point))
		} else if r.Decision.NeedsTwo(cfg.Safety) {
			fmt.Fprintf(stdout, "  needs two different people to approve; nobody has approved it yet\n")
		}
	}
	fmt.Fprintf(stdout, "\napprove with: benchtender approve RUN --by ID --name \"PRINTED NAME\" --reason TEXT [--set factor=value,...] --config %s\n", path)
	return nil
}

// setHint is the --set option that approves the first approval's values,
// when they are not the proposed ones.
func setHint(space campaign.Space, first, held campaign.Point) string {
	if first.Equal(held) {
		return ""
	}
	var parts []string
	for i, f := range space {
		if first[i] != held[i] {
			parts = append(parts, f.Name+"="+f.Format(first[i]))
		}
	}
	return " (--set " + strings.Join(parts, ",") + ")"
}

// cmdSignoff approves or rejects a held move, clears an all-stop
// (resume), or asks for the model to be fitted afresh (refit). The decision goes into the campaign's inbox; the daemon
// applies it, checks it once more and records it.
func cmdSignoff(action string, args []string, stdout io.Writer) error {
	fs := flag.NewFlagSet(action, flag.ContinueOnError)
	config := fs.String("config", "", "configuration file")
	by := fs.String("by", "", "user id of the person signing (required)")
	name := fs.String("name", "", "printed name of the person signing (required)")
	reason := fs.String("reason", "", "why (required)")
	set := fs.String("set", "", "approve with edited values: factor=value,factor=value")
	replace := fs.Bool("replace", false, "approve other values than a pending first approval's, replacing it (recorded)")
	pos, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	want := 1
	if action == "resume" || action == "refit" {
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
		req.Action, req.Run = record.ActionApprove, pos[0]
	case "reject":
		req.Action, req.Run = record.ActionReject, pos[0]
	case "refit":
		req.Action = agent.ActionRefit
	default:
		req.Action = agent.ActionResume
	}
	if *replace {
		if action != "approve" {
			return usageError{"--replace is only for approve"}
		}
		req.Replace = true
	}
	if *set != "" {
		if action != "approve" {
			return usageError{"--set is only for approve"}
		}
		if req.Edit, err = parseEdit(cfg.Campaign.Factors, *set); err != nil {
			return usageError{"--set: " + err.Error()}
		}
	}
	file, err := agent.RequestSignoff(cfg, req)
	if err != nil {
		return err
	}
	subject := "run " + req.Run
	switch action {
	case "resume":
		subject = "the all-stop"
	case "refit":
		subject = "the model (the next proposal fits its hyperparameters afresh)"
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
	file, err := agent.WriteAllStop(cfg, *by, *reason, time.Now())
	if err != nil {
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
func campaignFromArgs(name string, args []string) (agent.Config, string, *record.State, error) {
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

func readState(cfg agent.Config) (*record.State, error) {
	entries, err := record.ReadJournal(filepath.Join(cfg.Campaign.StateDir, "journal.log"))
	if err != nil {
		return nil, err
	}
	return record.Replay(entries), nil
}

// parseEdit reads "factor=value,factor=value"; a categorical factor's
// value may be its category name.
func parseEdit(space campaign.Space, set string) (map[string]float64, error) {
	edit := map[string]float64{}
	for _, kv := range strings.Split(set, ",") {
		k, v, ok := strings.Cut(kv, "=")
		k = strings.TrimSpace(k)
		if !ok {
			return nil, fmt.Errorf("%q is not factor=value", kv)
		}
		i := space.Index(k)
		if i < 0 {
			return nil, fmt.Errorf("%q is not a factor (factors: %s)", k, strings.Join(space.Names(), ", "))
		}
		f, err := space[i].Parse(v)
		if err != nil {
			return nil, err
		}
		edit[k] = f
	}
	return edit, nil
}
