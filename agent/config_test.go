package agent

import (
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"benchtender/parsers"
)

// The example configuration shipped in the repository parses and
// validates, so it cannot drift from the code.
func TestExampleConfigIsValid(t *testing.T) {
	cfg, err := LoadConfig(filepath.Join("..", "config.example.toml"), parsers.Default())
	if err != nil {
		t.Fatal(err)
	}
	if cfg.Campaign.Factors.Dim() != 4 || cfg.Spec().Delimiter != ";" || cfg.Campaign.StateDir != filepath.Join("..", "state") {
		t.Errorf("unexpected config %+v", cfg.Campaign)
	}
	if w := cfg.Warnings(); len(w) != 0 {
		t.Errorf("example config has warnings: %v", w)
	}
}

// A bad configuration reports every problem with its line and key, and
// unknown keys are errors.
func TestBadConfigNamesLineAndKey(t *testing.T) {
	src, err := os.ReadFile(filepath.Join("..", "config.example.toml"))
	if err != nil {
		t.Fatal(err)
	}
	text := string(src)
	text = strings.Replace(text, `goal = "maximise"`, `goal = "maximize"`, 1)
	text = strings.Replace(text, "max = 30.0", "max = 1.0", 1)
	text = strings.Replace(text, "skip_lines = 3", "skip_lines = 3\ncolour = \"red\"", 1)
	text = strings.Replace(text, "reduce = \"mean\"", "reduce = \"average\"", 1)
	path := filepath.Join(t.TempDir(), "bad.toml")
	if err := os.WriteFile(path, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	_, err = LoadConfig(path, parsers.Default())
	var ce *ConfigError
	if !errors.As(err, &ce) {
		t.Fatalf("err %v, want a *ConfigError", err)
	}
	lineOf := func(s string) int {
		for i, l := range strings.Split(text, "\n") {
			if strings.TrimSpace(l) == s {
				return i + 1
			}
		}
		t.Fatalf("no line %q", s)
		return 0
	}
	want := map[string]int{
		"campaign.response.goal": lineOf(`goal = "maximize"`),
		"campaign.factor[1].max": lineOf("max = 1.0"),
	}
	for _, p := range ce.Problems {
		if l, ok := want[p.Key]; ok {
			if p.Line != l {
				t.Errorf("%s reported at line %d, want %d", p.Key, p.Line, l)
			}
			delete(want, p.Key)
		}
	}
	if len(want) > 0 {
		t.Errorf("not reported: %v; got %v", want, err)
	}
	if !strings.Contains(err.Error(), "unknown key") {
		t.Errorf("message %q does not say unknown key", err)
	}
}

func TestSyntaxErrorHasLine(t *testing.T) {
	path := filepath.Join(t.TempDir(), "bad.toml")
	os.WriteFile(path, []byte("[campaign]\nname = \"x\nseed = 1\n"), 0o644)
	_, err := LoadConfig(path, parsers.Default())
	var ce *ConfigError
	if !errors.As(err, &ce) || len(ce.Problems) != 1 || ce.Problems[0].Line != 2 {
		t.Fatalf("err %v", err)
	}
}

// A value of the wrong type names its key and line, says how to write
// it, and does not hide the other problems (issue 20: settle = "1 s"
// gave one problem with no key). Checked both in [instrument.watch] and
// in an [[instruments]] entry, which is decoded on its own.
func TestWrongTypeNamesKeyAndKeepsOtherProblems(t *testing.T) {
	src, err := os.ReadFile(filepath.Join("..", "config.example.toml"))
	if err != nil {
		t.Fatal(err)
	}
	text := strings.Replace(string(src), `settle = "2s"`, `settle = "1 s"`, 1)
	text = strings.Replace(text, "max = 30.0", "max = 1.0", 1)
	path := filepath.Join(t.TempDir(), "bad.toml")
	os.WriteFile(path, []byte(text), 0o644)
	_, err = LoadConfig(path, parsers.Default())
	var ce *ConfigError
	if !errors.As(err, &ce) {
		t.Fatalf("err %v, want a *ConfigError", err)
	}
	var settle, other bool
	for _, p := range ce.Problems {
		if p.Key == "instrument.watch.settle" && p.Line > 0 && strings.Contains(p.Message, `"2s"`) {
			settle = true
		}
		if p.Key == "campaign.factor[1].max" {
			other = true
		}
	}
	if !settle || !other {
		t.Errorf("want the settle problem with key, line and a hint, and the factor's: %v", err)
	}

	multi := `[campaign]
name = "m"
state_dir = "state"
max_runs = 0
[[campaign.factor]]
name = "t"
min = 0.0
max = 1.0
[campaign.response]
name = "y"
goal = "minimise"
[formats.f]
format = "delimited"
values.y = { column = "y" }
[[instruments]]
name = "a"
format = "f"
handoff_dir = "h"
[instruments.watch]
dir = "e"
settle = "1 s"
[safety.limits.t]
hard_min = 0.0
hard_max = 1.0
`
	os.WriteFile(path, []byte(multi), 0o644)
	_, err = LoadConfig(path, parsers.Default())
	if !errors.As(err, &ce) {
		t.Fatalf("err %v, want a *ConfigError", err)
	}
	settle, other = false, false
	for _, p := range ce.Problems {
		if p.Line == 21 && strings.Contains(p.Key, "settle") && strings.Contains(p.Message, "durations") {
			settle = true
		}
		if p.Key == "campaign.max_runs" {
			other = true
		}
	}
	if !settle || !other {
		t.Errorf("[[instruments]]: want the settle problem at line 21 with its key, and max_runs: %v", err)
	}
}
