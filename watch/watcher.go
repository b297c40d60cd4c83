package watch

import (
	"context"
	"errors"
	"io/fs"
	"os"
	"path/filepath"
	"time"

	"github.com/fsnotify/fsnotify"
	"github.com/rs/zerolog"
)

// File is a settled file in the export folder.
type File struct {
	Path    string
	Size    int64
	ModTime time.Time
}

type signature struct {
	size  int64
	mtime time.Time
}

type pending struct {
	sig signature
	due time.Time
}

// Watcher reports settled files of one folder.
type Watcher struct {
	cfg Config
	log zerolog.Logger
	now func() time.Time
	// Trouble, when set, is called with every error the watcher logs and
	// recovers from (for metrics); it must return quickly.
	Trouble func(error)
}

// trouble reports a recovered error to Trouble.
func (w *Watcher) trouble(err error) {
	if w.Trouble != nil && err != nil {
		w.Trouble(err)
	}
}

// New returns a watcher for cfg. now is the clock (time.Now when nil).
func New(cfg Config, log zerolog.Logger, now func() time.Time) (*Watcher, error) {
	if err := cfg.Validate().Err(); err != nil {
		return nil, err
	}
	if now == nil {
		now = time.Now
	}
	return &Watcher{cfg: cfg, log: log.With().Str("component", "watch").Str("dir", cfg.Dir).Logger(), now: now}, nil
}

// Run watches until ctx is done, sending each settled file to out. A file
// is sent again only when its size or modification time changes. Run
// returns ctx's error; folder problems are logged and retried, never fatal.
func (w *Watcher) Run(ctx context.Context, out chan<- File) error {
	fw, err := fsnotify.NewWatcher()
	if err != nil {
		// Without events the scan still finds everything, only later.
		w.trouble(err)
		w.log.Warn().Err(err).Msg("no file events; relying on the periodic scan")
		fw = nil
	}
	var events chan fsnotify.Event
	var errs chan error
	if fw != nil {
		defer fw.Close()
		events, errs = fw.Events, fw.Errors
	}
	watching := false
	addWatch := func() {
		if fw == nil || watching {
			return
		}
		if err := fw.Add(w.cfg.Dir); err != nil {
			w.trouble(err)
			w.log.Warn().Err(err).Msg("cannot watch folder for events; scanning only")
			return
		}
		watching = true
	}

	st := state{pending: map[string]*pending{}, sent: map[string]signature{}}
	timer := time.NewTimer(time.Hour)
	defer timer.Stop()
	scan := time.NewTicker(w.cfg.Rescan)
	defer scan.Stop()

	addWatch()
	w.scan(&st)
	for {
		if err := w.flush(ctx, &st, out); err != nil {
			return err
		}
		resetTimer(timer, st.nextDue(), w.now())
		select {
		case <-ctx.Done():
			return ctx.Err()
		case ev, ok := <-events:
			if !ok {
				events = nil
				continue
			}
			if ev.Op == fsnotify.Chmod || ev.Name == "" {
				continue
			}
			if filepath.Dir(ev.Name) != filepath.Clean(w.cfg.Dir) || !w.cfg.wanted(filepath.Base(ev.Name)) {
				continue
			}
			w.look(&st, ev.Name)
		case err, ok := <-errs:
			if !ok {
				errs = nil
				continue
			}
			// Lost events (for example a queue overflow) are made good
			// by scanning at once.
			w.trouble(err)
			w.log.Warn().Err(err).Msg("file event error; rescanning")
			w.scan(&st)
		case <-scan.C:
			if fw != nil && watching && !dirExists(w.cfg.Dir) {
				watching = false
				_ = fw.Remove(w.cfg.Dir)
			}
			addWatch()
			w.scan(&st)
		case <-timer.C:
			for path, p := range st.pending {
				if !w.now().Before(p.due) {
					w.look(&st, path)
				}
			}
		}
	}
}

// state is owned by Run's goroutine alone.
type state struct {
	pending map[string]*pending
	sent    map[string]signature
	ready   []File
}

func (s *state) nextDue() time.Time {
	var t time.Time
	for _, p := range s.pending {
		if t.IsZero() || p.due.Before(t) {
			t = p.due
		}
	}
	return t
}

// scan looks at every wanted file in the folder and forgets files that are
// gone.
func (w *Watcher) scan(st *state) {
	entries, err := os.ReadDir(w.cfg.Dir)
	if err != nil {
		w.trouble(err)
		w.log.Warn().Err(err).Msg("cannot scan folder")
		return
	}
	present := make(map[string]bool, len(entries))
	for _, e := range entries {
		if !e.Type().IsRegular() || !w.cfg.wanted(e.Name()) {
			continue
		}
		path := filepath.Join(w.cfg.Dir, e.Name())
		present[path] = true
		w.look(st, path)
	}
	for path := range st.sent {
		if !present[path] {
			delete(st.sent, path)
		}
	}
}

// look takes one look at path: a new or changed file starts (or restarts)
// its settle window; an unchanged one whose window has passed is ready.
func (w *Watcher) look(st *state, path string) {
	fi, err := os.Lstat(path)
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
	sig := signature{size: fi.Size(), mtime: fi.ModTime()}
	if s, ok := st.sent[path]; ok && s == sig {
		delete(st.pending, path)
		return
	}
	now := w.now()
	p, ok := st.pending[path]
	switch {
	case !ok || p.sig != sig:
		st.pending[path] = &pending{sig: sig, due: now.Add(w.cfg.Settle)}
	case !now.Before(p.due):
		delete(st.pending, path)
		st.sent[path] = sig
		st.ready = append(st.ready, File{Path: path, Size: sig.size, ModTime: sig.mtime})
	}
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

func dirExists(dir string) bool {
	fi, err := os.Stat(dir)
	return err == nil && fi.IsDir()
}
