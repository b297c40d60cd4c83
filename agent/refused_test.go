package agent

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"benchtender/record"
)

// Issue 19's refused files, each as an instrument PC would present it:
// a 250-character name that does not parse (its copy's name overflowed
// and nothing was recorded), a private file (its copy was world-
// readable), a file over the size limit (refused without a note), and a
// temp file a crash left in the archive (the sweep skipped it).
func TestRefusedFilesAlwaysGetANote(t *testing.T) {
	tc := newTestCampaign(t, "3", passLimits)
	stray := filepath.Join(tc.cfg.Campaign.StateDir, "archive", "ab", record.TempPrefix+"abcd.1234.tmp")
	os.MkdirAll(filepath.Dir(stray), 0o755)
	os.WriteFile(stray, []byte("half an archive copy"), 0o444)

	long := "R0001_" + strings.Repeat("x", 240) + ".csv"
	tc.writeResult(t, long, "not;a;result\n")
	private := tc.writeResult(t, "R0002_private.csv", "no;header;here\n")
	os.Chmod(private, 0o600)
	big := filepath.Join(tc.dir, "exports", "R0003_big.csv")
	f, err := os.Create(big)
	if err != nil {
		t.Fatal(err)
	}
	f.Truncate(maxResultFile + 1) // sparse: nothing is written
	f.Close()

	events, stop := tc.start(t)
	defer stop()
	notes := map[string]record.Entry{}
	for len(notes) < 3 {
		e := waitFor(t, events, "three quarantine entries", kind(record.KindQuarantine))
		notes[filepath.Base(e.File)] = e
	}
	stop()
	if _, err := os.Stat(stray); !os.IsNotExist(err) {
		t.Errorf("temp file in the archive not swept: %v", err)
	}
	e, ok := notes[long]
	if !ok {
		t.Fatalf("the long name has no quarantine entry: %v", notes)
	}
	if n := len(filepath.Base(e.Copy)); n > 120 {
		t.Errorf("quarantine copy name is %d bytes", n)
	}
	if note, err := os.ReadFile(e.Copy + ".reason.txt"); err != nil || !strings.Contains(string(note), long) {
		t.Errorf("the note does not name the original file in full: %v\n%s", err, note)
	}
	if fi, err := os.Stat(notes["R0002_private.csv"].Copy); err != nil || fi.Mode().Perm()&0o077 != 0 {
		t.Errorf("copy of a private file: %v, mode %v", err, fi.Mode())
	}
	b := notes["R0003_big.csv"]
	if !strings.Contains(b.Reason, "size limit") || b.Copy == "" {
		t.Errorf("oversize file: %+v", b)
	}
	if note, err := os.ReadFile(b.Copy); err != nil || !strings.Contains(string(note), "R0003_big.csv") {
		t.Errorf("oversize file's note: %v %q", err, note)
	}
	// After a restart nothing is offered again as new.
	_, stop = tc.start(t)
	time.Sleep(1500 * time.Millisecond) // a window for a wrong ingest to show
	stop()
	for _, e := range readJournalT(t, tc) {
		if e.Kind == record.KindIngest {
			t.Errorf("a refused file was ingested after a restart: %s", e.File)
		}
	}
}

// check warns when a format has nothing to show a file is finished and
// settle is short: a paused writer would get a cut-off file read.
func TestShortSettleWithoutTrailerWarns(t *testing.T) {
	tc := newTestCampaign(t, "3", passLimits) // settle 100ms, no trailer
	if w := strings.Join(tc.cfg.Warnings(), "\n"); !strings.Contains(w, "no trailer and no rows") {
		t.Errorf("warnings %q", w)
	}
	spec := tc.cfg.Formats["bench_csv"]
	spec.Trailer = "^End"
	tc.cfg.Formats["bench_csv"] = spec
	if w := strings.Join(tc.cfg.Warnings(), "\n"); strings.Contains(w, "trailer") {
		t.Errorf("with a trailer: %q", w)
	}
}

// status says what is true now of the all-stop file: after it is removed,
// handoffs stay halted (only resume clears them) and status says the file
// is gone instead of repeating that it exists.
func TestAllStopStatusFollowsTheFile(t *testing.T) {
	tc := newTestCampaign(t, "3", passLimits)
	stopFile := allStopPath(tc.cfg)
	os.MkdirAll(filepath.Dir(stopFile), 0o755)
	os.WriteFile(stopFile, []byte("valve check"), 0o644)
	events, stop := tc.start(t)
	waitFor(t, events, "the all-stop", kind(record.KindAllStop))
	stop()
	st := record.Replay(readJournalT(t, tc))
	if h := strings.Join(Halts(tc.cfg, st), "\n"); !strings.Contains(h, "still there") {
		t.Errorf("halts with the file: %q", h)
	}
	os.Remove(stopFile)
	if h := strings.Join(Halts(tc.cfg, st), "\n"); !strings.Contains(h, "has since been removed") || !strings.Contains(h, "ALL-STOP") {
		t.Errorf("halts after the file was removed: %q", h)
	}
}

// An implausible response value is recorded as a failed run with its
// reason, never modelled (issue 19: 1e308 was accepted, the model's check
// became infinite and status printed nonsense).
func TestImplausibleResponseIsAFailedRun(t *testing.T) {
	tc := newTestCampaign(t, "3", passLimits)
	events, stop := tc.startWith(t, Options{Proposer: fixedAt})
	defer stop()
	waitFor(t, events, "R0001 handed off", func(e record.Entry) bool { return e.Kind == record.KindHandoffOK && e.Run == "R0001" })
	tc.writeResult(t, "res_R0001.csv", resultFile("1e308"))
	e := waitFor(t, events, "the result", kind(record.KindIngest))
	stop()
	if !strings.Contains(e.Failed, "beyond 1e+15") || e.Value != 0 {
		t.Fatalf("ingest entry %+v: want a failed run naming the size", e)
	}
	st := record.Replay(readJournalT(t, tc))
	if r := st.Runs["R0001"]; r.Status != record.StatusFailed || len(st.Trials()) != 0 {
		t.Errorf("run %+v, trials %v: want a failed run and nothing to model", r, st.Trials())
	}
}
