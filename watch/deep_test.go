package watch

import (
	"context"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/rs/zerolog"
)

// startWith runs a watcher with a folder-state recorder.
func startWith(t *testing.T, cfg Config, setup func(*Watcher)) (<-chan File, *folderLog) {
	t.Helper()
	w, err := New(cfg, zerolog.New(zerolog.NewTestWriter(t)), nil)
	if err != nil {
		t.Fatal(err)
	}
	fl := &folderLog{}
	w.Folder = fl.add
	if setup != nil {
		setup(w)
	}
	ctx, cancel := context.WithCancel(context.Background())
	out := make(chan File, 100)
	done := make(chan struct{})
	go func() { w.Run(ctx, out); close(done) }()
	t.Cleanup(func() { cancel(); <-done })
	return out, fl
}

type folderLog struct {
	mu sync.Mutex
	s  []FolderState
}

func (f *folderLog) add(s FolderState) { f.mu.Lock(); f.s = append(f.s, s); f.mu.Unlock() }

func (f *folderLog) wait(t *testing.T, what string, ok func(FolderState) bool) FolderState {
	t.Helper()
	deadline := time.Now().Add(10 * time.Second)
	for time.Now().Before(deadline) {
		f.mu.Lock()
		for _, s := range f.s {
			if ok(s) {
				f.mu.Unlock()
				return s
			}
		}
		f.mu.Unlock()
		time.Sleep(20 * time.Millisecond)
	}
	t.Fatalf("the watcher never reported %s", what)
	return FolderState{}
}

// In poll mode no events are used: a new file is found by the scan, within
// two scan intervals (plus the settle window, plus half a second for a
// busy machine's scheduling).
func TestPollModeFindsAFileWithinTwoIntervals(t *testing.T) {
	dir := t.TempDir()
	rescan := time.Second
	out, _ := startWith(t, Config{Dir: dir, Pattern: "*.csv", Settle: 50 * time.Millisecond, Rescan: rescan, Mode: ModePoll}, nil)
	time.Sleep(100 * time.Millisecond)
	start := time.Now()
	os.WriteFile(filepath.Join(dir, "p.csv"), []byte("x"), 0o644)
	f := next(t, out, 5*time.Second)
	if took := time.Since(start); took > 2*rescan+50*time.Millisecond+500*time.Millisecond {
		t.Errorf("found after %v, more than two intervals of %v", took, rescan)
	}
	if f.Rel != "p.csv" {
		t.Errorf("rel %q", f.Rel)
	}
}

// Recursive: a dated subfolder that appears with a file already inside
// (moved into place whole) is watched and its file found at once; files
// deeper than depth are left alone.
func TestRecursiveFindsDatedSubfolders(t *testing.T) {
	dir := t.TempDir()
	out, _ := startWith(t, Config{Dir: dir, Pattern: "*.csv", Settle: 50 * time.Millisecond, Rescan: time.Hour, Recursive: true, Depth: 1}, nil)
	staging := t.TempDir()
	day := filepath.Join(staging, "2026-12-01")
	os.Mkdir(day, 0o755)
	os.WriteFile(filepath.Join(day, "R0001.csv"), []byte("x"), 0o644)
	time.Sleep(100 * time.Millisecond)
	if err := os.Rename(day, filepath.Join(dir, "2026-12-01")); err != nil {
		t.Fatal(err)
	}
	f := next(t, out, 3*time.Second)
	if f.Rel != filepath.Join("2026-12-01", "R0001.csv") {
		t.Fatalf("rel %q", f.Rel)
	}
	// A file written later into the new folder comes by its event (the
	// scan is an hour away).
	os.WriteFile(filepath.Join(dir, "2026-12-01", "R0002.csv"), []byte("y"), 0o644)
	if f := next(t, out, 3*time.Second); filepath.Base(f.Path) != "R0002.csv" {
		t.Fatalf("got %s", f.Path)
	}
	deep := filepath.Join(dir, "2026-12-01", "raw", "more")
	os.MkdirAll(deep, 0o755)
	os.WriteFile(filepath.Join(deep, "R0003.csv"), []byte("z"), 0o644)
	none(t, out, 400*time.Millisecond)
}

// The folder deleted and recreated: the loss is reported, then its
// return, and a file in the new folder is found.
func TestFolderDeletedAndRecreated(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "exports")
	os.Mkdir(dir, 0o755)
	out, fl := startWith(t, Config{Dir: dir, Pattern: "*.csv", Settle: 50 * time.Millisecond, Rescan: 100 * time.Millisecond}, nil)
	os.WriteFile(filepath.Join(dir, "a.csv"), []byte("x"), 0o644)
	next(t, out, 3*time.Second)
	os.RemoveAll(dir)
	time.Sleep(250 * time.Millisecond) // a scan or two sees it gone
	lost := fl.wait(t, "the loss", func(s FolderState) bool { return !s.OK })
	if lost.Err == nil {
		t.Error("loss without its error")
	}
	os.Mkdir(dir, 0o755)
	// Back (as another folder, unless the file system gave the new one
	// the old one's inode number).
	fl.wait(t, "the return", func(s FolderState) bool { return s.OK && s.Err == nil })
	os.WriteFile(filepath.Join(dir, "b.csv"), []byte("y"), 0o644)
	if f := next(t, out, 5*time.Second); filepath.Base(f.Path) != "b.csv" {
		t.Fatalf("got %s", f.Path)
	}
}

