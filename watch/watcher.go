package watch

import (
	"context"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"time"

	"github.com/fsnotify/fsnotify"
	"github.com/rs/zerolog"
)

// File is a settled file under the export folder.
type File struct {
	Path string
	// Rel is the path relative to the export folder (a bare name unless
	// the watch is recursive); it is what readers open inside the folder.
	Rel     string
	Size    int64
	ModTime time.Time
	// Problem, when not empty, says why the file must not be read: a
	// hostile name, or a link pointing out of the folder. It is reported
	// once so that it can be quarantined with the reason.
	Problem string
}

// FolderState is what the watcher knows of its folder, reported when it
// changes.
type FolderState struct {
	Dir string
	OK  bool
	Err error // why the folder cannot be read, when not OK
	// Replaced says the folder came back as another folder (deleted and
	// recreated, or a share mounted again).
	Replaced bool
	// Polling, when not empty, says why file events are off and only the
	// scan finds files.
	Polling string
}

type signature struct {
	size  int64
	mtime time.Time
}

type pending struct {
	sig signature
	rel string
	due time.Time
}

// Watcher reports settled files of one folder (and its subfolders when
// recursive).
type Watcher struct {
	cfg Config
	log zerolog.Logger
	now func() time.Time
	// Trouble, when set, is called with every error the watcher logs and
	// recovers from (for metrics); it must return quickly.
	Trouble func(error)
	// Folder, when set, is told when the folder is lost, comes back, or
	// events give way to polling; it must return quickly.
	Folder func(FolderState)
	// IncludeOld takes files older than MaxAge too.
	IncludeOld bool
}

// New returns a watcher for cfg. now is the clock (time.Now when nil).
func New(cfg Config, log zerolog.Logger, now func() time.Time) (*Watcher, error) {
	if err := cfg.Validate().Err(); err != nil {
		return nil, err
	}
	if now == nil {
		now = time.Now
	}
	if cfg.Mode == "" {
		cfg.Mode = ModeEvents
	}
	cfg.Dir = filepath.Clean(cfg.Dir)
	return &Watcher{cfg: cfg, log: log.With().Str("component", "watch").Str("dir", cfg.Dir).Logger(), now: now}, nil
}

func (w *Watcher) trouble(err error) {
	if w.Trouble != nil && err != nil {
		w.Trouble(err)
	}
}

func (w *Watcher) folder(fs FolderState) {
	fs.Dir = w.cfg.Dir
	if w.Folder != nil {
		w.Folder(fs)
	}
}

// state is owned by Run's goroutine alone.
type state struct {
	start   time.Time
	fw      *fsnotify.Watcher // nil: polling
	polling string
	dirs    map[string]bool // folders with an event watch
	pending map[string]*pending
	sent    map[string]signature
	flagged map[string]bool // problem files reported
	old     map[string]bool // files left out by max_age
	oldSaid int
	ready   []File

	root     os.FileInfo // identity of the folder when last seen
	lost     bool
	tries    int
	retryAt  time.Time
	warnedAt map[string]bool // folders whose watch failed, warned once
}

