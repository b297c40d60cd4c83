package agent

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"sort"
	"strings"

	"github.com/BurntSushi/toml"

	"benchtender/campaign"
	"benchtender/parsers"
	"benchtender/planner"
	"benchtender/safety"
	"benchtender/watch"
)

// Config is a whole configuration file. Each package owns its section.
type Config struct {
	Campaign   campaign.Config  `toml:"campaign"`
	Planner    planner.Config   `toml:"planner"`
	Instrument InstrumentConfig `toml:"instrument"`
	Safety     safety.Config    `toml:"safety"`
	Log        LogConfig        `toml:"log"`
}

// Handoff formats.
const (
	HandoffCSV  = "csv"
	HandoffJSON = "json"
)

// InstrumentConfig is the [instrument] section.
type InstrumentConfig struct {
	Name string `toml:"name"`
	// HandoffDir is where setpoint files are written for the instrument.
	HandoffDir string `toml:"handoff_dir"`
	// HandoffFormat is "csv" or "json".
	HandoffFormat string       `toml:"handoff_format"`
	Watch         watch.Config `toml:"watch"`
	Parser        parsers.Spec `toml:"parser"`
}

// LogConfig is the [log] section.
type LogConfig struct {
	// File receives JSON log lines for lab IT; relative to the state
	// folder unless absolute; "" turns it off.
	File string `toml:"file"`
	// Level is "debug", "info", "warn" or "error".
	Level string `toml:"level"`
}

// DefaultConfig returns every section's defaults.
func DefaultConfig() Config {
	return Config{
		Campaign:   campaign.DefaultConfig(),
		Planner:    planner.Default(),
		Instrument: InstrumentConfig{HandoffFormat: HandoffCSV, Watch: watch.Default(), Parser: parsers.DefaultSpec()},
		Safety:     safety.Default(),
		Log:        LogConfig{File: "benchtender.log", Level: "info"},
	}
}

// Validate reports every problem in the whole file, with full keys.
func (c Config) Validate(reg *parsers.Registry) campaign.Problems {
	var ps campaign.Problems
	ps = append(ps, c.Campaign.Validate().Prefix("campaign")...)
	if _, cps := planner.CompileConstraints(c.Campaign.Factors, c.Campaign.Constraints); len(cps) > 0 {
		ps = append(ps, cps.Prefix("campaign")...)
	}
	ps = append(ps, c.Planner.Validate().Prefix("planner")...)
	ps = append(ps, c.Planner.ValidateFor(c.Campaign.Factors).Prefix("planner")...)
	ps = append(ps, c.Instrument.validate(reg, c.Campaign).Prefix("instrument")...)
	ps = append(ps, c.Safety.Validate(c.Campaign.Factors).Prefix("safety")...)
	switch c.Log.Level {
	case "debug", "info", "warn", "error":
	default:
		ps.Add("log.level", "must be debug, info, warn or error, got %q", c.Log.Level)
	}
	return ps
}

func (ic InstrumentConfig) validate(reg *parsers.Registry, cc campaign.Config) campaign.Problems {
	var ps campaign.Problems
	if !campaign.ValidName(ic.Name) {
		ps.Add("name", "%q is not a valid instrument name (a letter, then letters, digits or _)", ic.Name)
	}
	if ic.HandoffDir == "" {
		ps.Add("handoff_dir", "must name the folder the instrument reads setpoints from")
	}
	if ic.HandoffFormat != HandoffCSV && ic.HandoffFormat != HandoffJSON {
		ps.Add("handoff_format", "must be %q or %q, got %q", HandoffCSV, HandoffJSON, ic.HandoffFormat)
	}
	if ic.HandoffDir != "" && ic.Watch.Dir != "" && filepath.Clean(ic.HandoffDir) == filepath.Clean(ic.Watch.Dir) {
		ps.Add("handoff_dir", "must differ from watch.dir: the agent never writes into the export folder")
	}
	ps = append(ps, ic.Watch.Validate().Prefix("watch")...)
	ps = append(ps, ic.Parser.Validate(reg).Prefix("parser")...)
	if cc.Response.Name != "" {
		if _, ok := ic.Parser.Responses[cc.Response.Name]; !ok {
			ps.Add("parser.responses", "the campaign's response %q is not mapped to a column", cc.Response.Name)
		}
	}
	for name := range ic.Parser.Factors {
		if cc.Factors.Index(name) < 0 {
			ps.Add("parser.factors."+name, "no factor is named %q", name)
		}
	}
	return ps
}

