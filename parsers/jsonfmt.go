package parsers

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"strconv"
	"strings"
)

// jsonFormat reads JSON exports: a value is found by a dotted path of
// object keys and array indexes ("results.0.purity"), "*" standing for
// every element of an array. The document is walked token by token, so
// every value keeps its line and column.
type jsonFormat struct {
	*common
	paths map[string][]string // key -> path steps
}

func newJSON(s Spec) (Parser, error) {
	c, err := newCommon(s)
	if err != nil {
		return nil, err
	}
	split := func(path string) []string { return strings.Split(path, ".") }
	return &jsonFormat{common: c, paths: pathsOf(s, split)}, nil
}

func (p *jsonFormat) Parse(name string, data []byte) (Record, error) {
	text, enc, err := decodeText(name, data, p.spec.Encoding)
	if err != nil {
		return Record{}, err
	}
	ex := extraction{values: map[string][]occurrence{}, factors: map[string][]occurrence{}}
	dec := json.NewDecoder(strings.NewReader(text))
	dec.UseNumber()
	pos := newPositions(text)
	// The walk keeps the path of the current token: object keys, and
	// array indexes as strings.
	type frame struct {
		array  bool
		index  int
		key    string
		expect bool // object: the next string is a key
	}
	var stack []frame
	path := func() []string {
		out := make([]string, len(stack))
		for i, f := range stack {
			if f.array {
				out[i] = strconv.Itoa(f.index)
			} else {
				out[i] = f.key
			}
		}
		return out
	}
	emit := func(raw string, off int64) {
		at := path()
		line, col := pos.at(int(off))
		for key, steps := range p.paths {
			if !matchPath(steps, at) {
				continue
			}
			o := occurrence{raw: raw, line: line, column: col}
			switch {
			case key == "r:":
				ex.runID = append(ex.runID, o)
			case strings.HasPrefix(key, "v:"):
				ex.values[key[2:]] = append(ex.values[key[2:]], o)
			default:
				ex.factors[key[2:]] = append(ex.factors[key[2:]], o)
			}
		}
	}
	advance := func() {
		if n := len(stack); n > 0 {
			if stack[n-1].array {
				stack[n-1].index++
			} else {
				stack[n-1].expect = true
			}
		}
	}
	for {
		off := dec.InputOffset()
		tok, err := dec.Token()
		if err == io.EOF {
			break
		}
		if err != nil {
			line, col := pos.at(int(dec.InputOffset()))
			var se *json.SyntaxError
			if errors.As(err, &se) {
				line, col = pos.at(int(se.Offset))
			}
			if errors.Is(err, io.ErrUnexpectedEOF) {
				return Record{}, perr(name, line, col, fmt.Errorf("%w: JSON ends early", ErrIncomplete))
			}
			return Record{}, perr(name, line, col, fmt.Errorf("%w: %v", ErrSyntax, err))
		}
		// The offset before the token may point at the separator; skip
		// spaces, commas and colons to the token itself.
		start := skipSeparators(text, int(off))
		switch t := tok.(type) {
		case json.Delim:
			switch t {
			case '{':
				stack = append(stack, frame{expect: true})
			case '[':
				stack = append(stack, frame{array: true})
			default:
				stack = stack[:len(stack)-1]
				advance()
			}
			continue
		case string:
			if n := len(stack); n > 0 && !stack[n-1].array && stack[n-1].expect {
				stack[n-1].key, stack[n-1].expect = t, false
				continue
			}
			emit(t, int64(start))
		case json.Number:
			emit(t.String(), int64(start))
		case nil:
			emit("", int64(start))
		case bool:
			emit(strconv.FormatBool(t), int64(start))
		}
		advance()
	}
	if len(stack) != 0 {
		return Record{}, perr(name, 0, 0, fmt.Errorf("%w: JSON ends early", ErrIncomplete))
	}
	return p.finish(name, text, enc, ex)
}

func skipSeparators(text string, off int) int {
	for off < len(text) && bytes.IndexByte([]byte(" \t\r\n,:"), text[off]) >= 0 {
		off++
	}
	return off
}

// pathsOf splits the path of every value and factor (keyed as in
// allValues) and of the run id (keyed "r:") into steps.
func pathsOf(s Spec, split func(string) []string) map[string][]string {
	paths := map[string][]string{}
	for key, vs := range allValues(s) {
		paths[key] = split(vs.Path)
	}
	if s.RunIDSource == RunIDFromPath {
		paths["r:"] = split(s.RunIDPath)
	}
	return paths
}

// matchPath reports whether a concrete path matches the steps, "*"
// matching any one step.
func matchPath(steps, at []string) bool {
	if len(steps) != len(at) {
		return false
	}
	for i, s := range steps {
		if s != "*" && s != at[i] {
			return false
		}
	}
	return true
}

// positions turns byte offsets into line and column (in characters).
type positions struct {
	text   string
	starts []int
}

func newPositions(text string) positions {
	p := positions{text: text, starts: []int{0}}
	for i := 0; i < len(text); i++ {
		if text[i] == '\n' {
			p.starts = append(p.starts, i+1)
		}
	}
	return p
}

func (p positions) at(off int) (int, int) {
	if off > len(p.text) {
		off = len(p.text)
	}
	lo, hi := 0, len(p.starts)-1
	for lo < hi {
		mid := (lo + hi + 1) / 2
		if p.starts[mid] <= off {
			lo = mid
		} else {
			hi = mid - 1
		}
	}
	return lo + 1, len([]rune(p.text[p.starts[lo]:off])) + 1
}
