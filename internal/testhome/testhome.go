// Package testhome runs a package's tests with the user's configuration
// folder pointed at a temporary one, so that the audit-trail keys the
// campaigns under test make (agent.AuditKeyPath's default) never land in
// the real one. It is for tests only; it never touches the real folder.
package testhome

import (
	"os"
	"testing"
)

// Main sets XDG_CONFIG_HOME (and APPDATA, its Windows counterpart) to a
// new temporary folder, runs the tests, removes the folder and exits with
// the tests' code. Call it from TestMain.
func Main(m *testing.M) {
	dir, err := os.MkdirTemp("", "benchtender-config-")
	if err != nil {
		panic(err)
	}
	os.Setenv("XDG_CONFIG_HOME", dir)
	os.Setenv("APPDATA", dir)
	code := m.Run()
	os.RemoveAll(dir)
	os.Exit(code)
}
