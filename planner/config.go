package planner

import "benchtender/campaign"

// Config is the [planner] section.
type Config struct {
	// Candidates is the number of space-filling points at which the
	// acquisition is scored before local refinement.
	Candidates int `toml:"candidates"`
	// Refine is the number of best candidates refined by local search.
	Refine int `toml:"refine"`
	// FitStarts is the number of random starts of the hyperparameter fit,
	// on top of the default and the warm start.
	FitStarts int `toml:"fit_starts"`
}

// Default returns the defaults.
func Default() Config { return Config{Candidates: 2000, Refine: 5, FitStarts: 2} }

// Validate reports every problem, keyed relative to the section.
func (c Config) Validate() campaign.Problems {
	var ps campaign.Problems
	if c.Candidates < 10 {
		ps.Add("candidates", "must be at least 10, got %d", c.Candidates)
	}
	if c.Refine < 0 || c.Refine > c.Candidates {
		ps.Add("refine", "must be between 0 and candidates, got %d", c.Refine)
	}
	if c.FitStarts < 0 {
		ps.Add("fit_starts", "must not be negative, got %d", c.FitStarts)
	}
	return ps
}
