package parsers

import (
	"errors"
	"fmt"
	"math"
	"regexp"
	"sort"
	"strconv"
	"strings"

	"github.com/expr-lang/expr"
	"github.com/expr-lang/expr/vm"
)

// occurrence is one raw text found for a value, with its place.
type occurrence struct {
	raw          string
	line, column int
}

// extraction is what a format found in a file, before numbers are read.
type extraction struct {
	values  map[string][]occurrence
	factors map[string][]occurrence
	runID   []occurrence
	rows    int // data rows (delimited), for the completeness check
}

type derived struct {
	text string
	prog *vm.Program
}

// common is what every format shares: numbers, sentinels, reduction,
// units, derived values, run ids and completeness.
type common struct {
	spec    Spec
	runID   *regexp.Regexp
	trailer *regexp.Regexp
	derived map[string]*derived
	convert map[string]Converter
	sent    map[string]string // sentinel text -> reason
}

func newCommon(s Spec) (*common, error) {
	c := &common{spec: s, convert: map[string]Converter{}, sent: map[string]string{}}
	var err error
	if c.runID, err = regexp.Compile(s.RunIDRegexp()); err != nil {
		return nil, fmt.Errorf("parsers: run_id_pattern: %w", err)
	}
	if s.Trailer != "" {
		if c.trailer, err = regexp.Compile(s.Trailer); err != nil {
			return nil, fmt.Errorf("parsers: trailer: %w", err)
		}
	}
	var ps []error
	c.derived, _ = s.compileDerived()
	for n, v := range s.Values {
		conv, err := Conversion(v.Unit, v.To)
		if err != nil {
			ps = append(ps, err)
		}
		c.convert["v:"+n] = conv
	}
	for n, v := range s.Factors {
		conv, err := Conversion(v.Unit, v.To)
		if err != nil {
			ps = append(ps, err)
		}
		c.convert["f:"+n] = conv
	}
	if len(ps) > 0 {
		return nil, errors.Join(ps...)
	}
	for _, t := range s.Missing {
		c.sent[strings.TrimSpace(t)] = "missing value"
	}
	for _, t := range s.OverRange {
		c.sent[strings.TrimSpace(t)] = "over range"
	}
	for _, t := range s.UnderRange {
		c.sent[strings.TrimSpace(t)] = "under range"
	}
	return c, nil
}

// number reads a cell: a finite number in the spec's decimal mark and
// thousands separator, or a sentinel (returned as the failure reason).
func (c *common) number(s string) (float64, string, error) {
	t := strings.TrimSpace(s)
	if reason, ok := c.sent[t]; ok {
		return 0, fmt.Sprintf("%s (%q)", reason, t), nil
	}
	if t == "" {
		return 0, "missing value (empty)", nil
	}
	if c.spec.Thousands != "" {
		t = strings.ReplaceAll(t, c.spec.Thousands, "")
	}
	if c.spec.Decimal == "," {
		if strings.Contains(t, ".") {
			return 0, "", fmt.Errorf("%q has a '.' but the decimal mark is ','", s)
		}
		t = strings.Replace(t, ",", ".", 1)
	} else if strings.Contains(t, ",") {
		return 0, "", fmt.Errorf("%q has a ',' but the decimal mark is '.'", s)
	}
	v, err := strconv.ParseFloat(t, 64)
	if err != nil {
		return 0, "", fmt.Errorf("%q", s)
	}
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, "", fmt.Errorf("%q is not a finite number", s)
	}
	return v, "", nil
}

// value reduces the occurrences of one value to a Value.
func (c *common) value(name, key string, vs ValueSpec, occ []occurrence) (Value, error) {
	if len(occ) == 0 {
		return Value{}, perr(name, 0, 0, fmt.Errorf("%w: %s", ErrMissingValue, describe(vs)))
	}
	how := orDefault(vs.Reduce, orDefault(c.spec.Reduce, ReduceLast))
	var nums []float64
	last := occ[len(occ)-1]
	out := Value{Unit: vs.FinalUnit(), Rows: len(occ), Line: last.line, Column: last.column}
	for _, o := range occ {
		v, failed, err := c.number(o.raw)
		if err != nil {
			return Value{}, perr(name, o.line, o.column, fmt.Errorf("%w: %s: %v", ErrBadNumber, describe(vs), err))
		}
		if failed != "" {
			// One flagged reading spoils the value: a mean over an
			// over-range row is not a measurement.
			out.Failed = fmt.Sprintf("%s at line %d", failed, o.line)
			if o.column > 0 {
				out.Failed += fmt.Sprintf(", column %d", o.column)
			}
			out.Line, out.Column = o.line, o.column
			return out, nil
		}
		nums = append(nums, v)
	}
	switch how {
	case ReduceFirst:
		out.Number, out.Line, out.Column = nums[0], occ[0].line, occ[0].column
	case ReduceMean:
		var s float64
		for _, v := range nums {
			s += v
		}
		out.Number = s / float64(len(nums))
	case ReduceMedian:
		s := append([]float64(nil), nums...)
		sort.Float64s(s)
		if n := len(s); n%2 == 1 {
			out.Number = s[n/2]
		} else {
			out.Number = (s[n/2-1] + s[n/2]) / 2
		}
	case ReduceMin:
		out.Number = nums[0]
		for _, v := range nums {
			out.Number = math.Min(out.Number, v)
		}
	case ReduceMax:
		out.Number = nums[0]
		for _, v := range nums {
			out.Number = math.Max(out.Number, v)
		}
	default:
		out.Number = nums[len(nums)-1]
	}
	out.Number = c.convert[key](out.Number)
	return out, nil
}

