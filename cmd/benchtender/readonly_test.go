package main

import (
	"context"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"benchtender/record"
)

// The export folder read-only, as a share exported read-only would be: it
// is bind-mounted read-only inside a user and mount namespace of this
// test's own, where the real binary runs the demo campaign; the simulated
// instrument, outside, writes its results into the same folder. Every
// result is ingested and the export folder holds nothing of the agent's.
func TestReadOnlyExportFolder(t *testing.T) {
	needNamespaces(t)
	bin := binary(t)
	dir := t.TempDir()
	const runs = 8
	cfgPath, cfg, instr := unattendedCampaign(t, dir, runs, 5)
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	go instr.Run(ctx)
	script := `set -eu
mount --bind "$EXPORTS" "$EXPORTS"
mount -o remount,bind,ro "$EXPORTS"
if touch "$EXPORTS/.probe" 2>/dev/null; then echo "export folder still writable"; exit 3; fi
"$BIN" run "$CFG" > "$LOG" 2>&1 &
pid=$!
for i in $(seq 1 300); do
  n=$(grep -c '"kind":"ingest"' "$JOURNAL" 2>/dev/null || true)
  [ "${n:-0}" -ge "$RUNS" ] && break
  sleep 0.1
done
kill -TERM $pid
wait $pid
`
	logPath := filepath.Join(t.TempDir(), "agent.log")
	cmd := exec.Command("unshare", "--user", "--map-root-user", "--mount", "bash", "-c", script)
	cmd.Env = append(os.Environ(), "EXPORTS="+cfg.Instrument.Watch.Dir, "BIN="+bin, "CFG="+cfgPath, "LOG="+logPath,
		"JOURNAL="+filepath.Join(cfg.Campaign.StateDir, "journal.log"), "RUNS="+strconv.Itoa(runs))
	if b, err := cmd.CombinedOutput(); err != nil {
		logs, _ := os.ReadFile(logPath)
		t.Fatalf("namespace script: %v\n%s\n%s", err, b, tail(string(logs), 3000))
	}
	es, err := record.ReadJournal(filepath.Join(cfg.Campaign.StateDir, "journal.log"))
	if err != nil {
		t.Fatal(err)
	}
	if n := len(record.Replay(es).Trials()); n != runs {
		logs, _ := os.ReadFile(logPath)
		t.Fatalf("%d of %d runs done with a read-only export folder\n%s", n, runs, tail(string(logs), 3000))
	}
	des, _ := os.ReadDir(cfg.Instrument.Watch.Dir)
	for _, d := range des {
		if !strings.HasSuffix(d.Name(), ".csv") {
			t.Errorf("export folder holds %s", d.Name())
		}
	}
}

// A state folder that is read-only when the agent starts (bind-mounted
// read-only in the test's own namespace) is refused at once with a
// message naming it; nothing is handed off. (Turning a folder read-only
// under a running agent cannot be staged here: Linux refuses to remount
// read-only while files are open for writing; a disk full, staged in
// diskfull_test.go, takes the same path through the agent.)
func TestReadOnlyStateFolderIsRefused(t *testing.T) {
	needNamespaces(t)
	bin := binary(t)
	dir := t.TempDir()
	cfgPath, cfg, _ := unattendedCampaign(t, dir, 8, 6)
	script := `set -u
mount --bind "$STATE" "$STATE"
mount -o remount,bind,ro "$STATE"
"$BIN" run "$CFG"
echo "exit $?"
`
	cmd := exec.Command("unshare", "--user", "--map-root-user", "--mount", "bash", "-c", script)
	cmd.Env = append(os.Environ(), "STATE="+cfg.Campaign.StateDir, "BIN="+bin, "CFG="+cfgPath)
	b, _ := cmd.CombinedOutput()
	out := string(b)
	t.Logf("%s", out)
	if !strings.Contains(out, "exit 1") || !strings.Contains(out, cfg.Campaign.StateDir) || !strings.Contains(out, "read-only") {
		t.Errorf("a read-only state folder was not refused clearly:\n%s", out)
	}
	if files, _ := os.ReadDir(cfg.Instrument.HandoffDir); len(files) != 0 {
		t.Errorf("handoff folder holds %d files", len(files))
	}
}
