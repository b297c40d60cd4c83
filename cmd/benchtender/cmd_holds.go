package main

import (
	"flag"
	"fmt"
	"io"
	"path/filepath"
	"strings"

	"benchtender/agent"
	"benchtender/campaign"
)

// cmdHolds lists the moves waiting for sign-off.
func cmdHolds(args []string, stdout io.Writer) error {
	cfg, path, st, err := campaignFromArgs("holds", args)
	if err != nil {
		return err
	}
	held := st.Held()
	if len(held) == 0 {
		fmt.Fprintf(stdout, "campaign %s: no moves held for sign-off\n", cfg.Campaign.Name)
		return nil
	}
	fmt.Fprintf(stdout, "campaign %s: %d move(s) held for sign-off\n", cfg.Campaign.Name, len(held))
	for _, r := range held {
		fmt.Fprintf(stdout, "\n%s  proposed %s by %s\n  setpoint: %s\n", r.ID, r.Proposed.Format("2006-01-02 15:04:05Z07:00"), r.Method, describePoint(cfg.Campaign.Factors, r.Point))
		for _, why := range r.Decision.Reasons {
			fmt.Fprintf(stdout, "  held because %s\n", why.Message)
		}
	}
	fmt.Fprintf(stdout, "\napprove with: benchtender approve RUN --by NAME --reason TEXT --config %s\n", path)
	return nil
}

// cmdSignoff approves or rejects a held move.
func cmdSignoff(action string, args []string, stdout io.Writer) error {
	fs := flag.NewFlagSet(action, flag.ContinueOnError)
	config := fs.String("config", "", "configuration file")
	by := fs.String("by", "", "who signs off (required)")
	reason := fs.String("reason", "", "why (required)")
	pos, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	if len(pos) != 1 {
		return usageError{action + ": give one RUN id"}
	}
	if strings.TrimSpace(*by) == "" || strings.TrimSpace(*reason) == "" {
		return usageError{action + ": --by and --reason are both required"}
	}
	path := *config
	if path == "" {
		path = "benchtender.toml"
	}
	cfg, err := loadConfig(path)
	if err != nil {
		return err
	}
	act := agent.ActionApprove
	if action == "reject" {
		act = agent.ActionReject
	}
	req, err := agent.RequestSignoff(cfg, agent.SignoffRequest{Run: pos[0], Action: act, By: *by, Reason: *reason})
	if err != nil {
		return err
	}
	fmt.Fprintf(stdout, "%s of run %s by %s recorded in %s; the running campaign applies it within a second (or at its next start)\n",
		action, pos[0], *by, filepath.Base(req))
	return nil
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
		s := fmt.Sprintf("%s=%.4g", f.Name, p[i])
		if f.Unit != "" {
			s += " " + f.Unit
		}
		parts = append(parts, s)
	}
	return strings.Join(parts, ", ")
}
