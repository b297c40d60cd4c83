package parsers

import (
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"regexp"
	"strconv"
	"strings"
	"unicode/utf8"
)

// delimited reads delimited text (RFC 4180 quoting, via encoding/csv).
type delimited struct {
	spec    Spec
	comma   rune
	comment rune
	runID   *regexp.Regexp
}

func newDelimited(s Spec) (Parser, error) {
	comma, _ := s.delimiterRune()
	var comment rune
	if s.Comment != "" {
		comment, _ = utf8.DecodeRuneInString(s.Comment)
	}
	re, err := regexp.Compile(s.RunIDPattern)
	if err != nil {
		return nil, fmt.Errorf("parsers: run_id_pattern: %w", err)
	}
	return &delimited{spec: s, comma: comma, comment: comment, runID: re}, nil
}

// column is a wanted column: its index in the row and the key it feeds.
type column struct {
	index int
	label string
}

func (p *delimited) Parse(name string, data []byte) (Record, error) {
	text, err := textOf(name, data)
	if err != nil {
		return Record{}, err
	}
	body, bodyLine, err := skipLines(name, text, p.spec.SkipLines)
	if err != nil {
		return Record{}, err
	}
	r := csv.NewReader(strings.NewReader(body))
	r.Comma = p.comma
	r.Comment = p.comment
	r.FieldsPerRecord = -1
	r.ReuseRecord = false

	// line converts a csv line number to a line number in the file.
	line := func(l int) int { return l + bodyLine - 1 }
	csvErr := func(err error) error {
		var pe *csv.ParseError
		if errors.As(err, &pe) {
			return perr(name, line(pe.Line), pe.Column, fmt.Errorf("%w: %v", ErrSyntax, pe.Err))
		}
		return perr(name, 0, 0, err)
	}

	var header []string
	headerLine := 0
	if p.spec.Header {
		rec, err := r.Read()
		if err == io.EOF {
			return Record{}, perr(name, line(1), 0, ErrNoHeader)
		}
		if err != nil {
			return Record{}, csvErr(err)
		}
		header = rec
		headerLine, _ = r.FieldPos(0)
		headerLine = line(headerLine)
		for i := range header {
			header[i] = strings.TrimSpace(header[i])
		}
	}
	find := func(label string) (int, error) {
		if !p.spec.Header {
			n, _ := strconv.Atoi(label) // validated by Spec.Validate
			return n - 1, nil
		}
		for i, h := range header {
			if h == label {
				return i, nil
			}
		}
		return -1, perr(name, headerLine, 0, fmt.Errorf("%w: %q (header has %s)", ErrMissingColumn, label, quoteList(header)))
	}
	wanted := func(m map[string]string) (map[string]column, error) {
		out := make(map[string]column, len(m))
		for key, label := range m {
			i, err := find(label)
			if err != nil {
				return nil, err
			}
			out[key] = column{index: i, label: label}
		}
		return out, nil
	}
	responses, err := wanted(p.spec.Responses)
	if err != nil {
		return Record{}, err
	}
	factors, err := wanted(p.spec.Factors)
	if err != nil {
		return Record{}, err
	}
	runCol := -1
	if p.spec.RunIDSource == RunIDFromColumn {
		if runCol, err = find(p.spec.RunIDColumn); err != nil {
			return Record{}, err
		}
	}

	acc := map[string]*reducer{}
	for k := range responses {
		acc["r:"+k] = &reducer{how: p.spec.Reduce}
	}
	for k := range factors {
		acc["f:"+k] = &reducer{how: p.spec.Reduce}
	}
	rec := Record{}
	rows := 0
	for {
		row, err := r.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			return Record{}, csvErr(err)
		}
		rowLine, _ := r.FieldPos(0)
		rowLine = line(rowLine)
		if len(row) == 1 && strings.TrimSpace(row[0]) == "" {
			continue
		}
		rows++
		cell := func(c column) (float64, int, error) {
			if c.index >= len(row) {
				return 0, 0, perr(name, rowLine, 0, fmt.Errorf("%w: row has %d fields, column %q is field %d", ErrSyntax, len(row), c.label, c.index+1))
			}
			_, col := r.FieldPos(c.index)
			v, err := p.number(row[c.index])
			if err != nil {
				return 0, col, perr(name, rowLine, col, fmt.Errorf("%w: column %q: %v", ErrBadNumber, c.label, err))
			}
			return v, col, nil
		}
		for prefix, cols := range map[string]map[string]column{"r:": responses, "f:": factors} {
			for k, c := range cols {
				v, col, err := cell(c)
				if err != nil {
					return Record{}, err
				}
				acc[prefix+k].add(v, rowLine, col)
			}
		}
		if runCol >= 0 {
			if runCol >= len(row) {
				return Record{}, perr(name, rowLine, 0, fmt.Errorf("%w: row has %d fields, run id is field %d", ErrSyntax, len(row), runCol+1))
			}
			_, col := r.FieldPos(runCol)
			id, err := p.matchRunID(row[runCol])
			if err != nil {
				return Record{}, perr(name, rowLine, col, err)
			}
			if rec.RunID != "" && id != rec.RunID {
				return Record{}, perr(name, rowLine, col, fmt.Errorf("%w: rows name two runs, %q and %q", ErrSyntax, rec.RunID, id))
			}
			rec.RunID, rec.RunIDFrom = id, fmt.Sprintf("line %d, column %d", rowLine, col)
		}
	}
	if rows == 0 {
		l := headerLine
		if l == 0 {
			l = bodyLine
		}
		return Record{}, perr(name, l, 0, ErrNoData)
	}
	if p.spec.RunIDSource == RunIDFromFileName {
		id, err := p.matchRunID(baseName(name))
		if err != nil {
			return Record{}, perr(name, 0, 0, fmt.Errorf("file name: %w", err))
		}
		rec.RunID, rec.RunIDFrom = id, "file name"
	}
	rec.Responses = make(map[string]Value, len(responses))
	for k := range responses {
		rec.Responses[k] = acc["r:"+k].value()
	}
	if len(factors) > 0 {
		rec.Factors = make(map[string]Value, len(factors))
		for k := range factors {
			rec.Factors[k] = acc["f:"+k].value()
		}
	}
	if rows > 1 {
		rec.Warnings = append(rec.Warnings, fmt.Sprintf("%d data rows reduced by %q", rows, p.spec.Reduce))
	}
	return rec, nil
}