// Run watches until ctx is done, sending each settled file to out. A file
// is sent again only when its size or modification time changes. Run
// returns ctx's error; folder problems are logged and retried, never fatal.
func (w *Watcher) Run(ctx context.Context, out chan<- File) error {
	st := &state{start: w.now(), dirs: map[string]bool{}, pending: map[string]*pending{}, sent: map[string]signature{},
		flagged: map[string]bool{}, old: map[string]bool{}, warnedAt: map[string]bool{}}
	if w.cfg.Mode == ModePoll {
		st.polling = "mode is poll"
	} else if fw, err := fsnotify.NewWatcher(); err != nil {
		w.poll(st, limitMessage(err))
	} else {
		st.fw = fw
	}
	defer func() {
		if st.fw != nil {
			st.fw.Close()
		}
	}()
	timer := time.NewTimer(time.Hour)
	defer timer.Stop()
	scan := time.NewTicker(w.cfg.Rescan)
	defer scan.Stop()

	w.scan(st)
	for {
		if err := w.flush(ctx, st, out); err != nil {
			return err
		}
		resetTimer(timer, st.nextDue(), w.now())
		var events chan fsnotify.Event
		var errs chan error
		if st.fw != nil {
			events, errs = st.fw.Events, st.fw.Errors
		}
		select {
		case <-ctx.Done():
			return ctx.Err()
		case ev, ok := <-events:
			if !ok {
				w.poll(st, "the event queue closed")
				continue
			}
			w.event(st, ev)
		case err, ok := <-errs:
			if !ok {
				w.poll(st, "the event queue closed")
				continue
			}
			// Lost events (a queue overflow) are made good by scanning
			// everything at once; the journal decides what is new.
			w.trouble(err)
			if errors.Is(err, fsnotify.ErrEventOverflow) {
				w.log.Warn().Err(err).Msg("file events overflowed and some were lost; scanning everything")
			} else {
				w.log.Warn().Err(err).Msg("file event error; rescanning")
			}
			w.scan(st)
		case <-scan.C:
			if st.lost && w.now().Before(st.retryAt) {
				continue
			}
			w.scan(st)
		case <-timer.C:
			for path, p := range st.pending {
				if !w.now().Before(p.due) {
					w.look(st, path, p.rel)
				}
			}
		}
	}
}

// poll turns file events off for good, saying why.
func (w *Watcher) poll(st *state, why string) {
	if st.fw != nil {
		st.fw.Close()
		st.fw = nil
	}
	st.dirs = map[string]bool{}
	st.polling = why
	w.log.Warn().Str("why", why).Stringer("every", w.cfg.Rescan).Msg("no file events: finding files by scanning alone")
	w.folder(FolderState{OK: true, Polling: why})
}

// limitMessage names the system setting behind a watch error, when it is
// one of the inotify limits (Linux; inotify(7)).
func limitMessage(err error) string {
	switch {
	case errors.Is(err, syscall.EMFILE):
		return fmt.Sprintf("%v: the limit of inotify instances is reached (system setting fs.inotify.max_user_instances)", err)
	case errors.Is(err, syscall.ENOSPC):
		return fmt.Sprintf("%v: the limit of inotify watches is reached (system setting fs.inotify.max_user_watches)", err)
	}
	return err.Error()
}

// watchDir adds an event watch on a folder; a watch limit turns events off.
func (w *Watcher) watchDir(st *state, dir string) {
	if st.fw == nil || st.dirs[dir] {
		return
	}
	if err := st.fw.Add(dir); err != nil {
		w.trouble(err)
		if errors.Is(err, syscall.ENOSPC) || errors.Is(err, syscall.EMFILE) {
			w.poll(st, limitMessage(err))
			return
		}
		if !st.warnedAt[dir] {
			st.warnedAt[dir] = true
			w.log.Warn().Err(err).Str("folder", dir).Msg("cannot watch folder for events; the scan still finds its files")
		}
		return
	}
	st.dirs[dir] = true
}

// event handles one file event: a hint to look at that file now, or at a
// new subfolder.
func (w *Watcher) event(st *state, ev fsnotify.Event) {
	if ev.Name == "" || ev.Op == fsnotify.Chmod {
		return
	}
	if (ev.Op.Has(fsnotify.Remove) || ev.Op.Has(fsnotify.Rename)) && st.dirs[ev.Name] {
		// A watched folder went (the root itself, or a subfolder): its
		// watch died with it; the next scan adds one again.
		delete(st.dirs, ev.Name)
		if st.fw != nil {
			_ = st.fw.Remove(ev.Name)
		}
		return
	}
	dir := filepath.Dir(ev.Name)
	if dir != w.cfg.Dir && !st.dirs[dir] {
		return
	}
	rel, err := filepath.Rel(w.cfg.Dir, ev.Name)
	if err != nil || !filepath.IsLocal(rel) {
		return
	}
	if ev.Op.Has(fsnotify.Create) && w.cfg.Recursive {
		if fi, err := os.Lstat(ev.Name); err == nil && fi.IsDir() {
			// A new folder: watch it, then scan it at once, for the
			// files written before the watch was in place.
			if depthOf(rel) <= w.cfg.Depth && !temporary(filepath.Base(ev.Name)) {
				w.scanDir(st, ev.Name, rel, map[string]bool{})
			}
			return
		}
	}
	if w.cfg.wanted(filepath.Base(ev.Name)) || (w.cfg.wantedProblem(filepath.Base(ev.Name))) {
		w.look(st, ev.Name, rel)
	}
}

