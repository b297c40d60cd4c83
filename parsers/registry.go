package parsers

import (
	"fmt"
	"sort"
)

// Parser reads one result file. name is the file's name as the instrument
// wrote it (used for run ids taken from the file name and in errors); data
// is its whole content. Errors are *ParseError values.
type Parser interface {
	Parse(name string, data []byte) (Record, error)
}

// Constructor builds a parser from a validated spec.
type Constructor func(Spec) (Parser, error)

// Registry maps format names to their constructors.
type Registry struct {
	formats map[string]Constructor
}

// NewRegistry returns an empty registry.
func NewRegistry() *Registry { return &Registry{formats: map[string]Constructor{}} }

// Default returns a registry holding every built-in format.
func Default() *Registry {
	r := NewRegistry()
	mustRegister(r, FormatDelimited, newDelimited)
	mustRegister(r, FormatReport, newReport)
	mustRegister(r, FormatJSON, newJSON)
	mustRegister(r, FormatXML, newXML)
	return r
}

func mustRegister(r *Registry, name string, c Constructor) {
	if err := r.Register(name, c); err != nil {
		panic(err) // a programmer error: two built-ins with one name
	}
}

// Register adds a format. It refuses an empty name, a nil constructor and a
// name already taken.
func (r *Registry) Register(name string, c Constructor) error {
	if name == "" || c == nil {
		return fmt.Errorf("parsers: register %q: empty name or nil constructor", name)
	}
	if _, dup := r.formats[name]; dup {
		return fmt.Errorf("parsers: format %q registered twice", name)
	}
	r.formats[name] = c
	return nil
}

// Names returns the registered format names, sorted.
func (r *Registry) Names() []string {
	out := make([]string, 0, len(r.formats))
	for n := range r.formats {
		out = append(out, n)
	}
	sort.Strings(out)
	return out
}

// New builds the parser the spec asks for.
func (r *Registry) New(s Spec) (Parser, error) {
	c, ok := r.formats[s.Format]
	if !ok {
		return nil, fmt.Errorf("parsers: unknown format %q (known: %v)", s.Format, r.Names())
	}
	if err := s.Validate(r).Err(); err != nil {
		return nil, err
	}
	return c(s)
}
