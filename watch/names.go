package watch

import (
	"path/filepath"
	"strings"
)

// temporary reports whether a file name is one that writers use while a
// file is incomplete, or a hidden file: such files are never reported.
func temporary(name string) bool {
	l := strings.ToLower(name)
	return strings.HasPrefix(l, ".") || strings.HasPrefix(l, "~$") ||
		strings.HasSuffix(l, ".tmp") || strings.HasSuffix(l, ".part")
}

// wanted reports whether name matches the pattern and no ignore glob.
func (c Config) wanted(name string) bool {
	if temporary(name) {
		return false
	}
	l := strings.ToLower(name)
	for _, g := range c.Ignore {
		if ok, _ := filepath.Match(strings.ToLower(g), l); ok {
			return false
		}
	}
	ok, _ := filepath.Match(strings.ToLower(c.Pattern), l)
	return ok
}
