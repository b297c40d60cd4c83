package campaign

// Config is the [campaign] section of a configuration file.
type Config struct {
	Name string `toml:"name"`
	// StateDir holds the journal, the hold queue, quarantine and logs.
	StateDir string `toml:"state_dir"`
	// Seed makes every proposal reproducible.
	Seed uint64 `toml:"seed"`
	// MaxRuns is the budget: no proposal is made once this many runs have
	// been handed off.
	MaxRuns int `toml:"max_runs"`
	// InitialRuns is the size of the space-filling initial design.
	InitialRuns int      `toml:"initial_runs"`
	Factors     Space    `toml:"factor"`
	Response    Response `toml:"response"`
}

// DefaultConfig returns the defaults for keys a file may leave out.
func DefaultConfig() Config {
	return Config{StateDir: "state", Seed: 1, MaxRuns: 30}
}

// Validate reports every problem, keyed relative to [campaign].
func (c Config) Validate() Problems {
	var ps Problems
	if !ValidName(c.Name) {
		ps.Add("name", "%q is not a valid campaign name (a letter, then letters, digits or _)", c.Name)
	}
	if c.StateDir == "" {
		ps.Add("state_dir", "must name a folder")
	}
	ps = append(ps, c.Factors.Validate()...)
	ps = append(ps, c.Response.Validate().Prefix("response")...)
	if c.MaxRuns < 1 {
		ps.Add("max_runs", "must be at least 1, got %d", c.MaxRuns)
	}
	if c.InitialRuns < 0 {
		ps.Add("initial_runs", "must not be negative, got %d", c.InitialRuns)
	}
	if c.InitialRuns > c.MaxRuns && c.MaxRuns >= 1 {
		ps.Add("initial_runs", "%d is more than max_runs (%d)", c.InitialRuns, c.MaxRuns)
	}
	return ps
}

// Initial returns the size of the initial design: InitialRuns when set,
// otherwise 2d+2 (at least 5), a common rule of thumb, capped by MaxRuns.
func (c Config) Initial() int {
	n := c.InitialRuns
	if n == 0 {
		n = max(5, 2*c.Factors.Dim()+2)
	}
	return min(n, c.MaxRuns)
}
