package agent

import (
	"errors"
	"fmt"
	"net"
	"os"
	"path/filepath"
	"regexp"
	"sort"
	"strconv"
	"strings"
	"time"

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
	// Instruments are all the campaign's instruments: the [instrument]
	// section alone, or every [[instruments]] entry (several instruments
	// running the same campaign, each with its own folders). Instrument
	// is then the first of them.
	Instruments []InstrumentConfig `toml:"-"`
	listed      bool               // the file has [[instruments]]
	hadSingle   bool               // the file has [instrument]
	// Formats are the named parser specs instruments refer to.
	Formats map[string]parsers.Spec `toml:"-"`
	Safety  safety.Config           `toml:"safety"`
	Log     LogConfig               `toml:"log"`
	Console ConsoleConfig           `toml:"console"`
	Audit   AuditConfig             `toml:"audit"`
}

// ConsoleConfig is the [console] section: the web console the daemon
// serves for sign-off and for looking at the campaign.
type ConsoleConfig struct {
	// Listen is host:port; "" serves no console. Only a loopback address
	// may be used without TokensFile.
	Listen string `toml:"listen"`
	// TokensFile holds one access token a line: "TOKEN USER-ID PRINTED
	// NAME". It must not be readable by group or others.
	TokensFile string `toml:"tokens_file"`
	// Hosts are further names the console may be reached by (the Host
	// header is checked against them, against DNS rebinding).
	Hosts []string `toml:"hosts"`
}

// Loopback reports whether Listen binds to a loopback address only.
func (c ConsoleConfig) Loopback() bool {
	host, _, err := net.SplitHostPort(c.Listen)
	if err != nil {
		return false
	}
	if host == "localhost" {
		return true
	}
	ip := net.ParseIP(host)
	return ip != nil && ip.IsLoopback()
}

func (c ConsoleConfig) validate() campaign.Problems {
	var ps campaign.Problems
	if c.Listen == "" {
		return ps
	}
	_, port, err := net.SplitHostPort(c.Listen)
	if err != nil {
		ps.Add("listen", "must be host:port, e.g. 127.0.0.1:8470: %v", err)
		return ps
	}
	if n, err := strconv.Atoi(port); err != nil || n < 0 || n > 65535 {
		ps.Add("listen", "port %q is not a port number", port)
	}
	if !c.Loopback() && c.TokensFile == "" {
		ps.Add("tokens_file", "must be set to listen on %s: only a loopback address may serve the console without access tokens", c.Listen)
	}
	for i, h := range c.Hosts {
		if strings.TrimSpace(h) == "" || strings.ContainsAny(h, "/ :") {
			ps.Add(fmt.Sprintf("hosts[%d]", i), "%q is not a host name", h)
		}
	}
	return ps
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
	// Format names the entry of [formats] that reads this instrument's
	// result files.
	Format string `toml:"format"`
	// LookEvery is how often the agent looks at its sign-off inbox, the
	// all-stop file and its config (default 1 s).
	LookEvery time.Duration `toml:"look_every"`
	// Capacity is how many setpoint files the instrument may hold at once
	// (runs handed off and not yet answered; default 1). Cleared moves
	// beyond it queue in the agent and go out in the order they were
	// proposed, one as each result comes in.
	Capacity int `toml:"capacity"`
}

// Spec returns the parser spec of the (first) instrument's format.
func (c Config) Spec() parsers.Spec { return c.Formats[c.Instrument.Format] }

func defaultInstrument() InstrumentConfig {
	return InstrumentConfig{HandoffFormat: HandoffCSV, Watch: watch.Default(), Capacity: 1}
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
		Instrument: defaultInstrument(),
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
	if c.Planner.Stop.HypervolumeBelow > 0 && !c.Campaign.Several() {
		ps.Add("planner.stop.hypervolume_below", "is for campaigns with several responses ([[campaign.responses]]); this one has one")
	}
	ps = append(ps, c.validateInstruments()...)
	ps = append(ps, c.validateFormats(reg)...)
	ps = append(ps, c.Safety.Validate(c.Campaign.Factors).Prefix("safety")...)
	ps = append(ps, c.Console.validate().Prefix("console")...)
	switch c.Log.Level {
	case "debug", "info", "warn", "error":
	default:
		ps.Add("log.level", "must be debug, info, warn or error, got %q", c.Log.Level)
	}
	return ps
}

