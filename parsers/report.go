package parsers

import (
	"fmt"
	"regexp"
	"strings"
	"unicode/utf8"
)

// report reads key-value text and printed reports: a value is found by the
// label before it on its line ("Peak area: 1234.5 mAU*s") or by a regular
// expression with one capture group.
type report struct {
	*common
	patterns map[string]*regexp.Regexp
}

func newReport(s Spec) (Parser, error) {
	c, err := newCommon(s)
	if err != nil {
		return nil, err
	}
	p := &report{common: c, patterns: map[string]*regexp.Regexp{}}
	for key, vs := range allValues(s) {
		if vs.Pattern != "" {
			if p.patterns[key], err = regexp.Compile(vs.Pattern); err != nil {
				return nil, fmt.Errorf("parsers: %s pattern: %w", key, err)
			}
		}
	}
	return p, nil
}

// allValues returns the value and factor specs keyed "v:name" and
// "f:name".
func allValues(s Spec) map[string]ValueSpec {
	out := map[string]ValueSpec{}
	for n, v := range s.Values {
		out["v:"+n] = v
	}
	for n, v := range s.Factors {
		out["f:"+n] = v
	}
	return out
}

// numberText matches the start of a number as instruments print it, with
// decimal marks, thousands separators and an exponent.
var numberText = regexp.MustCompile(`^[-+]?(?:\d[\d.,' ]*\d|\d)(?:[eE][-+]?\d+)?`)

func (p *report) Parse(name string, data []byte) (Record, error) {
	text, enc, err := decodeText(name, data, p.spec.Encoding)
	if err != nil {
		return Record{}, err
	}
	ex := extraction{values: map[string][]occurrence{}, factors: map[string][]occurrence{}}
	specs := allValues(p.spec)
	keys := sortedKeys(specs)
	for i, raw := range strings.Split(text, "\n") {
		line := strings.TrimRight(raw, "\r")
		for _, key := range keys {
			vs := specs[key]
			var o occurrence
			var ok bool
			if vs.Label != "" {
				o, ok = afterLabel(line, vs.Label, true)
			} else {
				o, ok = byPattern(line, p.patterns[key])
			}
			if !ok {
				continue
			}
			o.line = i + 1
			if strings.HasPrefix(key, "v:") {
				ex.values[key[2:]] = append(ex.values[key[2:]], o)
			} else {
				ex.factors[key[2:]] = append(ex.factors[key[2:]], o)
			}
		}
		if p.spec.RunIDSource == RunIDFromLabel {
			if o, ok := afterLabel(line, p.spec.RunIDLabel, false); ok {
				o.line = i + 1
				ex.runID = append(ex.runID, o)
			}
		}
	}
	return p.finish(name, text, enc, ex)
}

// afterLabel finds label in line and returns the text after it: a number
// (numeric), or the first word.
func afterLabel(line, label string, numeric bool) (occurrence, bool) {
	i := strings.Index(line, label)
	if i < 0 {
		return occurrence{}, false
	}
	rest := line[i+len(label):]
	trimmed := strings.TrimLeft(rest, " \t:=")
	at := i + len(label) + len(rest) - len(trimmed)
	var v string
	if m := numberText.FindString(trimmed); numeric && m != "" {
		v = strings.TrimRight(m, " ")
	} else if f := strings.Fields(trimmed); len(f) > 0 {
		v = f[0]
	}
	return occurrence{raw: v, column: utf8.RuneCountInString(line[:at]) + 1}, true
}

func byPattern(line string, re *regexp.Regexp) (occurrence, bool) {
	m := re.FindStringSubmatchIndex(line)
	if m == nil || m[2] < 0 {
		return occurrence{}, false
	}
	return occurrence{raw: line[m[2]:m[3]], column: utf8.RuneCountInString(line[:m[2]]) + 1}, true
}
