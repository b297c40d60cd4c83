package main

import (
	"fmt"
	"io"

	"benchtender/agent"
)

// cmdStatus summarises the campaign from its journal.
func cmdStatus(args []string, stdout io.Writer) error {
	cfg, _, st, err := campaignFromArgs("status", args)
	if err != nil {
		return err
	}
	counts := map[string]int{}
	for _, r := range st.Runs {
		counts[r.Status]++
	}
	fmt.Fprintf(stdout, "campaign %s: %d proposals, %d handoffs, budget %d runs\n", cfg.Campaign.Name, st.Proposals, st.Handoffs, cfg.Campaign.MaxRuns)
	for _, s := range []string{agent.StatusDone, agent.StatusFailed, agent.StatusHanded, agent.StatusReady, agent.StatusHeld, agent.StatusRejected, agent.StatusRefused} {
		if counts[s] > 0 {
			fmt.Fprintf(stdout, "  %-10s %d\n", s, counts[s])
		}
	}
	resp := cfg.Campaign.Response
	if b := st.Best(resp); b != nil {
		fmt.Fprintf(stdout, "best so far: %s, %s = %.4g %s (%s)\n", b.ID, resp.Name, b.Value, resp.Unit, describePoint(cfg.Campaign.Factors, b.Point))
	}
	return nil
}
