package watch

import (
	"path/filepath"
	"time"

	"benchtender/campaign"
)

// Config is the [instrument.watch] section.
type Config struct {
	// Dir is the export folder the instrument writes results into.
	Dir string `toml:"dir"`
	// Pattern is a file-name glob (filepath.Match syntax), matched without
	// regard to case, since instrument PCs often write .CSV.
	Pattern string `toml:"pattern"`
	// Settle is how long size and modification time must stay unchanged.
	Settle time.Duration `toml:"settle"`
	// Rescan is the interval of the full folder scan.
	Rescan time.Duration `toml:"rescan"`
	// Ignore lists extra file-name globs never to report, on top of the
	// built-in temporary names (dot files, ~$*, *.tmp, *.part).
	Ignore []string `toml:"ignore"`
	// Mode is "events" (file events as hints, plus the scan) or "poll"
	// (the scan alone: for network shares, which send no events).
	Mode string `toml:"mode"`
	// Recursive watches subfolders too (one folder per day is common),
	// down to Depth levels below Dir; folders created later are found.
	Recursive bool `toml:"recursive"`
	Depth     int  `toml:"depth"`
	// MaxAge, when set, leaves out files last changed longer than this
	// before the watcher started: a folder holding years of old exports
	// is not swallowed. `benchtender run --include-old` takes them all.
	MaxAge time.Duration `toml:"max_age"`
}

// Watch modes.
const (
	ModeEvents = "events"
	ModePoll   = "poll"
)

// Default returns the defaults: settle 2 s, because FAT and SMB time stamps
// have a resolution of 2 s (common practice), and a rescan every 10 s.
func Default() Config {
	return Config{Pattern: "*", Settle: 2 * time.Second, Rescan: 10 * time.Second, Mode: ModeEvents, Depth: 4}
}

// Validate reports every problem, keyed relative to the section.
func (c Config) Validate() campaign.Problems {
	var ps campaign.Problems
	if c.Dir == "" {
		ps.Add("dir", "must name the export folder")
	}
	if _, err := filepath.Match(c.Pattern, "x"); err != nil || c.Pattern == "" {
		ps.Add("pattern", "%q is not a valid file-name pattern", c.Pattern)
	}
	for i, g := range c.Ignore {
		if _, err := filepath.Match(g, "x"); err != nil {
			ps.Add("ignore", "entry %d, %q, is not a valid file-name pattern", i+1, g)
		}
	}
	if c.Settle < 0 {
		ps.Add("settle", "must not be negative, got %v", c.Settle)
	}
	if c.Rescan <= 0 {
		ps.Add("rescan", "must be positive, got %v", c.Rescan)
	}
	switch c.Mode {
	case "", ModeEvents, ModePoll:
	default:
		ps.Add("mode", "must be %q or %q, got %q", ModeEvents, ModePoll, c.Mode)
	}
	if c.Depth < 0 || c.Depth > 16 {
		ps.Add("depth", "must be 0 to 16, got %d", c.Depth)
	}
	if c.MaxAge < 0 {
		ps.Add("max_age", "must not be negative, got %v", c.MaxAge)
	}
	return ps
}