// depthOf is how many folders below the root rel lies (a file directly
// in the root: 0).
func depthOf(rel string) int { return strings.Count(filepath.ToSlash(rel), "/") }

func (s *state) nextDue() time.Time {
	var t time.Time
	for _, p := range s.pending {
		if t.IsZero() || p.due.Before(t) {
			t = p.due
		}
	}
	return t
}

// scan checks the folder is still there and the same, looks at every
// wanted file (in subfolders too when recursive) and forgets files that
// are gone.
func (w *Watcher) scan(st *state) {
	fi, err := os.Stat(w.cfg.Dir)
	if err == nil && !fi.IsDir() {
		err = fmt.Errorf("%s is not a folder", w.cfg.Dir)
	}
	if err != nil {
		w.lose(st, err)
		return
	}
	replaced := st.root != nil && !os.SameFile(st.root, fi)
	if (replaced || st.lost) && st.fw != nil {
		// The old folder's watches died with it.
		for d := range st.dirs {
			_ = st.fw.Remove(d)
		}
		st.dirs = map[string]bool{}
	}
	if st.lost || replaced {
		w.log.Info().Bool("replaced", replaced).Msg("export folder back; watching again")
		w.folder(FolderState{OK: true, Replaced: replaced, Polling: st.polling})
		st.lost, st.tries = false, 0
	}
	st.root = fi
	present := map[string]bool{}
	w.scanDir(st, w.cfg.Dir, ".", present)
	for path := range st.sent {
		if !present[path] {
			delete(st.sent, path)
		}
	}
	if n := len(st.old); n > st.oldSaid {
		st.oldSaid = n
		w.log.Info().Int("files", n).Stringer("max_age", w.cfg.MaxAge).Msg("files older than max_age left out (benchtender run --include-old takes them)")
	}
}

// lose notes that the folder cannot be read and backs off: the next look
// comes after Rescan, then twice that, up to 5 minutes.
func (w *Watcher) lose(st *state, err error) {
	st.tries++
	wait := min(w.cfg.Rescan<<min(st.tries-1, 10), 5*time.Minute)
	st.retryAt = w.now().Add(wait)
	w.trouble(err)
	if !st.lost {
		st.lost = true
		w.log.Error().Err(err).Msg("export folder lost (removed, unmounted or unreachable); looking again with back-off")
		w.folder(FolderState{OK: false, Err: err, Polling: st.polling})
	}
}

// scanDir looks at one folder's wanted files and, when recursive, its
// subfolders; present collects the paths seen.
func (w *Watcher) scanDir(st *state, dir, rel string, present map[string]bool) {
	w.watchDir(st, dir)
	entries, err := os.ReadDir(dir)
	if err != nil {
		w.trouble(err)
		if !st.warnedAt["scan:"+dir] {
			st.warnedAt["scan:"+dir] = true
			w.log.Warn().Err(err).Str("folder", dir).Msg("cannot list folder")
		}
		return
	}
	delete(st.warnedAt, "scan:"+dir)
	for _, e := range entries {
		name := e.Name()
		path := filepath.Join(dir, name)
		r := filepath.Join(rel, name)
		if e.IsDir() {
			if w.cfg.Recursive && depthOf(r) <= w.cfg.Depth && !temporary(name) {
				w.scanDir(st, path, r, present)
			}
			continue
		}
		if !w.cfg.wanted(name) && !w.cfg.wantedProblem(name) {
			continue
		}
		present[path] = true
		w.look(st, path, r)
	}
}