// LocatedProblem is a problem with the line of the file it concerns (0
// when unknown).
type LocatedProblem struct {
	Line int
	campaign.Problem
}

func (p LocatedProblem) String() string {
	if p.Line > 0 {
		return fmt.Sprintf("line %d: %s", p.Line, p.Problem)
	}
	return p.Problem.String()
}

// ConfigError lists every problem found in a configuration file.
type ConfigError struct {
	Path     string
	Problems []LocatedProblem
}

func (e *ConfigError) Error() string {
	var b strings.Builder
	fmt.Fprintf(&b, "%s: %d problem(s)", e.Path, len(e.Problems))
	for _, p := range e.Problems {
		if p.Line > 0 {
			fmt.Fprintf(&b, "\n  %s:%d: %s", e.Path, p.Line, p.Problem)
		} else {
			fmt.Fprintf(&b, "\n  %s: %s", e.Path, p.Problem)
		}
	}
	return b.String()
}

// LoadConfig reads, decodes and validates a configuration file. Unknown
// keys are errors. Relative folders are taken relative to the file's own
// folder. Every problem is reported at once, as a *ConfigError.
func LoadConfig(path string, reg *parsers.Registry) (Config, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return Config{}, fmt.Errorf("read config: %w", err)
	}
	cfg := DefaultConfig()
	md, err := toml.Decode(string(data), &cfg)
	if err != nil {
		var pe toml.ParseError
		if errors.As(err, &pe) {
			return Config{}, &ConfigError{Path: path, Problems: []LocatedProblem{{Line: pe.Position.Line, Problem: campaign.Problem{Message: pe.Message}}}}
		}
		return Config{}, &ConfigError{Path: path, Problems: []LocatedProblem{{Problem: campaign.Problem{Message: err.Error()}}}}
	}
	lines := indexKeys(string(data))
	var out []LocatedProblem
	for _, k := range md.Undecoded() {
		key := k.String()
		out = append(out, LocatedProblem{Line: lines.line(key), Problem: campaign.Problem{Key: key, Message: "unknown key"}})
	}
	for _, p := range cfg.Validate(reg) {
		out = append(out, LocatedProblem{Line: lines.line(p.Key), Problem: p})
	}
	if len(out) > 0 {
		sort.SliceStable(out, func(i, j int) bool { return out[i].Line < out[j].Line })
		return Config{}, &ConfigError{Path: path, Problems: out}
	}
	cfg.resolve(filepath.Dir(path))
	cfg.Campaign.Factors = cfg.Campaign.Factors.Normalised()
	return cfg, nil
}

// resolve makes relative folders relative to base.
func (c *Config) resolve(base string) {
	abs := func(p string) string {
		if p == "" || filepath.IsAbs(p) {
			return p
		}
		return filepath.Join(base, p)
	}
	c.Campaign.StateDir = abs(c.Campaign.StateDir)
	c.Instrument.HandoffDir = abs(c.Instrument.HandoffDir)
	c.Instrument.Watch.Dir = abs(c.Instrument.Watch.Dir)
	if c.Log.File != "" && !filepath.IsAbs(c.Log.File) {
		c.Log.File = filepath.Join(c.Campaign.StateDir, c.Log.File)
	}
}

// Warnings lists settings that are legal but probably not meant.
func (c Config) Warnings() []string { return c.Safety.Warnings(c.Campaign.Factors) }
