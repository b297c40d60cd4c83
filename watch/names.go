package watch

import (
	"fmt"
	"path/filepath"
	"strings"
	"unicode/utf8"
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

// maxName is the longest file name, in bytes, that every file system an
// instrument PC exports to can hold (NTFS and ext4 both stop at 255;
// common practice).
const maxName = 255

// NameProblem says why a file name from an instrument PC is not safe to
// take at face value, or "" when it is. Such a file is never read; it is
// reported so that it can be quarantined with the reason. The Windows
// rules are Microsoft's documented naming rules ("Naming Files, Paths,
// and Namespaces"), quoted from memory.
func NameProblem(name string) string {
	switch {
	case !utf8.ValidString(name):
		return "the name is not valid UTF-8"
	case len(name) > maxName:
		return fmt.Sprintf("the name is %d bytes long, over %d", len(name), maxName)
	case name == "." || name == ".." || strings.Contains(name, "/") || strings.Contains(name, `\`):
		return "the name holds a path separator or is a parent-folder reference"
	case strings.ContainsRune(name, ':'):
		return "the name holds ':' (an alternate data stream on Windows)"
	case strings.HasSuffix(name, ".") || strings.HasSuffix(name, " "):
		return "the name ends in a dot or a space, which Windows drops"
	}
	for _, r := range name {
		if r < 0x20 || r == 0x7f {
			return "the name holds a control character"
		}
	}
	stem := strings.ToUpper(name)
	if i := strings.IndexByte(stem, '.'); i >= 0 {
		stem = stem[:i]
	}
	stem = strings.TrimRight(stem, " ")
	switch stem {
	case "CON", "PRN", "AUX", "NUL":
		return "the name is a reserved device name on Windows (" + stem + ")"
	}
	if len(stem) == 4 && (strings.HasPrefix(stem, "COM") || strings.HasPrefix(stem, "LPT")) && stem[3] >= '0' && stem[3] <= '9' {
		return "the name is a reserved device name on Windows (" + stem + ")"
	}
	return ""
}

// Quote escapes a name for a log line: control characters and invalid
// bytes become Go escapes, so a hostile name cannot forge or hide lines.
func Quote(name string) string { return fmt.Sprintf("%q", name) }
