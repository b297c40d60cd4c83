package console

import (
	"os"
	"testing"
)

// TestMain keeps the audit keys the campaigns under test make (in the
// user's configuration folder by default) out of the real one.
func TestMain(m *testing.M) {
	dir, err := os.MkdirTemp("", "benchtender-config-")
	if err != nil {
		panic(err)
	}
	os.Setenv("XDG_CONFIG_HOME", dir)
	code := m.Run()
	os.RemoveAll(dir)
	os.Exit(code)
}
