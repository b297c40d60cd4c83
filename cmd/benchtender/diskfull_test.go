package main

import (
	"bufio"
	"context"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"strings"
	"testing"

	"benchtender/agent"
	"benchtender/record"
)

// Disk full: the state folder is a 2 MB tmpfs mounted inside a user and
// mount namespace of the test's own (unshare; nothing changes for the
// machine). The real binary runs a campaign; the disk is filled; the agent
// must stop handing off, record why in the room it set aside, keep
// running, and resume by itself when the disk is emptied, with nothing in
// its journal lost.
func TestDiskFullHaltsAndResumes(t *testing.T) {
	needNamespaces(t)
	bin := binary(t)
	dir := t.TempDir()
	os.MkdirAll(filepath.Join(dir, "out"), 0o755)
	cfgPath, cfg, instr := unattendedCampaign(t, dir, 30, 4)
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	go instr.Run(ctx)

	out := filepath.Join(dir, "out")
	script := `set -u
mount -t tmpfs -o size=2m tmpfs "$STATE"
"$BIN" run "$CFG" > "$OUT/agent.log" 2>&1 &
pid=$!
sleep 4
dd if=/dev/zero of="$STATE/filler" bs=4k 2>/dev/null
cp "$HANDOFF/taken.log" "$OUT/taken-at-full.log" 2>/dev/null
sleep 4
cp "$STATE/journal.log" "$OUT/journal-full.log"
cp "$HANDOFF/taken.log" "$OUT/taken-end-full.log" 2>/dev/null
rm -f "$STATE/filler"
sleep 6
kill -TERM $pid
wait $pid
cp -r "$STATE" "$OUT/state"
`
	cmd := exec.Command("unshare", "--user", "--map-root-user", "--mount", "bash", "-c", script)
	cmd.Env = append(os.Environ(), "STATE="+cfg.Campaign.StateDir, "BIN="+bin, "CFG="+cfgPath, "OUT="+out, "HANDOFF="+cfg.Instrument.HandoffDir)
	if b, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("namespace script: %v\n%s", err, b)
	}
	logs, _ := os.ReadFile(filepath.Join(out, "agent.log"))
	for _, want := range []string{"cannot write the journal or the audit trail", "handoffs resume"} {
		if !strings.Contains(string(logs), want) {
			t.Errorf("agent log lacks %q:\n%s", want, tail(string(logs), 3000))
		}
	}
	during, err := os.ReadFile(filepath.Join(out, "journal-full.log"))
	if err != nil {
		t.Fatal(err)
	}
	final, err := os.ReadFile(filepath.Join(out, "state", "journal.log"))
	if err != nil {
		t.Fatal(err)
	}
	if !strings.HasPrefix(string(final), string(during)) {
		t.Error("the journal written while the disk was full is not a prefix of the final one: something was lost")
	}
	count := func(path string) int {
		f, err := os.Open(path)
		if err != nil {
			return 0
		}
		defer f.Close()
		n := 0
		for sc := bufio.NewScanner(f); sc.Scan(); {
			n++
		}
		return n
	}
	atFull, endFull := count(filepath.Join(out, "taken-at-full.log")), count(filepath.Join(out, "taken-end-full.log"))
	if endFull > atFull+1 { // one handoff may have been in the instrument's hands as the disk filled
		t.Errorf("the instrument took %d setpoints while the disk was full", endFull-atFull)
	}
	es, _ := record.ReadJournal(filepath.Join(out, "state", "journal.log"))
	before, _ := record.ReadJournal(filepath.Join(out, "journal-full.log"))
	if len(es) <= len(before) {
		t.Errorf("no progress after the disk was emptied: %d entries then, %d at the end", len(before), len(es))
	}
	key, err := agent.LoadAuditKey(cfg, false)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := record.VerifyAudit(filepath.Join(out, "state", "audit.log"), key); err != nil {
		t.Errorf("audit trail: %v", err)
	}
	trail, _ := os.ReadFile(filepath.Join(out, "state", "audit.log"))
	for _, want := range []string{`"action":"storage trouble"`, `"action":"storage recovered"`} {
		if !strings.Contains(string(trail), want) {
			t.Errorf("audit trail lacks %s", want)
		}
	}
	t.Logf("journal: %d entries when the disk was full, %d at the end; setpoints taken while full: %d", len(before), len(es), endFull-atFull)
}

// needNamespaces skips a test that makes a user and mount namespace of
// its own (unshare) where that cannot be done.
func needNamespaces(t *testing.T) {
	t.Helper()
	if testing.Short() || runtime.GOOS != "linux" {
		t.Skip("needs Linux namespaces")
	}
	if out, err := exec.Command("unshare", "--user", "--map-root-user", "--mount", "true").CombinedOutput(); err != nil {
		t.Skipf("cannot make a user and mount namespace here (%v: %s)", err, out)
	}
}

func tail(s string, n int) string {
	if len(s) > n {
		return s[len(s)-n:]
	}
	return s
}
