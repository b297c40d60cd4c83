package agent

import (
	"testing"

	"benchtender/internal/testhome"
)

// TestMain keeps the audit keys the campaigns under test make out of the
// user's real configuration folder.
func TestMain(m *testing.M) { testhome.Main(m) }