func (p *delimited) matchRunID(s string) (string, error) {
	m := p.runID.FindStringSubmatch(strings.TrimSpace(s))
	if m == nil {
		return "", fmt.Errorf("%w: %q does not match run_id_pattern %q", ErrNoRunID, s, p.runID.String())
	}
	id := m[len(m)-1]
	if id == "" {
		return "", fmt.Errorf("%w: run_id_pattern %q matched nothing in %q", ErrNoRunID, p.runID.String(), s)
	}
	return id, nil
}

// number parses a cell with the spec's decimal mark. Infinities and NaN are
// refused: a measurement is a finite number.
func (p *delimited) number(s string) (float64, error) {
	t := strings.TrimSpace(s)
	if t == "" {
		return 0, errors.New("empty cell")
	}
	if p.spec.Decimal == "," {
		if strings.Contains(t, ".") {
			return 0, fmt.Errorf("%q has a '.' but the decimal mark is ','", t)
		}
		t = strings.Replace(t, ",", ".", 1)
	} else if strings.Contains(t, ",") {
		return 0, fmt.Errorf("%q has a ',' but the decimal mark is '.'", t)
	}
	v, err := strconv.ParseFloat(t, 64)
	if err != nil {
		return 0, fmt.Errorf("%q", s)
	}
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, fmt.Errorf("%q is not a finite number", s)
	}
	return v, nil
}

// reducer folds a column's values over the rows.
type reducer struct {
	how       string
	n         int
	sum       float64
	v         float64
	line, col int
}

func (r *reducer) add(v float64, line, col int) {
	r.n++
	r.sum += v
	if r.how == ReduceFirst && r.n > 1 {
		return
	}
	r.v, r.line, r.col = v, line, col
}

func (r *reducer) value() Value {
	v := r.v
	if r.how == ReduceMean {
		v = r.sum / float64(r.n)
	}
	return Value{Number: v, Line: r.line, Column: r.col, Rows: r.n}
}

// textOf checks that data is text and returns it without a UTF-8 BOM.
func textOf(name string, data []byte) (string, error) {
	if len(bytes.TrimSpace(data)) == 0 {
		return "", perr(name, 0, 0, ErrEmpty)
	}
	data = bytes.TrimPrefix(data, []byte("\xEF\xBB\xBF"))
	line := 1
	for i := 0; i < len(data); {
		r, n := utf8.DecodeRune(data[i:])
		if (r == utf8.RuneError && n == 1) || r == 0 {
			return "", perr(name, line, 0, fmt.Errorf("%w: byte 0x%02X at offset %d (not UTF-8; is it UTF-16 or binary?)", ErrBinary, data[i], i))
		}
		if r == '\n' {
			line++
		}
		i += n
	}
	return string(data), nil
}

// skipLines drops n preamble lines and returns the rest with the file line
// number of its first line.
func skipLines(name, text string, n int) (string, int, error) {
	rest := text
	for i := 0; i < n; i++ {
		j := strings.IndexByte(rest, '\n')
		if j < 0 {
			return "", 0, perr(name, i+1, 0, fmt.Errorf("%w: file has %d lines, skip_lines is %d", ErrNoHeader, i+1, n))
		}
		rest = rest[j+1:]
	}
	return rest, n + 1, nil
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
