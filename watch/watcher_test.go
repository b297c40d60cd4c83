package watch

import (
	"context"
	"os"
	"path/filepath"
	"testing"
	"time"

	"github.com/rs/zerolog"
)

func startWatcher(t *testing.T, cfg Config) <-chan File {
	t.Helper()
	w, err := New(cfg, zerolog.New(zerolog.NewTestWriter(t)), nil)
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	out := make(chan File, 100)
	done := make(chan struct{})
	go func() { w.Run(ctx, out); close(done) }()
	t.Cleanup(func() { cancel(); <-done })
	return out
}

func next(t *testing.T, out <-chan File, within time.Duration) File {
	t.Helper()
	select {
	case f := <-out:
		return f
	case <-time.After(within):
		t.Fatalf("no file reported within %v", within)
		return File{}
	}
}

func none(t *testing.T, out <-chan File, for_ time.Duration) {
	t.Helper()
	select {
	case f := <-out:
		t.Fatalf("unexpected file %s (%d bytes)", f.Path, f.Size)
	case <-time.After(for_):
	}
}

// A file written slowly, in 20 chunks with a pause longer than the settle
// in the middle, is only reported once it has stayed unchanged
// for the settle interval, with its full size, and only once.
func TestSlowWriterIsReportedOnceWhenSettled(t *testing.T) {
	dir := t.TempDir()
	settle := 300 * time.Millisecond
	out := startWatcher(t, Config{Dir: dir, Pattern: "*.csv", Settle: settle, Rescan: time.Hour})
	path := filepath.Join(dir, "slow.csv")
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	chunk := []byte("0123456789;0123456789\n")
	var lastWrite time.Time
	for i := 0; i < 20; i++ {
		lastWrite = time.Now() // any look that sees this write comes later
		if _, err := f.Write(chunk); err != nil {
			t.Fatal(err)
		}
		f.Sync()
		pause := 50 * time.Millisecond
		if i == 10 {
			pause = 200 * time.Millisecond // a stall, still shorter than settle
		}
		time.Sleep(pause)
	}
	f.Close()
	got := next(t, out, 5*time.Second)
	if got.Size != int64(20*len(chunk)) {
		t.Fatalf("reported at %d bytes, want %d", got.Size, 20*len(chunk))
	}
	if since := time.Since(lastWrite); since < settle {
		t.Errorf("reported %v after the last write, before the settle interval %v", since, settle)
	}
	none(t, out, 2*settle)
}

// A file already present is found by the first scan, without any event;
// and with events never arriving (a share), the periodic scan still finds
// a new file: here the file is written before the watcher starts, and a
// second one appears in a folder the watcher scans.
func TestScanFindsFilesWithoutEvents(t *testing.T) {
	dir := t.TempDir()
	os.WriteFile(filepath.Join(dir, "old.csv"), []byte("x"), 0o644)
	out := startWatcher(t, Config{Dir: dir, Pattern: "*.csv", Settle: 50 * time.Millisecond, Rescan: 100 * time.Millisecond})
	if f := next(t, out, 3*time.Second); filepath.Base(f.Path) != "old.csv" {
		t.Fatalf("got %s", f.Path)
	}
}

// The watched folder may be missing at start (a share not yet mounted):
// the watcher keeps scanning and finds files once it appears.
func TestFolderAppearingLater(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "share")
	out := startWatcher(t, Config{Dir: dir, Pattern: "*.csv", Settle: 50 * time.Millisecond, Rescan: 100 * time.Millisecond})
	time.Sleep(150 * time.Millisecond)
	os.Mkdir(dir, 0o755)
	os.WriteFile(filepath.Join(dir, "a.csv"), []byte("x"), 0o644)
	if f := next(t, out, 3*time.Second); filepath.Base(f.Path) != "a.csv" {
		t.Fatalf("got %s", f.Path)
	}
}

// Temporary names, other patterns and folders are never reported; a
// rename into place is.
func TestIgnoredNamesAndRenameIntoPlace(t *testing.T) {
	dir := t.TempDir()
	out := startWatcher(t, Config{Dir: dir, Pattern: "*.csv", Settle: 50 * time.Millisecond, Rescan: 100 * time.Millisecond, Ignore: []string{"*_draft.csv"}})
	for _, n := range []string{".hidden.csv", "~$lock.csv", "a.csv.tmp", "b.csv.part", "c.txt", "d_draft.csv"} {
		os.WriteFile(filepath.Join(dir, n), []byte("x"), 0o644)
	}
	os.Mkdir(filepath.Join(dir, "sub.csv"), 0o755)
	none(t, out, 400*time.Millisecond)
	os.Rename(filepath.Join(dir, "a.csv.tmp"), filepath.Join(dir, "A.CSV"))
	if f := next(t, out, 3*time.Second); filepath.Base(f.Path) != "A.CSV" {
		t.Fatalf("got %s", f.Path)
	}
	none(t, out, 300*time.Millisecond)
}

// A file rewritten with new content is reported again; touched with the
// same size and time stamp, it is not.
func TestRewrittenFileIsReportedAgain(t *testing.T) {
	dir := t.TempDir()
	out := startWatcher(t, Config{Dir: dir, Pattern: "*.csv", Settle: 50 * time.Millisecond, Rescan: 100 * time.Millisecond})
	path := filepath.Join(dir, "r.csv")
	os.WriteFile(path, []byte("first"), 0o644)
	first := next(t, out, 3*time.Second)
	os.Chmod(path, 0o600) // a CHMOD event only
	none(t, out, 300*time.Millisecond)
	os.WriteFile(path, []byte("second, longer"), 0o644)
	second := next(t, out, 3*time.Second)
	if second.Size == first.Size {
		t.Fatalf("sizes %d and %d", first.Size, second.Size)
	}
}

func TestConfigValidate(t *testing.T) {
	if ps := (Config{Pattern: "[", Rescan: 0, Settle: -1}).Validate(); len(ps) != 4 {
		t.Errorf("problems %v, want dir, pattern, settle, rescan", ps)
	}
	if ps := Default().Validate(); len(ps) != 1 || ps[0].Key != "dir" {
		t.Errorf("default config problems %v, want only dir", ps)
	}
}