func (ic InstrumentConfig) validate() campaign.Problems {
	var ps campaign.Problems
	if !campaign.ValidName(ic.Name) {
		ps.Add("name", "%q is not a valid instrument name (a letter, then letters, digits or _)", ic.Name)
	}
	if ic.HandoffDir == "" {
		ps.Add("handoff_dir", "must name the folder the instrument reads setpoints from")
	}
	if ic.LookEvery < 0 || (ic.LookEvery > 0 && ic.LookEvery < 10*time.Millisecond) {
		ps.Add("look_every", "must be at least 10ms, got %v", ic.LookEvery)
	}
	if ic.Capacity < 1 || ic.Capacity > maxCapacity {
		ps.Add("capacity", "must be 1 to %d setpoint files at once, got %d", maxCapacity, ic.Capacity)
	}
	if ic.HandoffFormat != HandoffCSV && ic.HandoffFormat != HandoffJSON {
		ps.Add("handoff_format", "must be %q or %q, got %q", HandoffCSV, HandoffJSON, ic.HandoffFormat)
	}
	if ic.HandoffDir != "" && ic.Watch.Dir != "" && filepath.Clean(ic.HandoffDir) == filepath.Clean(ic.Watch.Dir) {
		ps.Add("handoff_dir", "must differ from watch.dir: the agent never writes into the export folder")
	}
	ps = append(ps, ic.Watch.Validate().Prefix("watch")...)
	return ps
}

// validateFormats checks every format and the instrument's use of its
// format: the response is one of its values, in the response's unit, and
// factor echoes name real factors.
func (c Config) validateFormats(reg *parsers.Registry) campaign.Problems {
	var ps campaign.Problems
	names := make([]string, 0, len(c.Formats))
	for n := range c.Formats {
		names = append(names, n)
	}
	sort.Strings(names)
	for _, n := range names {
		ps = append(ps, c.Formats[n].Validate(reg).Prefix("formats."+n)...)
	}
	for i, ic := range c.Instruments {
		ps = append(ps, c.validateUse(ic, instrumentKey(c, i), names)...)
	}
	return ps
}

// instrumentKey is the config key of instrument i.
func instrumentKey(c Config, i int) string {
	if c.multi() {
		return fmt.Sprintf("instruments[%d]", i)
	}
	return "instrument"
}

// multi reports whether the file lists [[instruments]].
func (c Config) multi() bool { return c.listed }

// validateInstruments checks each instrument and that no two share a
// name or a folder.
func (c Config) validateInstruments() campaign.Problems {
	var ps campaign.Problems
	if c.listed && c.hadSingle {
		ps.Add("instruments", "give either one [instrument] section or [[instruments]] entries, not both")
	}
	if len(c.Instruments) == 0 {
		ps.Add("instrument", "the campaign needs an instrument")
	}
	names := map[string]int{}
	dirs := map[string]string{}
	for i, ic := range c.Instruments {
		key := instrumentKey(c, i)
		ps = append(ps, ic.validate().Prefix(key)...)
		if j, ok := names[ic.Name]; ok {
			ps.Add(key+".name", "%q is also the name of instruments[%d]", ic.Name, j)
		}
		names[ic.Name] = i
		for what, d := range map[string]string{"handoff_dir": ic.HandoffDir, "watch.dir": ic.Watch.Dir} {
			if d == "" {
				continue
			}
			d = filepath.Clean(d)
			if other, ok := dirs[d]; ok && other != key+"."+what {
				ps.Add(key+"."+what, "%s is also %s: each instrument needs its own folders", d, other)
			}
			dirs[d] = key + "." + what
		}
	}
	return ps
}