// A file renamed over an existing one is reported again; a file touched
// again and again while settling is reported once, after it rests.
func TestRenameOverAndRepeatedTouches(t *testing.T) {
	dir := t.TempDir()
	out, _ := startWith(t, Config{Dir: dir, Pattern: "*.csv", Settle: 200 * time.Millisecond, Rescan: 100 * time.Millisecond}, nil)
	path := filepath.Join(dir, "r.csv")
	os.WriteFile(path, []byte("first"), 0o644)
	next(t, out, 3*time.Second)
	tmp := filepath.Join(dir, "r.csv.tmp")
	os.WriteFile(tmp, []byte("second version"), 0o644)
	os.Rename(tmp, path)
	if f := next(t, out, 3*time.Second); f.Size != int64(len("second version")) {
		t.Fatalf("after the rename over: %d bytes", f.Size)
	}
	t0 := time.Now()
	for i := 0; i < 10; i++ {
		ts := t0.Add(time.Duration(i) * time.Second)
		os.Chtimes(path, ts, ts)
		time.Sleep(50 * time.Millisecond)
	}
	next(t, out, 3*time.Second)
	none(t, out, 500*time.Millisecond)
}

// 20,000 files dropped at once while nobody takes the watcher's reports:
// the event queue overflows (fs.inotify.max_queued_events defaults to
// 16,384; inotify(7)), the watcher rescans, and every file is reported
// exactly once.
func TestTwentyThousandFilesWhileBusy(t *testing.T) {
	if testing.Short() {
		t.Skip("writes 20,000 files")
	}
	dir := t.TempDir()
	w, err := New(Config{Dir: dir, Pattern: "*.csv", Settle: 100 * time.Millisecond, Rescan: 2 * time.Second}, zerolog.New(zerolog.NewTestWriter(t)).Level(zerolog.WarnLevel), nil)
	if err != nil {
		t.Fatal(err)
	}
	var mu sync.Mutex
	var troubles []error
	w.Trouble = func(err error) { mu.Lock(); troubles = append(troubles, err); mu.Unlock() }
	ctx, cancel := context.WithCancel(context.Background())
	out := make(chan File) // unbuffered: the watcher blocks while we are busy
	done := make(chan struct{})
	go func() { w.Run(ctx, out); close(done) }()
	defer func() { cancel(); <-done }()
	// One file first, which blocks the watcher while it waits for us.
	os.WriteFile(filepath.Join(dir, "first.csv"), []byte("x"), 0o644)
	time.Sleep(300 * time.Millisecond)
	const n = 20000
	for i := 0; i < n; i++ {
		if err := os.WriteFile(filepath.Join(dir, fmt.Sprintf("R%05d.csv", i)), []byte("v"), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	seen := map[string]int{}
	deadline := time.After(90 * time.Second)
	for len(seen) < n+1 {
		select {
		case f := <-out:
			seen[f.Rel]++
		case <-deadline:
			t.Fatalf("%d of %d files reported", len(seen), n+1)
		}
	}
	extra := time.After(3 * time.Second)
	for waiting := true; waiting; {
		select {
		case f := <-out:
			seen[f.Rel]++
		case <-extra:
			waiting = false
		}
	}
	for rel, c := range seen {
		if c != 1 {
			t.Errorf("%s reported %d times", rel, c)
		}
	}
	mu.Lock()
	overflow := false
	for _, e := range troubles {
		overflow = overflow || strings.Contains(e.Error(), "overflow")
	}
	mu.Unlock()
	t.Logf("%d files reported once each; event queue overflowed: %v", len(seen), overflow)
}

// Hostile names are reported with their problem and never read; a link
// pointing out of the folder is not followed; a link inside it is.
func TestHostileNames(t *testing.T) {
	if runtime.GOOS == "windows" {
		t.Skip("these names cannot be made on Windows")
	}
	dir := t.TempDir()
	outside := filepath.Join(t.TempDir(), "secret.csv")
	os.WriteFile(outside, []byte("not yours"), 0o644)
	names := map[string]string{
		"CON.csv":      "reserved device name",
		"lpt1.CSV":     "reserved device name",
		"a\x01b.csv":   "control character",
		"dot.csv.":     "ends in a dot",
		"space.csv ":   "ends in a dot or a space",
		"ads.csv:x":    "alternate data stream",
		"bad\xff.csv":  "not valid UTF-8",
		"escape.csv":   "pointing out of the export folder",
		"dangling.csv": "pointing nowhere",
	}
	for n := range names {
		switch n {
		case "escape.csv":
			os.Symlink(outside, filepath.Join(dir, n))
		case "dangling.csv":
			os.Symlink(filepath.Join(dir, "gone"), filepath.Join(dir, n))
		default:
			if err := os.WriteFile(filepath.Join(dir, n), []byte("x"), 0o644); err != nil {
				t.Fatalf("%q: %v", n, err)
			}
		}
	}
	os.WriteFile(filepath.Join(dir, "real.csv"), []byte("ok"), 0o644)
	os.Symlink("real.csv", filepath.Join(dir, "alias.csv"))
	out, _ := startWith(t, Config{Dir: dir, Pattern: "*.csv", Settle: 50 * time.Millisecond, Rescan: 100 * time.Millisecond}, nil)
	got := map[string]File{}
	deadline := time.After(5 * time.Second)
	for len(got) < len(names)+2 {
		select {
		case f := <-out:
			got[filepath.Base(f.Path)] = f
		case <-deadline:
			t.Fatalf("got %d of %d: %v", len(got), len(names)+2, got)
		}
	}
	for n, want := range names {
		if f, ok := got[n]; !ok || !strings.Contains(f.Problem, want) {
			t.Errorf("%q: problem %q, want it to say %q", n, f.Problem, want)
		}
	}
	for _, n := range []string{"real.csv", "alias.csv"} {
		if f := got[n]; f.Problem != "" || f.Size != 2 {
			t.Errorf("%s: %+v, want a plain 2-byte file", n, f)
		}
	}
	none(t, out, 400*time.Millisecond) // reported once
}

func TestNameProblem(t *testing.T) {
	long := strings.Repeat("a", 252) + ".csv"
	for name, bad := range map[string]bool{"R0001.csv": false, "run 7 (rep).csv": false, "Résultat.csv": false,
		long: true, "..": true, "a/b.csv": true, `a\b.csv`: true, "AUX": true, "com9.txt": true, "COM10.csv": false, "nul .csv": true} {
		if got := NameProblem(name) != ""; got != bad {
			t.Errorf("%q: problem %q", name, NameProblem(name))
		}
	}
}

// With inotify limits reached, the watcher says which system setting it
// hit and finds files by scanning alone. The limits are lowered inside a
// user namespace of this test only (the machine's own stay as they are).
func TestWatchLimitsFallBackToPolling(t *testing.T) {
	if runtime.GOOS != "linux" {
		t.Skip("inotify limits are Linux's")
	}
	for _, c := range []struct{ setting, limit, want string }{
		{"max_inotify_instances", "0", "fs.inotify.max_user_instances"},
		{"max_inotify_watches", "1", "fs.inotify.max_user_watches"},
	} {
		t.Run(c.setting, func(t *testing.T) {
			if os.Getenv("BENCHTENDER_USERNS_LIMIT") == c.setting {
				limitedWatch(t, c.want)
				return
			}
			if os.Getenv("BENCHTENDER_USERNS_LIMIT") != "" {
				t.Skip("another case's namespace")
			}
			if _, err := exec.LookPath("unshare"); err != nil {
				t.Skip("no unshare")
			}
			script := fmt.Sprintf("echo %s > /proc/sys/user/%s && exec %s -test.run '^TestWatchLimitsFallBackToPolling$/^%s$' -test.v", c.limit, c.setting, os.Args[0], c.setting)
			cmd := exec.Command("unshare", "--user", "--map-root-user", "sh", "-c", script)
			cmd.Env = append(os.Environ(), "BENCHTENDER_USERNS_LIMIT="+c.setting)
			out, err := cmd.CombinedOutput()
			if err != nil && strings.Contains(string(out), "Operation not permitted") {
				t.Skipf("user namespaces not allowed here: %s", out)
			}
			if err != nil || !strings.Contains(string(out), "--- PASS") {
				t.Fatalf("in the namespace: %v\n%s", err, out)
			}
		})
	}
}

func limitedWatch(t *testing.T, want string) {
	dir := t.TempDir()
	for _, d := range []string{"a", "b"} {
		os.Mkdir(filepath.Join(dir, d), 0o755)
	}
	out, fl := startWith(t, Config{Dir: dir, Pattern: "*.csv", Settle: 50 * time.Millisecond, Rescan: 100 * time.Millisecond, Recursive: true, Depth: 1}, nil)
	s := fl.wait(t, "polling", func(s FolderState) bool { return s.Polling != "" })
	if !strings.Contains(s.Polling, want) {
		t.Errorf("polling because %q; want it to name %s", s.Polling, want)
	}
	os.WriteFile(filepath.Join(dir, "b", "late.csv"), []byte("x"), 0o644)
	if f := next(t, out, 3*time.Second); filepath.Base(f.Path) != "late.csv" {
		t.Fatalf("got %s", f.Path)
	}
}
