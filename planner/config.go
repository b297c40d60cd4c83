package planner

import (
	"math"
	"math/rand/v2"

	"benchtender/campaign"
	"benchtender/planner/gp"
)

// fitOptions turns the config into the model's fit options.
func (p *Planner) fitOptions(warm *gp.Params, rng *rand.Rand) gp.FitOptions {
	k, _ := gp.ParseKernel(p.cfg.Kernel) // validated
	return gp.FitOptions{Kernel: k, Starts: p.cfg.FitStarts, Warm: warm, Rand: rng, FixedNoise: p.cfg.NoiseSD * p.cfg.NoiseSD}
}

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
	// Kernel is "matern52" (default), "matern32" or
	// "squared_exponential".
	Kernel string `toml:"kernel"`
	// NoiseSD, when positive, is the instrument's known repeatability (one
	// standard deviation, in the response's unit, or of its logarithm
	// with transform = "log"); the noise is then not fitted.
	NoiseSD float64 `toml:"noise_sd"`
}

// Default returns the defaults.
func Default() Config { return Config{Candidates: 2000, Refine: 5, FitStarts: 2, Kernel: "matern52"} }

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
	if _, err := gp.ParseKernel(c.Kernel); err != nil {
		ps.Add("kernel", "must be matern52, matern32 or squared_exponential, got %q", c.Kernel)
	}
	if c.NoiseSD < 0 || math.IsNaN(c.NoiseSD) || math.IsInf(c.NoiseSD, 0) {
		ps.Add("noise_sd", "must be 0 (learn the noise) or a positive number, got %v", c.NoiseSD)
	}
	return ps
}
