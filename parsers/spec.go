package parsers

import (
	"fmt"
	"regexp"
	"sort"
	"strconv"
	"time"
	"unicode/utf8"

	"github.com/expr-lang/expr"

	"benchtender/campaign"
)

// Formats.
const (
	FormatDelimited = "delimited" // CSV, semicolon-, tab- or space-separated text
	FormatReport    = "report"    // key-value text and printed reports
	FormatJSON      = "json"
	FormatXML       = "xml"
)

// Where a run id may come from.
const (
	RunIDFromFileName = "filename"
	RunIDFromColumn   = "column"         // delimited
	RunIDFromLabel    = "label"          // report
	RunIDFromPath     = "path"           // json, xml
	RunIDFromHandoff  = "oldest_handoff" // the file names no run: the oldest unanswered handoff
)

// Reductions applied when a value occurs several times (rows of a table,
// repeated labels, arrays).
const (
	ReduceLast   = "last"
	ReduceFirst  = "first"
	ReduceMean   = "mean"
	ReduceMedian = "median"
	ReduceMin    = "min"
	ReduceMax    = "max"
)

var reductions = []string{ReduceLast, ReduceFirst, ReduceMean, ReduceMedian, ReduceMin, ReduceMax}

// ValueSpec says where one value is found and in which unit.
type ValueSpec struct {
	// Column is a header title, or a column number counting from 1 when
	// the file has no header (delimited).
	Column string `toml:"column"`
	// Label is the text just before the value on its line, e.g.
	// "Peak area:" (report).
	Label string `toml:"label"`
	// Pattern is a regular expression with one capture group, matched
	// against each line (report).
	Pattern string `toml:"pattern"`
	// Path locates the value: "results.0.purity" (json; "*" takes every
	// element of an array) or "Report/Sample/Purity", with "@name" for an
	// attribute as the last step (xml).
	Path string `toml:"path"`
	// Unit is the unit the file writes the value in; To, when set, the
	// unit to convert it to (NIST SP 811 factors; see units.go).
	Unit string `toml:"unit"`
	To   string `toml:"to"`
	// Reduce overrides the spec's reduction for this value.
	Reduce string `toml:"reduce"`
}

// FinalUnit is the unit of the value after conversion.
func (v ValueSpec) FinalUnit() string {
	if v.To != "" {
		return v.To
	}
	return v.Unit
}

// Spec is one named format of the [formats] section: how to read an
// instrument's result files.
type Spec struct {
	Format string `toml:"format"`
	// Encoding is "auto" (default: BOM, then UTF-8, then UTF-16 without
	// BOM, then Windows-1252), "utf-8", "utf-16le", "utf-16be",
	// "windows-1252" or "latin-1".
	Encoding string `toml:"encoding"`

	// Delimited text.
	// Delimiter is one character, "tab" or "whitespace" (runs of spaces
	// and tabs).
	Delimiter string `toml:"delimiter"`
	// Decimal is the decimal mark, "." or ","; Thousands an optional
	// thousands separator ("", ".", ",", " " or "'").
	Decimal   string `toml:"decimal"`
	Thousands string `toml:"thousands"`
	// SkipLines is the number of preamble lines before the header row.
	SkipLines int `toml:"skip_lines"`
	// Header says whether a header row names the columns.
	Header bool `toml:"header"`
	// Comment, when set, is a character that starts a comment line.
	Comment string `toml:"comment"`
	// SkipFooter drops this many lines at the end (summary lines).
	SkipFooter int `toml:"skip_footer"`
	// StopAt, when set, is a regular expression: the data rows end at the
	// first line it matches (e.g. "^(Mean|Average)").
	StopAt string `toml:"stop_at"`

	// Run id.
	RunIDSource  string `toml:"run_id_source"`
	RunIDPattern string `toml:"run_id_pattern"`
	RunIDColumn  string `toml:"run_id_column"`
	RunIDLabel   string `toml:"run_id_label"`
	RunIDPath    string `toml:"run_id_path"`

	// Reduce is how repeated values become one: "last", "first", "mean",
	// "median", "min" or "max".
	Reduce string `toml:"reduce"`
	// Values maps a value's name to where it is found; the campaign's
	// response is the value (or derived value) of the same name.
	Values map[string]ValueSpec `toml:"values"`
	// Factors optionally maps factor names to values that echo the
	// setpoint actually run.
	Factors map[string]ValueSpec `toml:"factors"`
	// Derived maps a name to an expression over values, e.g.
	// "purity * yield / 100" (evaluated by github.com/expr-lang/expr).
	Derived map[string]string `toml:"derived"`

	// Missing, OverRange and UnderRange list the texts an instrument
	// writes instead of a number; such a value is a failed measurement
	// with that reason, never a number.
	Missing    []string `toml:"missing"`
	OverRange  []string `toml:"over_range"`
	UnderRange []string `toml:"under_range"`

	// Completeness: Trailer, a regular expression, must match a line of
	// a complete file; Rows, when positive, is the number of data rows a
	// complete file has. An incomplete file waits; after
	// IncompleteTimeout it is quarantined.
	Trailer           string        `toml:"trailer"`
	Rows              int           `toml:"rows"`
	IncompleteTimeout time.Duration `toml:"incomplete_timeout"`
}

