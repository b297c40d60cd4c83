package agent

import (
	"os"
	"path/filepath"
	"reflect"
	"regexp"
	"sort"
	"strings"
	"testing"

	"benchtender/parsers"
)

// tomlKeys lists the leaf keys a struct accepts through its toml tags,
// as dotted paths; a map's key is written <name>.
func tomlKeys(t reflect.Type, prefix string, out map[string]bool) {
	for t.Kind() == reflect.Pointer {
		t = t.Elem()
	}
	for i := 0; i < t.NumField(); i++ {
		f := t.Field(i)
		tag := strings.Split(f.Tag.Get("toml"), ",")[0]
		if tag == "-" || !f.IsExported() {
			continue
		}
		if tag == "" {
			tag = strings.ToLower(f.Name)
		}
		key := prefix + tag
		ft := f.Type
		switch {
		case ft.Kind() == reflect.Struct && ft.PkgPath() != "time":
			tomlKeys(ft, key+".", out)
		case ft.Kind() == reflect.Slice && ft.Elem().Kind() == reflect.Struct:
			tomlKeys(ft.Elem(), key+".", out)
		case ft.Kind() == reflect.Map && ft.Elem().Kind() == reflect.Struct:
			tomlKeys(ft.Elem(), key+".<name>.", out)
		default:
			out[key] = true
		}
	}
}

// Every key the configuration reader accepts is explained in
// config.example.toml, as the example claims: each leaf key appears
// there, set or in a comment, or as a table. Before (issue
// 20), look_every and rows were missing.
func TestExampleDocumentsEveryKey(t *testing.T) {
	keys := map[string]bool{}
	tomlKeys(reflect.TypeOf(Config{}), "", keys)
	tomlKeys(reflect.TypeOf(InstrumentConfig{}), "instruments.", keys)
	tomlKeys(reflect.TypeOf(parsers.Spec{}), "formats.<name>.", keys)
	src, err := os.ReadFile(filepath.Join("..", "config.example.toml"))
	if err != nil {
		t.Fatal(err)
	}
	text := string(src)
	var missing []string
	for k := range keys {
		leaf := k[strings.LastIndex(k, ".")+1:]
		// "key =" (set or in a comment), or a table of its own
		// ("[planner.stop.tolerance]").
		re := regexp.MustCompile(`(?m)(^|[\s#{,])` + regexp.QuoteMeta(leaf) + `\s*=|\.` + regexp.QuoteMeta(leaf) + `[\].]`)
		if !re.MatchString(text) {
			missing = append(missing, k)
		}
	}
	sort.Strings(missing)
	if len(missing) > 0 {
		t.Errorf("config.example.toml does not explain %d key(s):\n  %s", len(missing), strings.Join(missing, "\n  "))
	}
	if len(keys) < 60 {
		t.Errorf("only %d keys found: the walk over the config types is broken", len(keys))
	}
}
