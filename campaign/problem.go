package campaign

import (
	"fmt"
	"strings"
)

// Problem is one thing wrong with a configuration or a value, named by the
// dotted key it concerns (for example "campaign.factor[1].max").
type Problem struct {
	Key     string
	Message string
}

func (p Problem) String() string {
	if p.Key == "" {
		return p.Message
	}
	return p.Key + ": " + p.Message
}

// Problems is a list of problems that is also an error, so a Validate method
// can report every problem at once instead of stopping at the first.
type Problems []Problem

// Add appends a problem with a formatted message.
func (ps *Problems) Add(key, format string, args ...any) {
	*ps = append(*ps, Problem{Key: key, Message: fmt.Sprintf(format, args...)})
}

// Prefix returns the problems with prefix prepended to each key, so a
// section's Validate can name keys relative to itself.
func (ps Problems) Prefix(prefix string) Problems {
	out := make(Problems, len(ps))
	for i, p := range ps {
		k := p.Key
		switch {
		case k == "":
			k = prefix
		case strings.HasPrefix(k, "["):
			k = prefix + k
		default:
			k = prefix + "." + k
		}
		out[i] = Problem{Key: k, Message: p.Message}
	}
	return out
}

// Err returns nil when there are no problems, and the problems otherwise.
func (ps Problems) Err() error {
	if len(ps) == 0 {
		return nil
	}
	return ps
}

func (ps Problems) Error() string {
	s := make([]string, len(ps))
	for i, p := range ps {
		s[i] = p.String()
	}
	return strings.Join(s, "; ")
}