// validateUse checks an instrument's use of its format: each response is
// one of its values, in the response's unit, and factor echoes name real
// factors.
func (c Config) validateUse(ic InstrumentConfig, ikey string, names []string) campaign.Problems {
	var ps campaign.Problems
	spec, ok := c.Formats[ic.Format]
	if !ok {
		ps.Add(ikey+".format", "no format %q in [formats] (have %v)", ic.Format, names)
		return ps
	}
	key := "formats." + ic.Format
	for _, resp := range c.Campaign.AllResponses() {
		_, isValue := spec.Values[resp.Name]
		_, isDerived := spec.Derived[resp.Name]
		switch {
		case resp.Name == "":
		case !isValue && !isDerived:
			ps.Add(key+".values", "the campaign's response %q is not among the format's values or derived values (%v)", resp.Name, spec.Names())
		case isValue && spec.UnitOf(resp.Name) != "" && resp.Unit != "" && spec.UnitOf(resp.Name) != resp.Unit:
			if _, err := parsers.Conversion(spec.UnitOf(resp.Name), resp.Unit); err != nil {
				ps.Add(key+".values."+resp.Name+".to", "the value is in %s but the response is in %s: %v", spec.UnitOf(resp.Name), resp.Unit, err)
			} else {
				ps.Add(key+".values."+resp.Name+".to", "the value is in %s but the response is in %s: set to = %q", spec.UnitOf(resp.Name), resp.Unit, resp.Unit)
			}
		}
	}
	for _, name := range sortedNames(spec.Factors) {
		i := c.Campaign.Factors.Index(name)
		if i < 0 {
			ps.Add(key+".factors."+name, "no factor is named %q", name)
			continue
		}
		if u, fu := spec.Factors[name].FinalUnit(), c.Campaign.Factors[i].Unit; u != "" && fu != "" && u != fu {
			ps.Add(key+".factors."+name+".to", "the value is in %s but the factor is in %s", u, fu)
		}
	}
	return ps
}