// Run-id patterns used when run_id_pattern is left out: a file name's
// stem (the name up to its last dot, e.g. R0012 in "R0012.csv"), or, from
// a column, label or path, the whole text.
const (
	defaultFileRunID = `([A-Za-z0-9][A-Za-z0-9_.-]*)\.[^.]*$`
	defaultTextRunID = `^(.+)$`
)

// RunIDRegexp returns the run-id pattern in force: run_id_pattern, or
// the default for the run id's source.
func (s Spec) RunIDRegexp() string {
	switch {
	case s.RunIDPattern != "":
		return s.RunIDPattern
	case s.RunIDSource == RunIDFromFileName:
		return defaultFileRunID
	}
	return defaultTextRunID
}

// DefaultSpec returns the defaults for keys a format may leave out. The
// sentinel lists are texts commonly written by instrument software
// (common practice, no single source).
func DefaultSpec() Spec {
	return Spec{
		Format:            FormatDelimited,
		Encoding:          EncodingAuto,
		Delimiter:         ",",
		Decimal:           ".",
		Header:            true,
		RunIDSource:       RunIDFromFileName,
		Missing:           []string{"", "NaN", "nan", "n/a", "N/A", "NA", "-", "--", "---", "----"},
		OverRange:         []string{"OVER", "OVR", "OVRNG", ">>>>", "+OVER"},
		UnderRange:        []string{"UNDER", "UNDR", "<<<<", "-OVER"},
		IncompleteTimeout: 10 * time.Minute,
	}
}

// delimiterRune returns the delimiter as a rune; ' ' stands for
// "whitespace".
func (s Spec) delimiterRune() (rune, bool) {
	switch s.Delimiter {
	case "tab":
		return '\t', true
	case "whitespace":
		return ' ', true
	}
	r, n := utf8.DecodeRuneInString(s.Delimiter)
	if n == 0 || n != len(s.Delimiter) || r == utf8.RuneError || r == '"' || r == '\r' || r == '\n' || r == ' ' {
		return 0, false
	}
	return r, true
}

// Validate reports every problem in the spec, keyed relative to the
// section. reg, when not nil, is asked whether the format exists.
func (s Spec) Validate(reg *Registry) campaign.Problems {
	var ps campaign.Problems
	if reg != nil {
		if _, ok := reg.formats[s.Format]; !ok {
			ps.Add("format", "unknown format %q (known: %v)", s.Format, reg.Names())
		}
	}
	if !knownEncoding(s.Encoding) {
		ps.Add("encoding", "must be auto, utf-8, utf-16le, utf-16be, windows-1252 or latin-1, got %q", s.Encoding)
	}
	d, ok := s.delimiterRune()
	if !ok {
		ps.Add("delimiter", "must be one character, \"tab\" or \"whitespace\", got %q", s.Delimiter)
	}
	ok = ok && s.Format == FormatDelimited // the delimiter matters only there
	if s.Decimal != "." && s.Decimal != "," {
		ps.Add("decimal", "must be \".\" or \",\", got %q", s.Decimal)
	}
	if ok && s.Decimal == string(d) {
		ps.Add("decimal", "decimal mark %q is also the delimiter", s.Decimal)
	}
	switch s.Thousands {
	case "", ".", ",", " ", "'":
		if s.Thousands != "" && s.Thousands == s.Decimal {
			ps.Add("thousands", "the thousands separator %q is also the decimal mark", s.Thousands)
		}
		if s.Thousands != "" && ok && s.Thousands == string(d) {
			ps.Add("thousands", "the thousands separator %q is also the delimiter", s.Thousands)
		}
	default:
		ps.Add("thousands", "must be empty, \".\", \",\", \" \" or \"'\", got %q", s.Thousands)
	}
	for key, n := range map[string]int{"skip_lines": s.SkipLines, "skip_footer": s.SkipFooter, "rows": s.Rows} {
		if n < 0 {
			ps.Add(key, "must not be negative, got %d", n)
		}
	}
	if s.Comment != "" && utf8.RuneCountInString(s.Comment) != 1 {
		ps.Add("comment", "must be one character, got %q", s.Comment)
	}
	for key, re := range map[string]string{"stop_at": s.StopAt, "trailer": s.Trailer} {
		if _, err := regexp.Compile(re); err != nil {
			ps.Add(key, "not a regular expression: %v", err)
		}
	}
	if s.IncompleteTimeout < 0 {
		ps.Add("incomplete_timeout", "must not be negative, got %v", s.IncompleteTimeout)
	}
	ps = append(ps, s.validateRunID()...)
	if s.Reduce != "" && !validReduce(s.Reduce) {
		ps.Add("reduce", "must be one of %v, got %q", reductions, s.Reduce)
	}
	if len(s.Values) == 0 {
		ps.Add("values", "name at least one value and where it is found")
	}
	for _, name := range sortedKeys(s.Values) {
		ps = append(ps, s.validateValue("values."+name, s.Values[name])...)
	}
	for _, name := range sortedKeys(s.Factors) {
		ps = append(ps, s.validateValue("factors."+name, s.Factors[name])...)
	}
	if _, dps := s.compileDerived(); len(dps) > 0 {
		ps = append(ps, dps...)
	}
	return ps
}

