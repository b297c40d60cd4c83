package main

import (
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
)

// The systemd unit shipped in examples/ passes systemd-analyze verify
// with no warning, with its paths pointed at the binary just built and
// the example config; a unit with a misspelt setting does not, so the
// check can fail. Skipped where systemd-analyze is not installed.
func TestSystemdUnitVerifies(t *testing.T) {
	analyze, err := exec.LookPath("systemd-analyze")
	if err != nil {
		t.Skip("systemd-analyze not installed (Debian: apt-get install systemd)")
	}
	bin := binary(t)
	unit, err := os.ReadFile("../../examples/benchtender.service")
	if err != nil {
		t.Fatal(err)
	}
	example, _ := filepath.Abs("../../config.example.toml")
	text := strings.ReplaceAll(string(unit), "/usr/local/bin/benchtender", bin)
	text = strings.ReplaceAll(text, "/etc/benchtender/campaign.toml", example)
	verify := func(text string) string {
		t.Helper()
		path := filepath.Join(t.TempDir(), "benchtender.service")
		os.WriteFile(path, []byte(text), 0o644)
		out, err := exec.Command(analyze, "verify", path).CombinedOutput()
		if err != nil {
			return string(out) + err.Error()
		}
		return string(out)
	}
	if out := verify(text); strings.TrimSpace(out) != "" {
		t.Errorf("systemd-analyze verify:\n%s", out)
	}
	if out := verify(strings.Replace(text, "Restart=on-failure", "Restart=sometimes", 1)); !strings.Contains(strings.ToLower(out), "restart") {
		t.Errorf("a broken unit verified: %q", out)
	}
	if !strings.Contains(text, "ExecStart="+bin+" run ") || !strings.Contains(text, "WantedBy=multi-user.target") {
		t.Errorf("the unit does not run the campaign at boot:\n%s", text)
	}
}