func sortedNames[V any](m map[string]V) []string {
	out := make([]string, 0, len(m))
	for k := range m {
		out = append(out, k)
	}
	sort.Strings(out)
	return out
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

// decodeConfig decodes a configuration's text over the defaults, each
// format and instrument over its own defaults.
func decodeConfig(text string) (Config, toml.MetaData, error) {
	cfg := DefaultConfig()
	var raw struct {
		Formats     map[string]toml.Primitive `toml:"formats"`
		Instruments []toml.Primitive          `toml:"instruments"`
	}
	md, err := toml.Decode(text, &cfg)
	if err == nil {
		_, err = toml.Decode(text, &raw)
	}
	if err != nil {
		return Config{}, md, err
	}
	// Each format starts from the defaults, so a format states only
	// what differs.
	cfg.Formats = map[string]parsers.Spec{}
	for name, prim := range raw.Formats {
		spec := parsers.DefaultSpec()
		if err := md.PrimitiveDecode(prim, &spec); err != nil {
			return Config{}, md, fmt.Errorf("formats.%s: %w", name, err)
		}
		cfg.Formats[name] = spec
	}
	cfg.hadSingle = md.IsDefined("instrument")
	cfg.Instruments = nil
	for i, prim := range raw.Instruments {
		ic := defaultInstrument()
		if err := md.PrimitiveDecode(prim, &ic); err != nil {
			return Config{}, md, fmt.Errorf("instruments[%d]: %w", i, err)
		}
		cfg.Instruments = append(cfg.Instruments, ic)
	}
	cfg.listed = len(raw.Instruments) > 0
	if cfg.listed {
		cfg.Instrument = cfg.Instruments[0]
	} else if cfg.hadSingle {
		cfg.Instruments = []InstrumentConfig{cfg.Instrument}
	}
	return cfg, md, nil
}

// durationHint is added to a problem with a duration.
const durationHint = `; write durations as a number and a unit with no space: "500ms", "2s", "10m", "1h30m"`

// quotedValue finds the first quoted text in an error message.
var quotedValue = regexp.MustCompile(`"((?:[^"\\]|\\.)*)"`)

// decodeProblem turns a decoding error into a problem with its line and,
// where the decoder names it, its key. An error without a position (from
// a format or instrument table decoded on its own) is placed at the first
// line that holds the quoted value it names.
func decodeProblem(err error, text string) LocatedProblem {
	var pe toml.ParseError
	if errors.As(err, &pe) {
		msg := pe.Message
		if strings.Contains(msg, "duration") {
			msg += durationHint
		}
		line := pe.Position.Line
		if line == 0 {
			line = pe.Line
		}
		return LocatedProblem{Line: line, Problem: campaign.Problem{Key: pe.LastKey, Message: msg}}
	}
	lp := LocatedProblem{Problem: campaign.Problem{Message: err.Error()}}
	if strings.Contains(lp.Message, "duration") {
		lp.Message += durationHint
	}
	if m := quotedValue.FindStringSubmatch(err.Error()); m != nil {
		for i, l := range strings.Split(text, "\n") {
			if k, v, ok := strings.Cut(l, "="); ok && strings.Contains(v, `"`+m[1]+`"`) {
				lp.Line, lp.Key = i+1, strings.TrimSpace(k)
				break
			}
		}
	}
	return lp
}

// LoadConfig reads, decodes and validates a configuration file. Unknown
// keys are errors. Relative folders are taken relative to the file's own
// folder. Every problem is reported at once, as a *ConfigError.
func LoadConfig(path string, reg *parsers.Registry) (Config, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return Config{}, fmt.Errorf("read config: %w", err)
	}
	// A value of the wrong type (a duration written "1 s") stops the
	// decoder at that key. So that every problem is still reported at
	// once, the line is blanked and the file decoded again, up to a
	// bound.
	text := string(data)
	var out []LocatedProblem
	var cfg Config
	var md toml.MetaData
	for tries := 0; ; tries++ {
		cfg, md, err = decodeConfig(text)
		if err == nil {
			break
		}
		lp := decodeProblem(err, text)
		out = append(out, lp)
		lines := strings.Split(text, "\n")
		// A syntax error ends it: what follows could not be trusted.
		var any map[string]any
		_, syntax := toml.Decode(text, &any)
		if syntax != nil || lp.Line < 1 || lp.Line > len(lines) || tries >= 50 {
			return Config{}, &ConfigError{Path: path, Problems: out}
		}
		lines[lp.Line-1] = ""
		text = strings.Join(lines, "\n")
	}
	lines := indexKeys(string(data))
	for _, k := range md.Undecoded() {
		if len(k) <= 2 && len(k) > 0 && k[0] == "formats" {
			continue // the format tables themselves, decoded one by one above
		}
		if len(k) == 1 && k[0] == "instruments" {
			continue // decoded one by one above
		}
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
	cfg.Campaign.Normalise()
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
	for i := range c.Instruments {
		c.Instruments[i].HandoffDir = abs(c.Instruments[i].HandoffDir)
		c.Instruments[i].Watch.Dir = abs(c.Instruments[i].Watch.Dir)
	}
	if len(c.Instruments) > 0 {
		c.Instrument = c.Instruments[0]
	}
	c.Console.TokensFile = abs(c.Console.TokensFile)
	c.Audit.KeyFile = abs(c.Audit.KeyFile)
	c.Audit.WitnessDir = abs(c.Audit.WitnessDir)
	if c.Log.File != "" && !filepath.IsAbs(c.Log.File) {
		c.Log.File = filepath.Join(c.Campaign.StateDir, c.Log.File)
	}
}

// Warnings lists settings that are legal but probably not meant.
func (c Config) Warnings() []string {
	out := c.Safety.Warnings(c.Campaign.Factors)
	if total := c.Capacity(); c.Planner.Batch > total {
		out = append(out, fmt.Sprintf("planner.batch is %d but the instruments take %d setpoint file(s) at once (capacity): the extra proposals queue until a result comes in; raise an instrument's capacity if it really has more positions", c.Planner.Batch, total))
	}
	for _, ic := range c.Instruments {
		spec, ok := c.Formats[ic.Format]
		if ok && spec.Trailer == "" && spec.Rows == 0 && ic.Watch.Settle < shortSettle {
			out = append(out, fmt.Sprintf("instrument %s: format %s has no trailer and no rows, and settle is %v: a writer that pauses longer than that gets a cut-off file read as a result; give the format a trailer (a line only a finished file has) or rows, or a longer settle", ic.Name, ic.Format, ic.Watch.Settle))
		}
	}
	return out
}

// maxCapacity bounds an instrument's capacity: positions on an autosampler
// tray, not a queue of hundreds.
const maxCapacity = 96

// Capacity is how many setpoint files all instruments take at once.
func (c Config) Capacity() int {
	n := 0
	for _, ic := range c.Instruments {
		n += ic.Capacity
	}
	return n
}

// shortSettle: below it, a file with nothing to show it is finished may be
// read while its writer pauses (common practice: instrument software often
// writes a header, then pauses for the measurement).
const shortSettle = 10 * time.Second