func describe(vs ValueSpec) string {
	switch {
	case vs.Column != "":
		return fmt.Sprintf("column %q", vs.Column)
	case vs.Label != "":
		return fmt.Sprintf("label %q", vs.Label)
	case vs.Pattern != "":
		return fmt.Sprintf("pattern %q", vs.Pattern)
	}
	return fmt.Sprintf("path %q", vs.Path)
}

// finish turns an extraction into a record: completeness, run id, values,
// derived values.
func (c *common) finish(name, text, enc string, ex extraction) (Record, error) {
	if c.trailer != nil {
		found := false
		for _, l := range strings.Split(text, "\n") {
			if c.trailer.MatchString(strings.TrimRight(l, "\r")) {
				found = true
				break
			}
		}
		if !found {
			return Record{}, perr(name, 0, 0, fmt.Errorf("%w: no line matches the trailer %q", ErrIncomplete, c.spec.Trailer))
		}
	}
	if c.spec.Rows > 0 && c.spec.Format == FormatDelimited && ex.rows != c.spec.Rows {
		if ex.rows < c.spec.Rows {
			return Record{}, perr(name, 0, 0, fmt.Errorf("%w: %d data rows, a complete file has %d", ErrIncomplete, ex.rows, c.spec.Rows))
		}
		return Record{}, perr(name, 0, 0, fmt.Errorf("%w: %d data rows, the format says %d", ErrSyntax, ex.rows, c.spec.Rows))
	}
	rec := Record{Values: map[string]Value{}, Encoding: enc}
	switch c.spec.RunIDSource {
	case RunIDFromFileName:
		id, err := c.matchRunID(baseName(name))
		if err != nil {
			return Record{}, perr(name, 0, 0, fmt.Errorf("file name: %w", err))
		}
		rec.RunID, rec.RunIDFrom = id, "file name"
	case RunIDFromHandoff:
		rec.RunIDFrom = "oldest unanswered handoff"
	default:
		if len(ex.runID) == 0 {
			return Record{}, perr(name, 0, 0, fmt.Errorf("%w: the run id (%s) is not in the file", ErrNoRunID, c.spec.RunIDSource))
		}
		for _, o := range ex.runID {
			id, err := c.matchRunID(o.raw)
			if err != nil {
				return Record{}, perr(name, o.line, o.column, err)
			}
			if rec.RunID != "" && id != rec.RunID {
				return Record{}, perr(name, o.line, o.column, fmt.Errorf("%w: the file names two runs, %q and %q", ErrSyntax, rec.RunID, id))
			}
			rec.RunID, rec.RunIDFrom = id, fmt.Sprintf("line %d, column %d", o.line, o.column)
		}
	}
	for _, n := range sortedKeys(c.spec.Values) {
		v, err := c.value(name, "v:"+n, c.spec.Values[n], ex.values[n])
		if err != nil {
			return Record{}, err
		}
		// Several occurrences with no reduction configured: the last
		// was taken, which may not be what the instrument meant. A
		// reduction the config names is no surprise and not warned of.
		if v.Rows > 1 && c.spec.Values[n].Reduce == "" && c.spec.Reduce == "" {
			rec.Warnings = append(rec.Warnings, fmt.Sprintf("%s: %d occurrences, the last taken (set reduce to say which)", n, v.Rows))
		}
		rec.Values[n] = v
	}
	if len(c.spec.Factors) > 0 {
		rec.Factors = map[string]Value{}
		for _, n := range sortedKeys(c.spec.Factors) {
			v, err := c.value(name, "f:"+n, c.spec.Factors[n], ex.factors[n])
			if err != nil {
				return Record{}, err
			}
			rec.Factors[n] = v
		}
	}
	for _, n := range sortedKeys(c.derived) {
		rec.Values[n] = c.derive(c.derived[n], rec.Values)
	}
	return rec, nil
}

func orDefault(a, b string) string {
	if a != "" {
		return a
	}
	return b
}

// derive evaluates a derived value; it fails when an input failed or the
// result is not a finite number.
func (c *common) derive(d *derived, vals map[string]Value) Value {
	out := Value{Expression: d.text}
	env := make(map[string]any, len(vals))
	for n, v := range vals {
		if v.Failed != "" && regexp.MustCompile(`\b`+regexp.QuoteMeta(n)+`\b`).MatchString(d.text) {
			out.Failed = fmt.Sprintf("input %s failed: %s", n, v.Failed)
			return out
		}
		env[n] = v.Number
	}
	res, err := expr.Run(d.prog, env)
	f, ok := res.(float64)
	switch {
	case err != nil:
		out.Failed = "expression failed: " + err.Error()
	case !ok || math.IsNaN(f) || math.IsInf(f, 0):
		out.Failed = fmt.Sprintf("expression gave %v, not a finite number", res)
	default:
		out.Number = f
	}
	return out
}

func (c *common) matchRunID(s string) (string, error) {
	m := c.runID.FindStringSubmatch(strings.TrimSpace(s))
	if m == nil {
		return "", fmt.Errorf("%w: %q does not match run_id_pattern %q", ErrNoRunID, s, c.runID.String())
	}
	id := m[len(m)-1]
	if id == "" {
		return "", fmt.Errorf("%w: run_id_pattern %q matched nothing in %q", ErrNoRunID, c.runID.String(), s)
	}
	return id, nil
}

func baseName(name string) string {
	if i := strings.LastIndexAny(name, `/\`); i >= 0 {
		return name[i+1:]
	}
	return name
}

func quoteList(s []string) string {
	q := make([]string, len(s))
	for i, v := range s {
		q[i] = strconv.Quote(v)
	}
	return strings.Join(q, ", ")
}
