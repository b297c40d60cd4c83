package parsers

import (
	"encoding/xml"
	"errors"
	"fmt"
	"io"
	"strings"
)

// xmlFormat reads XML exports: a value is found by a path of element
// names from the root ("Report/Sample/Purity"), its text being the value,
// or with "@name" as the last step, an attribute of the last element.
// Namespaces are ignored (local names are matched); "*" matches any one
// element.
type xmlFormat struct {
	*common
	paths map[string][]string
}

func newXML(s Spec) (Parser, error) {
	c, err := newCommon(s)
	if err != nil {
		return nil, err
	}
	split := func(path string) []string { return strings.Split(strings.Trim(path, "/"), "/") }
	return &xmlFormat{common: c, paths: pathsOf(s, split)}, nil
}

func (p *xmlFormat) Parse(name string, data []byte) (Record, error) {
	text, enc, err := decodeText(name, data, p.spec.Encoding)
	if err != nil {
		return Record{}, err
	}
	// The text is UTF-8 now, whatever the declaration says.
	dec := xml.NewDecoder(strings.NewReader(text))
	dec.CharsetReader = func(_ string, r io.Reader) (io.Reader, error) { return r, nil }
	ex := extraction{values: map[string][]occurrence{}, factors: map[string][]occurrence{}}
	add := func(key string, o occurrence) {
		switch {
		case key == "r:":
			ex.runID = append(ex.runID, o)
		case strings.HasPrefix(key, "v:"):
			ex.values[key[2:]] = append(ex.values[key[2:]], o)
		default:
			ex.factors[key[2:]] = append(ex.factors[key[2:]], o)
		}
	}
	type open struct {
		name       string
		text       strings.Builder
		line, col  int
		textLine   int
		textColumn int
	}
	var stack []*open
	at := func() []string {
		out := make([]string, len(stack))
		for i, o := range stack {
			out[i] = o.name
		}
		return out
	}
	for {
		line, col := dec.InputPos()
		tok, err := dec.Token()
		if err == io.EOF {
			break
		}
		if err != nil {
			l, c := dec.InputPos()
			var se *xml.SyntaxError
			if errors.As(err, &se) && strings.Contains(se.Msg, "unexpected EOF") {
				return Record{}, perr(name, l, c, fmt.Errorf("%w: XML ends early", ErrIncomplete))
			}
			return Record{}, perr(name, l, c, fmt.Errorf("%w: %v", ErrSyntax, err))
		}
		switch t := tok.(type) {
		case xml.StartElement:
			stack = append(stack, &open{name: t.Name.Local, line: line, col: col})
			path := at()
			for key, steps := range p.paths {
				last := steps[len(steps)-1]
				if !strings.HasPrefix(last, "@") || !matchPath(steps[:len(steps)-1], path) {
					continue
				}
				for _, a := range t.Attr {
					if a.Name.Local == last[1:] {
						add(key, occurrence{raw: a.Value, line: line, column: col})
					}
				}
			}
		case xml.CharData:
			if n := len(stack); n > 0 {
				if strings.TrimSpace(string(t)) != "" && stack[n-1].textLine == 0 {
					// Place the value where its first non-space character is.
					lead := len(t) - len(strings.TrimLeft(string(t), " \t\r\n"))
					l, c := line, col
					for _, r := range string(t)[:lead] {
						if r == '\n' {
							l, c = l+1, 1
						} else {
							c++
						}
					}
					stack[n-1].textLine, stack[n-1].textColumn = l, c
				}
				stack[n-1].text.Write(t)
			}
		case xml.EndElement:
			n := len(stack)
			if n == 0 {
				continue
			}
			path := at()
			o := stack[n-1]
			for key, steps := range p.paths {
				if strings.HasPrefix(steps[len(steps)-1], "@") || !matchPath(steps, path) {
					continue
				}
				l, c := o.textLine, o.textColumn
				if l == 0 {
					l, c = o.line, o.col
				}
				add(key, occurrence{raw: strings.TrimSpace(o.text.String()), line: l, column: c})
			}
			stack = stack[:n-1]
		}
	}
	if len(stack) != 0 {
		return Record{}, perr(name, 0, 0, fmt.Errorf("%w: XML ends early (element %s not closed)", ErrIncomplete, stack[len(stack)-1].name))
	}
	return p.finish(name, text, enc, ex)
}
