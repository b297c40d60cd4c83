package parsers

import (
	"regexp"
	"strconv"
	"unicode/utf8"

	"benchtender/campaign"
)

// FormatDelimited is delimited text: CSV, semicolon- or tab-separated.
const FormatDelimited = "delimited"

// Where a run id may come from.
const (
	RunIDFromFileName = "filename"
	RunIDFromColumn   = "column"
)

// Reductions applied when a file holds several data rows.
const (
	ReduceLast  = "last"
	ReduceFirst = "first"
	ReduceMean  = "mean"
)

// Spec is the [instrument.parser] section: which format, and how to read it.
type Spec struct {
	Format string `toml:"format"`
	// Delimiter is one character, or "tab".
	Delimiter string `toml:"delimiter"`
	// Decimal is the decimal mark: "." or ",".
	Decimal string `toml:"decimal"`
	// SkipLines is the number of preamble lines before the header row.
	SkipLines int `toml:"skip_lines"`
	// Header says whether a header row names the columns. Without one,
	// columns are named by position, counting from 1 ("3").
	Header bool `toml:"header"`
	// Comment, when set, is a character that starts a comment line.
	Comment string `toml:"comment"`
	// RunIDSource is "filename" or "column".
	RunIDSource string `toml:"run_id_source"`
	// RunIDPattern is a regular expression matched against the file name
	// or the column's text; its first capture group (or the whole match
	// when it has none) is the run id.
	RunIDPattern string `toml:"run_id_pattern"`
	// RunIDColumn names the column holding the run id.
	RunIDColumn string `toml:"run_id_column"`
	// Reduce says how several data rows become one value: "last",
	// "first" or "mean".
	Reduce string `toml:"reduce"`
	// Responses maps each response name to its column.
	Responses map[string]string `toml:"responses"`
	// Factors optionally maps factor names to columns that echo the
	// setpoint actually run.
	Factors map[string]string `toml:"factors"`
}

// DefaultSpec returns the defaults for keys a file may leave out.
func DefaultSpec() Spec {
	return Spec{
		Format:       FormatDelimited,
		Delimiter:    ",",
		Decimal:      ".",
		Header:       true,
		RunIDSource:  RunIDFromFileName,
		RunIDPattern: `([A-Za-z0-9][A-Za-z0-9_.-]*)\.[^.]*$`,
		Reduce:       ReduceLast,
	}
}

// delimiterRune returns the delimiter as a rune.
func (s Spec) delimiterRune() (rune, bool) {
	if s.Delimiter == "tab" {
		return '\t', true
	}
	r, n := utf8.DecodeRuneInString(s.Delimiter)
	if n == 0 || n != len(s.Delimiter) || r == utf8.RuneError || r == '"' || r == '\r' || r == '\n' {
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
	d, ok := s.delimiterRune()
	if !ok {
		ps.Add("delimiter", "must be one character or \"tab\", got %q", s.Delimiter)
	}
	if s.Decimal != "." && s.Decimal != "," {
		ps.Add("decimal", "must be \".\" or \",\", got %q", s.Decimal)
	}
	if ok && s.Decimal == string(d) {
		ps.Add("decimal", "decimal mark %q is also the delimiter", s.Decimal)
	}
	if s.SkipLines < 0 {
		ps.Add("skip_lines", "must not be negative, got %d", s.SkipLines)
	}
	if s.Comment != "" && utf8.RuneCountInString(s.Comment) != 1 {
		ps.Add("comment", "must be one character, got %q", s.Comment)
	}
	switch s.RunIDSource {
	case RunIDFromFileName:
	case RunIDFromColumn:
		if s.RunIDColumn == "" {
			ps.Add("run_id_column", "must name a column when run_id_source is %q", RunIDFromColumn)
		} else {
			ps = append(ps, s.checkColumn("run_id_column", s.RunIDColumn)...)
		}
	default:
		ps.Add("run_id_source", "must be %q or %q, got %q", RunIDFromFileName, RunIDFromColumn, s.RunIDSource)
	}
	if re, err := regexp.Compile(s.RunIDPattern); err != nil {
		ps.Add("run_id_pattern", "not a regular expression: %v", err)
	} else if s.RunIDPattern == "" {
		ps.Add("run_id_pattern", "must not be empty")
	} else if re.NumSubexp() > 1 {
		ps.Add("run_id_pattern", "at most one capture group, got %d", re.NumSubexp())
	}
	switch s.Reduce {
	case ReduceLast, ReduceFirst, ReduceMean:
	default:
		ps.Add("reduce", "must be %q, %q or %q, got %q", ReduceLast, ReduceFirst, ReduceMean, s.Reduce)
	}
	if len(s.Responses) == 0 {
		ps.Add("responses", "map at least one response to a column")
	}
	for name, col := range s.Responses {
		ps = append(ps, s.checkColumn("responses."+name, col)...)
	}
	for name, col := range s.Factors {
		ps = append(ps, s.checkColumn("factors."+name, col)...)
	}
	return ps
}

func (s Spec) checkColumn(key, col string) campaign.Problems {
	var ps campaign.Problems
	if col == "" {
		ps.Add(key, "column must not be empty")
	} else if !s.Header {
		if n, err := strconv.Atoi(col); err != nil || n < 1 {
			ps.Add(key, "without a header row, columns are numbered from 1; got %q", col)
		}
	}
	return ps
}
