package agent

import (
	"fmt"
	"regexp"
	"strings"
)

// keyLines maps dotted keys of a TOML document to the line that defines
// them, so problems found after decoding can name a line. Array tables get
// an index ("campaign.factor[1].max"), and every key is also recorded
// without indexes at its first appearance.
type keyLines map[string]int

var (
	tomlArrayTable = regexp.MustCompile(`^\[\[\s*([^\]]+?)\s*\]\]`)
	tomlTable      = regexp.MustCompile(`^\[\s*([^\]]+?)\s*\]`)
	tomlKey        = regexp.MustCompile(`^([A-Za-z0-9_\-]+(?:\s*\.\s*[A-Za-z0-9_\-]+)*|"[^"]*"|'[^']*')\s*=`)
	tomlInlineKey  = regexp.MustCompile(`[{,]\s*([A-Za-z0-9_\-]+|"[^"]*")\s*=`)
	tomlIndex      = regexp.MustCompile(`\[\d+\]`)
)

func indexKeys(text string) keyLines {
	kl := keyLines{}
	counts := map[string]int{}
	prefix := ""
	inMulti := ""
	set := func(key string, line int) {
		if _, ok := kl[key]; !ok {
			kl[key] = line
		}
		plain := tomlIndex.ReplaceAllString(key, "")
		if _, ok := kl[plain]; !ok {
			kl[plain] = line
		}
	}
	for i, raw := range strings.Split(text, "\n") {
		line := i + 1
		s := strings.TrimSpace(raw)
		if inMulti != "" {
			if strings.Contains(s, inMulti) {
				inMulti = ""
			}
			continue
		}
		if s == "" || strings.HasPrefix(s, "#") {
			continue
		}
		if m := tomlArrayTable.FindStringSubmatch(s); m != nil {
			name := cleanKey(m[1])
			prefix = fmt.Sprintf("%s[%d]", name, counts[name])
			counts[name]++
			set(prefix, line)
			continue
		}
		if m := tomlTable.FindStringSubmatch(s); m != nil {
			prefix = cleanKey(m[1])
			set(prefix, line)
			continue
		}
		if m := tomlKey.FindStringSubmatch(s); m != nil {
			key := join(prefix, cleanKey(m[1]))
			set(key, line)
			rest := s[len(m[0]):]
			for _, q := range []string{`"""`, `'''`} {
				if strings.Count(rest, q) == 1 {
					inMulti = q
				}
			}
			if strings.HasPrefix(strings.TrimSpace(rest), "{") {
				for _, im := range tomlInlineKey.FindAllStringSubmatch(rest, -1) {
					set(join(key, cleanKey(im[1])), line)
				}
			}
		}
	}
	return kl
}

func cleanKey(k string) string {
	parts := strings.Split(k, ".")
	for i, p := range parts {
		parts[i] = strings.Trim(strings.TrimSpace(p), `"'`)
	}
	return strings.Join(parts, ".")
}

func join(prefix, key string) string {
	if prefix == "" {
		return key
	}
	return prefix + "." + key
}

// line returns the line of key, or of its nearest defined parent, or 0.
func (kl keyLines) line(key string) int {
	for k := key; k != ""; {
		if l, ok := kl[k]; ok {
			return l
		}
		if l, ok := kl[tomlIndex.ReplaceAllString(k, "")]; ok {
			return l
		}
		i := strings.LastIndexAny(k, ".[")
		if i < 0 {
			break
		}
		k = k[:i]
	}
	return 0
}