// wantedProblem reports whether a name that fails the pattern's literal
// match is still one of ours with a hostile twist (a trailing dot or
// space after the extension, an alternate stream): such names are
// reported for quarantine rather than silently ignored.
func (c Config) wantedProblem(name string) bool {
	if temporary(name) || NameProblem(name) == "" {
		return false
	}
	trimmed := strings.TrimRight(name, ". ")
	if i := strings.IndexByte(trimmed, ':'); i >= 0 {
		trimmed = trimmed[:i]
	}
	return c.wanted(trimmed)
}

// look takes one look at path: a new or changed file starts (or restarts)
// its settle window; an unchanged one whose window has passed is ready.
func (w *Watcher) look(st *state, path, rel string) {
	if p := NameProblem(filepath.Base(path)); p != "" {
		w.flag(st, path, rel, p)
		return
	}
	fi, err := os.Lstat(path)
	if err == nil && fi.Mode()&fs.ModeSymlink != 0 {
		if p := w.linkProblem(path); p != "" {
			w.flag(st, path, rel, p)
			return
		}
		fi, err = os.Stat(path)
	}
	if err != nil || !fi.Mode().IsRegular() {
		if err != nil && !errors.Is(err, fs.ErrNotExist) {
			w.trouble(err)
			w.log.Warn().Err(err).Str("path", path).Msg("cannot stat file")
		}
		delete(st.pending, path)
		if err != nil {
			delete(st.sent, path)
		}
		return
	}
	if w.cfg.MaxAge > 0 && !w.IncludeOld && fi.ModTime().Before(st.start.Add(-w.cfg.MaxAge)) {
		st.old[path] = true
		return
	}
	sig := signature{size: fi.Size(), mtime: fi.ModTime()}
	if s, ok := st.sent[path]; ok && s == sig {
		delete(st.pending, path)
		return
	}
	now := w.now()
	p, ok := st.pending[path]
	switch {
	case !ok || p.sig != sig:
		st.pending[path] = &pending{sig: sig, rel: rel, due: now.Add(w.cfg.Settle)}
	case !now.Before(p.due):
		delete(st.pending, path)
		st.sent[path] = sig
		st.ready = append(st.ready, File{Path: path, Rel: rel, Size: sig.size, ModTime: sig.mtime})
	}
}

// flag reports a file that must not be read, once per process.
func (w *Watcher) flag(st *state, path, rel, problem string) {
	if st.flagged[path] {
		return
	}
	st.flagged[path] = true
	w.log.Warn().Str("path", path).Str("problem", problem).Msg("file not read")
	st.ready = append(st.ready, File{Path: path, Rel: rel, Problem: problem})
}

// linkProblem says why a symbolic link may not be followed: it points
// out of the export folder, or nowhere.
func (w *Watcher) linkProblem(path string) string {
	root, err := filepath.EvalSymlinks(w.cfg.Dir)
	if err != nil {
		return "a symbolic link, and the export folder's own path cannot be resolved"
	}
	target, err := filepath.EvalSymlinks(path)
	if err != nil {
		return "a symbolic link pointing nowhere"
	}
	rel, err := filepath.Rel(root, target)
	if err != nil || !filepath.IsLocal(rel) {
		return "a symbolic link pointing out of the export folder (to " + Quote(target) + ")"
	}
	return ""
}

// flush sends the ready files.
func (w *Watcher) flush(ctx context.Context, st *state, out chan<- File) error {
	for len(st.ready) > 0 {
		select {
		case out <- st.ready[0]:
			st.ready = st.ready[1:]
		case <-ctx.Done():
			return ctx.Err()
		}
	}
	st.ready = nil
	return nil
}

func resetTimer(t *time.Timer, due, now time.Time) {
	if !t.Stop() {
		select {
		case <-t.C:
		default:
		}
	}
	if due.IsZero() {
		t.Reset(time.Hour)
		return
	}
	t.Reset(max(due.Sub(now), 0))
}
