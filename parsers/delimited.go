package parsers

import (
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"regexp"
	"strconv"
	"strings"
	"unicode/utf8"
)

// delimited reads delimited text: RFC 4180 quoting through encoding/csv,
// or runs of whitespace.
type delimited struct {
	*common
	comma   rune
	comment rune
	stopAt  *regexp.Regexp
}

func newDelimited(s Spec) (Parser, error) {
	c, err := newCommon(s)
	if err != nil {
		return nil, err
	}
	p := &delimited{common: c}
	p.comma, _ = s.delimiterRune()
	if s.Comment != "" {
		p.comment, _ = utf8.DecodeRuneInString(s.Comment)
	}
	if s.StopAt != "" {
		if p.stopAt, err = regexp.Compile(s.StopAt); err != nil {
			return nil, fmt.Errorf("parsers: stop_at: %w", err)
		}
	}
	return p, nil
}

// cell is one field with its place in the file.
type cell struct {
	text         string
	line, column int
}

func (p *delimited) Parse(name string, data []byte) (Record, error) {
	text, enc, err := decodeText(name, data, p.spec.Encoding)
	if err != nil {
		return Record{}, err
	}
	body, first, err := p.window(name, text)
	if err != nil {
		return Record{}, err
	}
	rows, err := p.rows(name, body, first)
	if err != nil {
		return Record{}, err
	}
	var header []cell
	if p.spec.Header {
		if len(rows) == 0 {
			return Record{}, perr(name, first, 0, ErrNoHeader)
		}
		header, rows = rows[0], rows[1:]
	}
	headerLine := first
	if len(header) > 0 {
		headerLine = header[0].line
	}
	find := func(label string) (int, error) {
		if !p.spec.Header {
			n, _ := strconv.Atoi(label) // validated by Spec.Validate
			return n - 1, nil
		}
		titles := make([]string, len(header))
		for i, h := range header {
			titles[i] = strings.TrimSpace(h.text)
			if titles[i] == label {
				return i, nil
			}
		}
		return -1, perr(name, headerLine, 0, fmt.Errorf("%w: %q (header has %s)", ErrMissingColumn, label, quoteList(titles)))
	}
	type want struct {
		key, name string
		index     int
		label     string
	}
	var wanted []want
	for _, n := range sortedKeys(p.spec.Values) {
		i, err := find(p.spec.Values[n].Column)
		if err != nil {
			return Record{}, err
		}
		wanted = append(wanted, want{"v", n, i, p.spec.Values[n].Column})
	}
	for _, n := range sortedKeys(p.spec.Factors) {
		i, err := find(p.spec.Factors[n].Column)
		if err != nil {
			return Record{}, err
		}
		wanted = append(wanted, want{"f", n, i, p.spec.Factors[n].Column})
	}
	if p.spec.RunIDSource == RunIDFromColumn {
		i, err := find(p.spec.RunIDColumn)
		if err != nil {
			return Record{}, err
		}
		wanted = append(wanted, want{"r", "", i, p.spec.RunIDColumn})
	}
	ex := extraction{values: map[string][]occurrence{}, factors: map[string][]occurrence{}}
	for _, row := range rows {
		ex.rows++
		for _, w := range wanted {
			if w.index >= len(row) {
				return Record{}, perr(name, row[0].line, 0, fmt.Errorf("%w: row has %d fields, column %q is field %d", ErrSyntax, len(row), w.label, w.index+1))
			}
			c := row[w.index]
			o := occurrence{raw: c.text, line: c.line, column: c.column}
			switch w.key {
			case "v":
				ex.values[w.name] = append(ex.values[w.name], o)
			case "f":
				ex.factors[w.name] = append(ex.factors[w.name], o)
			default:
				ex.runID = append(ex.runID, o)
			}
		}
	}
	if ex.rows == 0 {
		if p.spec.Rows > 0 || p.spec.Trailer != "" {
			return Record{}, perr(name, headerLine, 0, fmt.Errorf("%w: no data rows yet", ErrIncomplete))
		}
		return Record{}, perr(name, headerLine, 0, ErrNoData)
	}
	return p.finish(name, text, enc, ex)
}

// window drops the preamble and the footer (skip_footer lines, or from the
// first stop_at or trailer line on) and returns the rest with the file line number of
// its first line.
func (p *delimited) window(name, text string) (string, int, error) {
	lines := strings.SplitAfter(text, "\n")
	if n := len(lines); n > 0 && lines[n-1] == "" {
		lines = lines[:n-1]
	}
	if p.spec.SkipLines >= len(lines) && p.spec.SkipLines > 0 {
		return "", 0, perr(name, len(lines), 0, fmt.Errorf("%w: file has %d lines, skip_lines is %d", ErrNoHeader, len(lines), p.spec.SkipLines))
	}
	body := lines[p.spec.SkipLines:]
	first := p.spec.SkipLines + 1
	// Data rows end at the first stop_at line, and at the trailer line
	// of a complete file.
	for _, re := range []*regexp.Regexp{p.stopAt, p.trailer} {
		if re == nil {
			continue
		}
		start := 0
		if p.spec.Header {
			start = 1 // the header row is never a footer
		}
		for i := start; i < len(body); i++ {
			if re.MatchString(strings.TrimRight(body[i], "\r\n")) {
				body = body[:i]
				break
			}
		}
	}
	if p.spec.SkipFooter > 0 {
		// Trailing blank lines are not footer lines.
		end := len(body)
		for end > 0 && strings.TrimSpace(body[end-1]) == "" {
			end--
		}
		body = body[:max(0, end-p.spec.SkipFooter)]
	}
	return strings.Join(body, ""), first, nil
}

// rows splits the body into rows of cells, skipping blank and comment
// lines.
func (p *delimited) rows(name, body string, first int) ([][]cell, error) {
	line := func(l int) int { return l + first - 1 }
	var out [][]cell
	if p.comma == ' ' {
		for i, l := range strings.Split(body, "\n") {
			l = strings.TrimRight(l, "\r")
			if strings.TrimSpace(l) == "" || (p.comment != 0 && strings.HasPrefix(strings.TrimSpace(l), string(p.comment))) {
				continue
			}
			var row []cell
			col := 0
			for _, f := range strings.Fields(l) {
				at := strings.Index(l[col:], f) + col
				row = append(row, cell{text: f, line: line(i + 1), column: utf8.RuneCountInString(l[:at]) + 1})
				col = at + len(f)
			}
			out = append(out, row)
		}
		return out, nil
	}
	r := csv.NewReader(strings.NewReader(body))
	r.Comma = p.comma
	r.Comment = p.comment
	r.FieldsPerRecord = -1
	for {
		rec, err := r.Read()
		if err == io.EOF {
			return out, nil
		}
		if err != nil {
			var pe *csv.ParseError
			if errors.As(err, &pe) {
				return nil, perr(name, line(pe.Line), pe.Column, fmt.Errorf("%w: %v", ErrSyntax, pe.Err))
			}
			return nil, perr(name, 0, 0, err)
		}
		if len(rec) == 1 && strings.TrimSpace(rec[0]) == "" {
			continue
		}
		row := make([]cell, len(rec))
		for i, f := range rec {
			l, c := r.FieldPos(i)
			row[i] = cell{text: f, line: line(l), column: c}
		}
		out = append(out, row)
	}
}