func (s Spec) validateRunID() campaign.Problems {
	var ps campaign.Problems
	need := func(key, v string) {
		if v == "" {
			ps.Add(key, "is needed when run_id_source is %q", s.RunIDSource)
		}
	}
	switch s.RunIDSource {
	case RunIDFromFileName, RunIDFromHandoff:
	case RunIDFromColumn:
		need("run_id_column", s.RunIDColumn)
		if s.Format != FormatDelimited {
			ps.Add("run_id_source", "%q is for delimited files; use %q or %q", RunIDFromColumn, RunIDFromLabel, RunIDFromPath)
		}
	case RunIDFromLabel:
		need("run_id_label", s.RunIDLabel)
		if s.Format != FormatReport {
			ps.Add("run_id_source", "%q is for report files", RunIDFromLabel)
		}
	case RunIDFromPath:
		need("run_id_path", s.RunIDPath)
		if s.Format != FormatJSON && s.Format != FormatXML {
			ps.Add("run_id_source", "%q is for json and xml files", RunIDFromPath)
		}
	default:
		ps.Add("run_id_source", "must be filename, column, label, path or oldest_handoff, got %q", s.RunIDSource)
	}
	if re, err := regexp.Compile(s.RunIDPattern); err != nil {
		ps.Add("run_id_pattern", "not a regular expression: %v", err)
	} else if re.NumSubexp() > 1 {
		ps.Add("run_id_pattern", "at most one capture group, got %d", re.NumSubexp())
	}
	return ps
}

func validReduce(r string) bool {
	for _, x := range reductions {
		if r == x {
			return true
		}
	}
	return false
}

func (s Spec) validateValue(key string, v ValueSpec) campaign.Problems {
	var ps campaign.Problems
	if v.Reduce != "" && !validReduce(v.Reduce) {
		ps.Add(key+".reduce", "must be one of %v, got %q", reductions, v.Reduce)
	}
	if _, err := Conversion(v.Unit, v.To); err != nil {
		ps.Add(key+".to", "%v", err)
	}
	set := 0
	for _, f := range []string{v.Column, v.Label, v.Pattern, v.Path} {
		if f != "" {
			set++
		}
	}
	if set != 1 {
		ps.Add(key, "give exactly one of column, label, pattern or path")
		return ps
	}
	switch s.Format {
	case FormatDelimited:
		if v.Column == "" {
			ps.Add(key, "a delimited format finds values by column")
		} else if !s.Header {
			if n, err := strconv.Atoi(v.Column); err != nil || n < 1 {
				ps.Add(key+".column", "without a header row, columns are numbered from 1; got %q", v.Column)
			}
		}
	case FormatReport:
		if v.Label == "" && v.Pattern == "" {
			ps.Add(key, "a report format finds values by label or pattern")
		}
		if v.Pattern != "" {
			if re, err := regexp.Compile(v.Pattern); err != nil {
				ps.Add(key+".pattern", "not a regular expression: %v", err)
			} else if re.NumSubexp() != 1 {
				ps.Add(key+".pattern", "needs exactly one capture group around the value, got %d", re.NumSubexp())
			}
		}
	case FormatJSON, FormatXML:
		if v.Path == "" {
			ps.Add(key, "a %s format finds values by path", s.Format)
		}
	}
	return ps
}

// compileDerived compiles the derived expressions against the value names.
func (s Spec) compileDerived() (map[string]*derived, campaign.Problems) {
	var ps campaign.Problems
	env := map[string]any{}
	for n := range s.Values {
		env[n] = 0.0
	}
	out := map[string]*derived{}
	for _, name := range sortedKeys(s.Derived) {
		text := s.Derived[name]
		if _, clash := s.Values[name]; clash {
			ps.Add("derived."+name, "%q is already a value", name)
			continue
		}
		prog, err := expr.Compile(text, expr.Env(env), expr.AsFloat64())
		if err != nil {
			ps.Add("derived."+name, "%q: %v", text, firstLine(err.Error()))
			continue
		}
		out[name] = &derived{text: text, prog: prog}
	}
	return out, ps
}

// Names returns every value and derived value the spec yields.
func (s Spec) Names() []string {
	var out []string
	out = append(out, sortedKeys(s.Values)...)
	out = append(out, sortedKeys(s.Derived)...)
	sort.Strings(out)
	return out
}

// UnitOf returns the final unit of a named value ("" for derived values).
func (s Spec) UnitOf(name string) string { return s.Values[name].FinalUnit() }

func sortedKeys[V any](m map[string]V) []string {
	out := make([]string, 0, len(m))
	for k := range m {
		out = append(out, k)
	}
	sort.Strings(out)
	return out
}

func firstLine(s string) string {
	for i, r := range s {
		if r == '\n' {
			return s[:i]
		}
	}
	return s
}

func (s Spec) String() string { return fmt.Sprintf("%s format", s.Format) }
