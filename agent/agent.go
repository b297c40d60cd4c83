package agent

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"time"

	"github.com/rs/zerolog"

	"benchtender/campaign"
	"benchtender/parsers"
	"benchtender/planner"
	"benchtender/planner/gp"
	"benchtender/record"
	"benchtender/safety"
	"benchtender/watch"
)

// Options are the agent's collaborators; zero values get defaults.
type Options struct {
	Logger zerolog.Logger
	// Registry holds the parser formats (parsers.Default() when nil).
	Registry *parsers.Registry
	// Now is the clock (time.Now when nil).
	Now func() time.Time
	// Notify, when set, is called with every journal entry after it is
	// written, from the agent's goroutine; it must not block for long.
	Notify func(record.Entry)
	// Tick is how often the sign-off inbox, the all-stop file and the
	// config file are looked at (default 1 s).
	Tick time.Duration
	// ConfigPath, when set, is watched: an edit is reloaded, and one that
	// no longer validates stops every handoff until it is fixed.
	ConfigPath string
	// Proposer is the planner (the campaign's planner when nil); tests
	// inject faults here.
	Proposer Proposer
	// IncludeOld takes result files older than the watch's max_age too.
	IncludeOld bool
	// Observer, when set, is told what the agent measures (for metrics).
	Observer Observer
	// Writer stages a setpoint file in the handoff folder: written and
	// synced under a temp name, put in place by Commit (a temp file
	// beside the target when nil); tests inject faults here.
	Writer func(dir, name string, data []byte) (record.Staged, error)
}

// Observer receives the agent's measurements; every method is called from
// the agent's goroutines and must return quickly.
type Observer interface {
	// Planned: one planning step (fit and proposal) took d.
	Planned(d time.Duration)
	// Ingested: a result was recorded lag after its file last changed.
	Ingested(lag time.Duration)
	// WatchTrouble: the watcher met an error and carries on.
	WatchTrouble(err error)
}

// Proposer is what the agent needs of a planner.
type Proposer interface {
	Propose(ctx context.Context, req planner.Request) (planner.Result, error)
}

// Agent runs one campaign.
type Agent struct {
	cfg     Config
	opt     Options
	log     zerolog.Logger
	parsers []parsers.Parser // one per instrument
	planner *planner.Planner

	journal   *record.Journal
	audit     *record.Audit
	auditKey  []byte
	state     *record.State
	warm      *gp.Params
	lastModel *planner.Surrogate // the last model, conditioned on new runs between fits
	gate      *safety.Gate
	proposer  Proposer
	write     func(dir, name string, data []byte) (record.Staged, error)

	holdSeen  map[string]time.Time // when each hold began, by this process's clock
	cfgMod    time.Time            // modification time of the config file last read
	cfgBroken string               // why the edited config is refused (no handoffs meanwhile)
	rateSaid  bool
	unlock    func()
	storage   string       // why the journal cannot be written now ("" when it can)
	retry     []watch.File // result files to ingest once it can

	folderLost map[string]bool        // export folders lost, as last reported
	lostSaid   bool                   // the hold for lost export folders is logged
	queuedSaid string                 // the run last logged as queued for room on an instrument
	occupied   map[string]bool        // handoff files found in place unrecorded, as logged
	watchState map[string]WatchStatus // by export folder, as written to watch.json

	refusals   int       // consecutive gate refusals
	planAfter  time.Time // earliest next planning attempt after an error
	planErrs   int
	planSince  time.Time // the first of the current run of failed proposals
	writeAfter time.Time // earliest next handoff attempt after an error
	writeErrs  int
	budgetSaid bool
	incomplete map[string]waiting // result files waiting to be complete, by path
}

// New checks the configuration and builds an agent; it touches no file.
func New(cfg Config, opt Options) (*Agent, error) {
	if opt.Registry == nil {
		opt.Registry = parsers.Default()
	}
	if opt.Now == nil {
		opt.Now = time.Now
	}
	if opt.Tick <= 0 {
		opt.Tick = time.Second
	}
	if err := cfg.Validate(opt.Registry).Err(); err != nil {
		return nil, fmt.Errorf("agent: invalid config: %w", err)
	}
	cfg.Campaign.Factors = cfg.Campaign.Factors.Normalised()
	if !cfg.listed {
		// One [instrument] section: it is the truth (callers may have
		// edited it after loading).
		cfg.Instruments = []InstrumentConfig{cfg.Instrument}
	}
	var ps []parsers.Parser
	for _, ic := range cfg.Instruments {
		p, err := opt.Registry.New(cfg.Formats[ic.Format])
		if err != nil {
			return nil, fmt.Errorf("agent: parser of instrument %s: %w", ic.Name, err)
		}
		ps = append(ps, p)
	}
	a := &Agent{
		cfg: cfg, opt: opt, parsers: ps, folderLost: map[string]bool{}, occupied: map[string]bool{}, watchState: map[string]WatchStatus{},
		log:        opt.Logger.With().Str("component", "agent").Logger(),
		planner:    planner.New(cfg.Campaign, cfg.Planner),
		incomplete: map[string]waiting{},
		holdSeen:   map[string]time.Time{},
		gate:       safety.NewGate(cfg.Safety, cfg.Campaign.Factors),
		proposer:   opt.Proposer,
		write:      opt.Writer,
	}
	switch {
	case a.proposer != nil:
	case cfg.Campaign.Several():
		a.proposer = planner.NewFront(cfg.Campaign, cfg.Planner)
	default:
		a.proposer = a.planner
	}
	if a.write == nil {
		a.write = func(dir, name string, data []byte) (record.Staged, error) {
			return record.Writer{}.Stage(dir, name, data, 0o644)
		}
	}
	if opt.ConfigPath != "" {
		if fi, err := os.Stat(opt.ConfigPath); err == nil {
			a.cfgMod = fi.ModTime()
		}
	}
	return a, nil
}

// Run works the campaign until ctx is cancelled (then it returns nil) or
// the journal can no longer be written (then it returns the error: nothing
// may go on without a record).
func (a *Agent) Run(ctx context.Context) error {
	err := a.open()
	if a.unlock != nil {
		defer a.unlock()
	}
	if err != nil {
		return err
	}
	defer a.closeStores()
	if err := makeReserve(a.cfg.Campaign.StateDir); err != nil {
		a.log.Warn().Err(err).Msg("cannot set aside room for the journal")
	}
	// A trouble file left by an earlier agent says nothing about this one.
	if err := clearPlanTrouble(a.cfg.Campaign.StateDir); err != nil {
		a.log.Warn().Err(err).Msg("cannot remove the planning trouble file")
	}

	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	folders := make(chan watch.FolderState, 4)
	files := make(chan watch.File)
	var watchers []*watch.Watcher
	for _, ic := range a.cfg.Instruments {
		w, err := watch.New(ic.Watch, a.opt.Logger.With().Str("instrument", ic.Name).Logger(), a.opt.Now)
		if err != nil {
			return fmt.Errorf("agent: instrument %s: %w", ic.Name, err)
		}
		if a.opt.Observer != nil {
			w.Trouble = a.opt.Observer.WatchTrouble
		}
		w.IncludeOld = a.opt.IncludeOld
		w.Folder = func(fs watch.FolderState) {
			select {
			case folders <- fs:
			case <-ctx.Done():
			}
		}
		ws := WatchStatus{Instrument: ic.Name, Dir: ic.Watch.Dir, OK: true, Since: a.opt.Now().UTC()}
		// Known at once, not at the watcher's first look: no handoff
		// goes to an instrument whose results cannot be seen.
		if _, err := os.ReadDir(ic.Watch.Dir); err != nil {
			ws.OK, ws.Problem = false, err.Error()
			a.folderLost[filepath.Clean(ic.Watch.Dir)] = true
		}
		a.watchState[filepath.Clean(ic.Watch.Dir)] = ws
		watchers = append(watchers, w)
	}
	if err := writeWatchStatus(a.cfg.Campaign.StateDir, a.watchState); err != nil {
		a.log.Warn().Err(err).Msg("cannot write the watch status file")
	}
	watchDone := make(chan error, len(watchers))
	for _, w := range watchers {
		go func() { watchDone <- w.Run(ctx, files) }()
	}
	defer func() {
		cancel()
		for range watchers {
			<-watchDone
		}
	}()

	tick := time.NewTicker(a.opt.Tick)
	defer tick.Stop()
	for _, ic := range a.cfg.Instruments {
		a.log.Info().Str("instrument", ic.Name).Str("export_dir", ic.Watch.Dir).Str("handoff_dir", ic.HandoffDir).Msg("watching")
	}
	a.log.Info().Int("runs", len(a.state.Order)).Int("handoffs", a.state.Handoffs).Int("instruments", len(a.cfg.Instruments)).Msg("campaign started")
	for {
		if a.storage != "" {
			a.tryRecover()
		} else if err := a.noteStorage(a.step(ctx), watch.File{}); err != nil {
			return err
		}
		select {
		case <-ctx.Done():
			a.log.Info().Msg("stopping")
			return nil
		case f := <-files:
			if a.storage != "" {
				a.retry = append(a.retry, f)
				continue
			}
			before := a.state.Ingests
			if err := a.noteStorage(a.ingest(f), f); err != nil {
				return err
			}
			if a.opt.Observer != nil && a.state.Ingests > before {
				a.opt.Observer.Ingested(a.opt.Now().Sub(f.ModTime))
			}
		case fs := <-folders:
			if a.storage != "" {
				continue
			}
			if err := a.noteStorage(a.noteFolder(fs), watch.File{}); err != nil {
				return err
			}
		case <-tick.C:
			if a.storage != "" {
				continue
			}
			if err := a.noteStorage(a.recheckIncomplete(), watch.File{}); err != nil {
				return err
			}
		}
	}
}

// open prepares the state folder, replays the journal and sweeps temp
// files left by a crash.
func (a *Agent) open() error {
	sd := a.cfg.Campaign.StateDir
	if err := os.MkdirAll(sd, 0o755); err != nil {
		return fmt.Errorf("agent: state folder: %w", err)
	}
	if err := record.CheckLocalFS(sd); err != nil {
		return fmt.Errorf("agent: %w", err)
	}
	unlock, err := record.LockState(sd)
	if err != nil {
		return fmt.Errorf("agent: %w", err)
	}
	a.unlock = unlock
	for _, ic := range a.cfg.Instruments {
		if fi, err := os.Stat(ic.HandoffDir); err != nil || !fi.IsDir() {
			return fmt.Errorf("agent: handoff folder %s of instrument %s does not exist or is not a folder", ic.HandoffDir, ic.Name)
		}
	}
	key, err := LoadAuditKey(a.cfg, true)
	if err != nil {
		return fmt.Errorf("agent: %w; nothing was started", err)
	}
	a.auditKey = key
	audit, tornAudit, err := record.OpenAudit(record.AuditPath(sd), key)
	if err != nil {
		return fmt.Errorf("agent: %s: %w; nothing was started (run benchtender audit verify)", record.AuditPath(sd), err)
	}
	a.audit = audit
	j, entries, cut, err := record.OpenJournal(journalPath(sd))
	if err != nil {
		audit.Close()
		return fmt.Errorf("agent: %w", err)
	}
	a.journal, a.state = j, record.Replay(entries)
	// The journal and the trail must agree; the one gap a crash leaves
	// (the last entry journalled, not yet audited) is closed now.
	if err := a.reconcile(entries); err != nil {
		return fmt.Errorf("agent: %w; nothing was started: find out what happened (backups, the instrument's own log), then record it with benchtender audit accept", err)
	}
	if tornAudit {
		a.log.Warn().Msg("audit trail ended in a torn entry (a write cut short by a crash); cut it off")
		if err := a.auditNote("audit trail repaired", "audit trail", "a torn last entry was cut off at start"); err != nil {
			return err
		}
	}
	if cut > 0 {
		a.log.Warn().Int64("bytes", cut).Msg("journal ended in a torn record (a write cut short by a crash); cut it off")
		if err := a.auditNote("journal repaired", "journal", fmt.Sprintf("a torn last record of %d bytes was cut off at start", cut)); err != nil {
			return err
		}
	}
	// Holds keep their age across a restart by the wall clock; within
	// this process, by the monotonic clock.
	now := a.opt.Now()
	for _, r := range a.state.Held() {
		seen := now
		if age := now.Sub(r.Proposed); age > 0 && !r.Proposed.IsZero() {
			seen = now.Add(-age)
		}
		a.holdSeen[r.ID] = seen
	}
	// What the handoff folder's temp files held, by target name, is read
	// before they are swept: a temp file carrying an unconfirmed
	// handoff's action id proves its rename never happened.
	swept := map[string][]string{} // by the target's full path
	dirs := []string{sd, inboxDir(sd), filepath.Join(sd, "quarantine")}
	// The archive's fan-out folders too (archive/xx/): a crash while
	// archiving leaves a temp file there.
	if fan, err := os.ReadDir(filepath.Join(sd, "archive")); err == nil {
		for _, e := range fan {
			if e.IsDir() {
				dirs = append(dirs, filepath.Join(sd, "archive", e.Name()))
			}
		}
	}
	handoffDirs := map[string]bool{}
	for _, ic := range a.cfg.Instruments {
		dirs = append(dirs, ic.HandoffDir)
		handoffDirs[ic.HandoffDir] = true
	}
	for _, dir := range dirs {
		removed, err := record.SweepTemp(dir)
		if err != nil && !errors.Is(err, os.ErrNotExist) {
			a.log.Warn().Err(err).Str("dir", dir).Msg("cannot sweep temp files")
		}
		for _, t := range removed {
			a.log.Info().Str("file", filepath.Join(dir, t.Name)).Msg("removed a temp file left by an earlier run")
			if handoffDirs[dir] {
				target := filepath.Join(dir, record.TempTarget(t.Name))
				swept[target] = append(swept[target], t.Head)
			}
		}
	}
	return a.recoverHandoffs(swept)
}

// recoverHandoffs settles handoffs a crash left unconfirmed. A handoff's
// temp file is written and synced before its intent is journalled, so:
// the file in place with its action id means it was sent; its temp file
// (swept just now) means the rename never happened and the run is ready to
// send again; neither means the rename happened and the instrument took
// the file, so the run awaits its result and is never sent twice.
func (a *Agent) recoverHandoffs(swept map[string][]string) error {
	for _, r := range a.state.InFlight() {
		if r.Confirmed || r.ActionID == "" {
			continue
		}
		ic := a.cfg.Instruments[a.instrumentNamed(r.Instrument)]
		path := filepath.Join(ic.HandoffDir, handoffName(r.ID, ic.HandoffFormat))
		data, err := os.ReadFile(path)
		staged := slices.ContainsFunc(swept[path], func(head string) bool { return strings.Contains(head, r.ActionID) })
		switch {
		case err == nil && strings.Contains(string(data), r.ActionID):
			if err := a.record(record.Entry{Kind: record.KindHandoffOK, Run: r.ID, ActionID: r.ActionID, File: path, Reason: "found in place after a restart"}); err != nil {
				return err
			}
		case staged:
			a.log.Warn().Str("run", r.ID).Msg("handoff was cut short by a crash before the file was in place; sending it again")
			if err := a.record(record.Entry{Kind: record.KindHandoffNo, Run: r.ID, ActionID: r.ActionID, Reason: "cut short by a crash before the rename; the instrument never saw it"}); err != nil {
				return err
			}
		default:
			a.log.Warn().Str("run", r.ID).Str("action", r.ActionID).Msg("handoff unconfirmed after a restart: the file is gone, taken by the instrument; not sent again, waiting for its result")
			if err := a.record(record.Entry{Kind: record.KindHandoffOK, Run: r.ID, ActionID: r.ActionID, File: path, Reason: "gone at restart: taken by the instrument before the confirmation was journalled"}); err != nil {
				return err
			}
		}
	}
	return nil
}

// record appends an entry to the journal and the audit trail, updates the
// state and tells Notify.
func (a *Agent) record(e record.Entry) error {
	e.Time = a.opt.Now().UTC()
	if a.storage != "" || !a.journal.Usable() || a.audit == nil {
		return storageError{fmt.Errorf("journal not writable: %s", a.storage)}
	}
	e.AuditHead = a.audit.Head()
	e, err := a.journal.Append(e)
	if err != nil {
		a.log.Error().Err(err).Msg("journal write failed; nothing more happens until it can be recorded")
		return storageError{fmt.Errorf("agent: %w", err)}
	}
	if err := a.auditEntry(e); err != nil {
		return storageError{err}
	}
	a.state.Apply(e)
	if e.Kind == record.KindProposal && e.Decision != nil && e.Decision.Verdict == safety.Hold {
		a.holdSeen[e.Run] = a.opt.Now()
	}
	if a.opt.Notify != nil {
		a.opt.Notify(e)
	}
	return nil
}

// step looks at the config and the all-stop, applies sign-offs, lets
// stale holds lapse, hands off cleared runs and plans the next one.
func (a *Agent) step(ctx context.Context) error {
	if err := a.reloadConfig(); err != nil {
		return err
	}
	if err := a.checkAllStop(); err != nil {
		return err
	}
	if err := a.applySignoffs(); err != nil {
		return err
	}
	if err := a.expireHolds(); err != nil {
		return err
	}
	if err := a.handoffReady(); err != nil {
		return err
	}
	if err := a.plan(ctx); err != nil {
		return err
	}
	// A move the gate has just passed goes out now, not at the next
	// tick (that wait was most of a result's way to the next setpoint).
	return a.handoffReady()
}

// halted says why no setpoint may be written now, or "".
func (a *Agent) halted() string {
	switch {
	case a.state.AllStop != "":
		return "all-stop: " + a.state.AllStop
	case a.cfgBroken != "":
		return "the edited config does not validate: " + a.cfgBroken
	case a.storage != "":
		return "the journal cannot be written: " + a.storage
	}
	return ""
}

// noteFolder records what a watcher says of its export folder: the
// current state in state/watch.json (status and the console read it),
// losses and returns in the audit trail.
func (a *Agent) noteFolder(fs watch.FolderState) error {
	dir := filepath.Clean(fs.Dir)
	ws := a.watchState[dir]
	ws.Dir, ws.OK, ws.Polling, ws.Since, ws.Problem = fs.Dir, fs.OK, fs.Polling, a.opt.Now().UTC(), ""
	if fs.Err != nil {
		ws.Problem = fs.Err.Error()
	}
	a.watchState[dir] = ws
	if err := writeWatchStatus(a.cfg.Campaign.StateDir, a.watchState); err != nil {
		a.log.Warn().Err(err).Msg("cannot write the watch status file")
	}
	switch {
	case !fs.OK:
		a.folderLost[dir] = true
		return a.auditNote(noteFolderLost, fs.Dir, fs.Err.Error())
	case a.folderLost[dir] || fs.Replaced:
		delete(a.folderLost, dir)
		why := "readable again"
		if fs.Replaced {
			why = "back as another folder (recreated or mounted again); watching it now"
		}
		return a.auditNote(noteFolderBack, fs.Dir, why)
	}
	return nil
}

// instrumentOf is the index of the instrument whose export folder holds
// path (the first instrument when none does).
func (a *Agent) instrumentOf(path string) int {
	for i, ic := range a.cfg.Instruments {
		if rel, err := filepath.Rel(ic.Watch.Dir, path); err == nil && filepath.IsLocal(rel) {
			return i
		}
	}
	return 0
}

// instrumentNamed is the index of the named instrument; runs journalled
// before instruments had names belong to the first.
func (a *Agent) instrumentNamed(name string) int {
	for i, ic := range a.cfg.Instruments {
		if ic.Name == name {
			return i
		}
	}
	return 0
}

// inFlightOn returns the runs handed off to instrument i and awaiting
// their results, oldest first.
func (a *Agent) inFlightOn(i int) []*record.Run {
	var out []*record.Run
	for _, r := range a.state.InFlight() {
		if a.instrumentNamed(r.Instrument) == i {
			out = append(out, r)
		}
	}
	return out
}

// previous is the setpoint the gate judges a new move against: the last
// one handed off to the instrument that would take the next setpoint.
func (a *Agent) previous() campaign.Point {
	i, _ := a.pickInstrument()
	if i < 0 {
		i = 0 // every export folder lost: nothing is handed off anyway
	}
	return a.state.LastHandoffOn(a.cfg.Instruments[i].Name, len(a.cfg.Instruments) == 1)
}

// pickInstrument chooses where the next setpoint goes: the instrument
// with the fewest runs in flight (the first of them on a tie), so that
// each is kept busy and none gets a queue while another idles. Room says
// whether it has room for one more setpoint file (its capacity).
func (a *Agent) pickInstrument() (inst int, room bool) {
	best, load := -1, -1
	for i, ic := range a.cfg.Instruments {
		if a.exportLost(i) {
			continue // its results could not be seen
		}
		n := len(a.inFlightOn(i))
		free := n < ic.Capacity
		switch {
		case best < 0, free && !room, free == room && n < load:
			best, load, room = i, n, free
		}
	}
	return best, room
}

// Audit notes about the export folder.
const (
	noteFolderLost = "export folder lost"
	noteFolderBack = "export folder back"
)

// waiting is a result file not complete yet, since when.
type waiting struct {
	f     watch.File
	first time.Time
}

// ingest reads one settled result file, inside the export folder only,
// archives a true copy and records it.
func (a *Agent) ingest(f watch.File) error {
	path := f.Path
	log := a.log.With().Str("file", path).Logger()
	if f.Problem != "" {
		return a.refuseName(f)
	}
	data, err := a.readExport(f)
	if errors.Is(err, errTooLarge) {
		return a.refuseUnread(f.Path, err.Error())
	}
	if err != nil {
		// Gone or unreadable now; a later scan will offer it again.
		log.Warn().Err(err).Msg("cannot read result file")
		return nil
	}
	sum := sha256.Sum256(data)
	sha := hex.EncodeToString(sum[:])
	if a.state.Hashes[sha] {
		delete(a.incomplete, path)
		seen := a.state.Seen[sha]
		if slices.Contains(seen, path) {
			log.Debug().Str("sha256", sha).Msg("content already in the journal")
			return nil
		}
		// The same content under another name: recorded, never fed
		// twice.
		log.Info().Str("same_as", seen[0]).Msg("duplicate result file: same content as one already recorded")
		return a.record(record.Entry{Kind: record.KindDuplicate, File: path, SHA256: sha, Reason: "same content as " + seen[0]})
	}
	inst := a.instrumentOf(path)
	rec, err := a.parsers[inst].Parse(path, data)
	if errors.Is(err, parsers.ErrIncomplete) {
		w, seen := a.incomplete[path]
		if !seen {
			w = waiting{f: f, first: a.opt.Now()}
			a.incomplete[path] = w
		}
		first := w.first
		timeout := a.cfg.Formats[a.cfg.Instruments[inst].Format].IncompleteTimeout
		if a.opt.Now().Sub(first) < timeout {
			if !seen {
				log.Info().Err(err).Stringer("timeout", timeout).Msg("result file is not complete yet; waiting")
			}
			return nil
		}
		delete(a.incomplete, path)
		return a.refuseFile(path, sha, data, fmt.Sprintf("still incomplete after %v: %v", timeout, err))
	}
	delete(a.incomplete, path)
	if err != nil {
		return a.refuseFile(path, sha, data, err.Error())
	}
	for _, w := range rec.Warnings {
		log.Warn().Str("run", rec.RunID).Msg(w)
	}
	if rec.RunID == "" {
		// The instrument writes no run id: the result answers the oldest
		// setpoint handed off to it and still unanswered.
		inflight := a.inFlightOn(inst)
		if len(inflight) == 0 {
			return a.refuseFile(path, sha, data, "the file names no run and no handed-off run is waiting for a result")
		}
		rec.RunID = inflight[0].ID
		rec.RunIDFrom = "oldest unanswered handoff"
	}
	resp := a.cfg.Campaign.Response.Name
	val := responseValue(a.cfg.Campaign, rec)
	e := record.Entry{Kind: record.KindIngest, Run: rec.RunID, File: path, SHA256: sha, Value: val.Number, Failed: val.Failed, Values: readValues(rec)}
	if !campaign.ValidRunID(rec.RunID) {
		return a.refuseFile(path, sha, data, fmt.Sprintf("run id %q is not usable (letters, digits, '_', '.', '-'; at most 64)", rec.RunID))
	}
	r, known := a.state.Runs[rec.RunID]
	switch {
	case known && (r.Status == record.StatusHanded || r.Status == record.StatusDone || r.Status == record.StatusFailed):
		if r.Status != record.StatusHanded {
			e.Revision = len(r.Files) + 1
			log.Info().Str("run", r.ID).Int("revision", e.Revision).Msg("new content for a run already ingested: a new revision; both are kept, the latest counts")
		}
	case known:
		return a.refuseFile(path, sha, data, fmt.Sprintf("run %s was never handed off (it is %s)", rec.RunID, r.Status))
	default:
		pt, ok := a.pointFrom(rec)
		if !ok {
			return a.refuseFile(path, sha, data, fmt.Sprintf("run %s was not handed off by this campaign and the file gives no value for every factor", rec.RunID))
		}
		e.Point = pt
	}
	// A true copy first: the record survives the instrument PC purging
	// its exports.
	cp, err := archive(a.cfg.Campaign.StateDir, sha, data, modeOf(path))
	if err != nil {
		return storageError{err}
	}
	e.Copy = cp
	if err := a.record(e); err != nil {
		return err
	}
	if val.Failed != "" {
		log.Warn().Str("run", rec.RunID).Str("failed", val.Failed).Msg("result ingested: the run gave no usable value")
		return nil
	}
	ev := log.Info().Str("run", rec.RunID).Float64(resp, val.Number)
	for _, r := range a.cfg.Campaign.AllResponses()[1:] {
		ev = ev.Float64(r.Name, rec.Values[r.Name].Number)
	}
	if val.Line > 0 {
		ev = ev.Int("line", val.Line).Int("column", val.Column)
	}
	ev.Msg("result ingested")
	return nil
}

// recheckIncomplete reads again the files that were incomplete: the
// watcher reports a file only when it changes, and an abandoned file must
// still reach quarantine after the timeout.
func (a *Agent) recheckIncomplete() error {
	for _, w := range a.incomplete {
		if err := a.ingest(w.f); err != nil {
			return err
		}
	}
	return nil
}

// pointFrom takes a setpoint from the factor columns of a record.
func (a *Agent) pointFrom(rec parsers.Record) (campaign.Point, bool) {
	pt := make(campaign.Point, a.cfg.Campaign.Factors.Dim())
	for i, f := range a.cfg.Campaign.Factors {
		v, ok := rec.Factors[f.Name]
		if !ok {
			return nil, false
		}
		pt[i] = v.Number
	}
	return pt, pt.Finite()
}

// refuseFile quarantines a result file and records why.
func (a *Agent) refuseFile(path, sha string, data []byte, reason string) error {
	dir := filepath.Join(a.cfg.Campaign.StateDir, "quarantine")
	cp, err := quarantine(dir, path, sha, data, reason, a.opt.Now(), modeOf(path))
	if err != nil {
		// Not recorded, so a later scan offers the file again.
		a.log.Error().Err(err).Str("file", path).Msg("cannot quarantine result file")
		return nil
	}
	a.log.Warn().Str("file", path).Str("copy", cp).Str("reason", reason).Msg("result file quarantined")
	return a.record(record.Entry{Kind: record.KindQuarantine, File: path, SHA256: sha, Reason: reason, Copy: cp})
}

// handoffReady writes the setpoint file of every run cleared for handoff,
// unless an all-stop, a broken config or the rate limit says no.
func (a *Agent) handoffReady() error {
	if a.opt.Now().Before(a.writeAfter) || a.halted() != "" {
		return nil
	}
	for _, r := range a.state.Ready() {
		if !a.rateAllows() {
			return nil
		}
		inst, room := a.pickInstrument()
		if inst < 0 {
			if !a.lostSaid {
				a.lostSaid = true
				a.log.Warn().Msg("handoffs held: no instrument's export folder can be read, so no result could be seen")
			}
			return nil
		}
		a.lostSaid = false
		if !room {
			// Every instrument holds as many setpoint files as it may:
			// the cleared runs wait here, oldest proposal first.
			if a.queuedSaid != r.ID {
				a.queuedSaid = r.ID
				a.log.Info().Str("run", r.ID).Int("queued", len(a.state.Ready())).Msg("cleared for handoff; queued until an instrument has room (capacity)")
			}
			return nil
		}
		ic := a.cfg.Instruments[inst]
		sp := campaign.Setpoint{RunID: r.ID, Point: r.Point}
		// Gate once more right before writing, against the setpoint this
		// instrument last ran: fail closed.
		d := a.gate.Check(sp, a.state.LastHandoffOn(ic.Name, len(a.cfg.Instruments) == 1))
		if d.Verdict == safety.Refuse {
			a.log.Error().Str("run", r.ID).Str("gate", d.Summary()).Msg("not handed off: the gate refuses it")
			if err := a.record(record.Entry{Kind: record.KindRegate, Run: r.ID, Decision: &d, Reason: "refused when about to be handed off"}); err != nil {
				return err
			}
			continue
		}
		if d.Verdict == safety.Hold && r.ApprovedUnder != a.gate.Version() {
			// Approved under other limits, or passed before a ramp from
			// a newer setpoint: a person must look again.
			a.log.Warn().Str("run", r.ID).Str("gate", d.Summary()).Msg("held again: the limits changed since it was cleared")
			if err := a.record(record.Entry{Kind: record.KindRegate, Run: r.ID, Decision: &d, Reason: "limits or previous setpoint changed since it was cleared"}); err != nil {
				return err
			}
			continue
		}
		name := handoffName(r.ID, ic.HandoffFormat)
		path := filepath.Join(ic.HandoffDir, name)
		if _, err := os.Lstat(path); err == nil {
			// A setpoint file for this run is already there, and the
			// journal does not say it was handed off: it may have been
			// (a journal restored from an older backup), so it is not
			// overwritten or sent again; a person must look.
			if !a.occupied[path] {
				a.occupied[path] = true
				a.log.Error().Str("run", r.ID).Str("file", path).Msg("not handed off: a setpoint file for this run is already in the handoff folder, though the journal has no handoff of it; move it away once you know whether the instrument ran it")
				if err := a.auditNote("handoff refused", r.ID, "a setpoint file for this run is already in the handoff folder ("+path+") and the journal has no handoff of it"); err != nil {
					return err
				}
			}
			continue
		}
		delete(a.occupied, path)
		// Three steps, each durable before the next: the file is staged
		// under a temp name with the action id it carries, the intent is
		// journalled, the file is renamed into place. A crash between any
		// two is settled at restart without ever sending a run twice,
		// and no file reaches the instrument unrecorded.
		action := fmt.Sprintf("%s-%d", r.ID, a.journal.Seq()+1)
		data, err := renderHandoff(a.cfg.Campaign.Factors, sp, ic.HandoffFormat, action)
		if err != nil {
			a.log.Error().Err(err).Str("run", r.ID).Msg("cannot render the setpoint file; no setpoint written")
			continue
		}
		st, err := a.write(ic.HandoffDir, name, data)
		if err != nil {
			a.writeFailed(r.ID, err)
			return nil
		}
		if err := a.record(record.Entry{Kind: record.KindHandoff, Run: r.ID, File: path, Point: r.Point, ActionID: action, Instrument: ic.Name}); err != nil {
			st.Abort()
			return err
		}
		if err := st.Commit(); err != nil && !errors.Is(err, record.ErrInPlace) {
			a.writeFailed(r.ID, err)
			return a.record(record.Entry{Kind: record.KindHandoffNo, Run: r.ID, ActionID: action, Reason: err.Error()})
		} else if err != nil {
			// Visible to the instrument: it counts as sent, so that it
			// can never be sent twice.
			a.log.Error().Err(err).Str("run", r.ID).Msg("setpoint file in place but its folder could not be synced; counted as handed off")
		}
		a.writeErrs = 0
		if err := a.record(record.Entry{Kind: record.KindHandoffOK, Run: r.ID, ActionID: action, File: path, Point: r.Point}); err != nil {
			return err
		}
		a.log.Info().Str("run", r.ID).Str("file", path).Interface("setpoint", named(a.cfg.Campaign.Factors, r.Point)).Msg("setpoint handed off")
	}
	return nil
}

// writeFailed backs off after a setpoint file could not be written.
func (a *Agent) writeFailed(run string, err error) {
	a.writeErrs++
	a.writeAfter = a.opt.Now().Add(backoff(a.writeErrs))
	a.log.Error().Err(err).Str("run", run).Stringer("retry_in", backoff(a.writeErrs)).Msg("handoff failed; no setpoint written")
}

// spent counts the runs that use up the budget: every proposal that was
// not rejected or refused.
func (a *Agent) spent() int {
	n := 0
	for _, r := range a.state.Runs {
		if r.Status != record.StatusRejected && r.Status != record.StatusRefused && r.Status != record.StatusExpired && !r.External {
			n++
		}
	}
	return n
}

// maxRefusals is how many proposals in a row the gate may refuse before
// the agent stops proposing: the factor box and the limits disagree.
const maxRefusals = 3

// plan proposes the next run while fewer than the batch size are in
// flight, held or ready.
func (a *Agent) plan(ctx context.Context) error {
	st := a.state
	if st.Stopped != "" || a.halted() != "" {
		return nil
	}
	busy := len(st.Pending())
	var region [][2]float64
	var allowed func(campaign.Point) bool
	if a.cfg.Safety.KeepBusy && len(st.Held()) > 0 {
		// Holds wait for a person; meanwhile the instrument works on
		// proposals inside every limit.
		busy -= len(st.Held())
		region, allowed = a.insideEveryLimit()
	}
	if busy >= max(a.cfg.Planner.Batch, len(a.cfg.Instruments)) {
		return nil
	}
	if a.spent() >= a.cfg.Campaign.MaxRuns {
		if !a.budgetSaid {
			a.budgetSaid = true
			a.log.Info().Int("max_runs", a.cfg.Campaign.MaxRuns).Msg("budget spent; no more proposals")
		}
		return nil
	}
	if a.refusals >= maxRefusals || a.opt.Now().Before(a.planAfter) {
		return nil
	}
	start := a.opt.Now()
	id := fmt.Sprintf("R%04d", st.Proposals+1)
	res, err := a.propose(ctx, id, region, allowed)
	if err != nil {
		if ctx.Err() != nil {
			return nil
		}
		a.planFailed(err.Error())
		a.log.Error().Err(err).Stringer("retry_in", backoff(a.planErrs)).Msg("planning failed; no setpoint written")
		return nil
	}
	if a.planErrs > 0 {
		if err := clearPlanTrouble(a.cfg.Campaign.StateDir); err != nil {
			a.log.Warn().Err(err).Msg("cannot remove the planning trouble file")
		}
	}
	a.planErrs = 0
	if res.Fit != nil {
		a.warm = res.Fit
	}
	if res.Surrogate != nil {
		a.lastModel = res.Surrogate
	}
	if res.Stop != "" {
		a.log.Info().Str("reason", res.Stop).Msg("stopping rule met; no more proposals")
		return a.record(record.Entry{Kind: record.KindStop, Reason: res.Stop})
	}
	if na := res.NewAside; na != nil {
		// Decided once: journalled before the proposal it shapes, and
		// passed back with every later request, so it never changes.
		runs := a.state.TrialRuns()
		run := ""
		if !na.Release && na.Run >= 0 && na.Run < len(runs) {
			run = runs[na.Run].ID
		}
		msg := "basin set aside; a new search starts outside it"
		if na.Release {
			msg = "regions set aside are released; the search goes on over the whole box"
		}
		a.log.Info().Str("centre_run", run).Str("reason", na.Reason).Msg(msg)
		if err := a.record(record.Entry{Kind: record.KindSetAside, Run: run, Point: na.Centre, Aside: na, Reason: na.Reason}); err != nil {
			return err
		}
	}
	prop := res.Proposal
	prop.Point = roundPoint(a.cfg.Campaign.Factors, prop.Point)
	if v := a.planner.Violated(prop.Point); v != "" {
		a.log.Error().Str("run", id).Str("constraint", v).Msg("planner proposed a setpoint that breaks a constraint; not recorded, no setpoint written")
		a.planFailed("the planner proposed a setpoint that breaks constraint " + v)
		return nil
	}
	d := a.gate.Check(prop.Setpoint, a.previous())
	e := record.Entry{Kind: record.KindProposal, Run: id, Point: prop.Point, Method: prop.Method, Score: prop.Score, Decision: &d, Limits: d.Limits,
		Stopping: res.Stopping.String()}
	if d.Verdict == safety.Hold && region == nil {
		// Show the person signing off what would run inside the limits.
		box, ok := a.insideEveryLimit()
		if alt, err := a.propose(ctx, id, box, ok); err == nil && ok(alt.Proposal.Point) {
			e.Alternative = roundPoint(a.cfg.Campaign.Factors, alt.Proposal.Point)
		}
	}
	if err := a.record(e); err != nil {
		return err
	}
	ev := a.log.Info()
	switch d.Verdict {
	case safety.Refuse:
		a.refusals++
		ev = a.log.Error()
		if a.refusals >= maxRefusals {
			a.log.Error().Int("refusals", a.refusals).Msg("the gate refused several proposals in a row; proposals stopped until restart: check that the factor bounds lie inside the hard limits")
		}
	case safety.Hold:
		a.refusals = 0
		ev = a.log.Warn()
	default:
		a.refusals = 0
	}
	ev.Str("run", id).Str("method", prop.Method).Interface("setpoint", named(a.cfg.Campaign.Factors, prop.Point)).
		Str("gate", d.Summary()).Stringer("took", a.opt.Now().Sub(start).Round(time.Millisecond)).Msg("proposal")
	if a.opt.Observer != nil {
		a.opt.Observer.Planned(a.opt.Now().Sub(start))
	}
	return nil
}

// insideEveryLimit confines a proposal to moves the gate passes as they
// stand, against the setpoint the next run follows.
func (a *Agent) insideEveryLimit() ([][2]float64, func(campaign.Point) bool) {
	return insideLimits(a.cfg, a.gate, a.previous())
}

// insideLimits is the region of moves from prev that pass every
// per-factor limit (the review box narrowed by each ramp limit), which the
// planner fills with candidates, and a test that the gate passes the
// rounded move as it will be written (rules over several factors, levels).
func insideLimits(cfg Config, gate *safety.Gate, prev campaign.Point) ([][2]float64, func(campaign.Point) bool) {
	space := cfg.Campaign.Factors
	passes := func(pt campaign.Point) bool {
		sp := campaign.Setpoint{RunID: "check", Point: roundPoint(space, pt)}
		return gate.Check(sp, prev).Verdict == safety.Pass
	}
	return cfg.Safety.PassBox(space, prev), passes
}

// propose asks the planner, turning a panic into an error: a bug in the
// planner must not take the daemon down or write a setpoint.
func (a *Agent) propose(ctx context.Context, id string, region [][2]float64, allowed func(campaign.Point) bool) (res planner.Result, err error) {
	defer func() {
		if p := recover(); p != nil {
			err = fmt.Errorf("planner panicked: %v", p)
		}
	}()
	res, err = a.proposer.Propose(ctx, planner.Request{
		RunID: id, Index: a.state.Proposals, Trials: trialsOf(a.cfg.Campaign, a.state), Pending: a.state.Pending(),
		Failed: a.state.FailedPoints(), Avoid: a.state.Avoid(), Warm: a.warm, Previous: a.lastModel, Region: region,
		Allowed: allowed, Aside: a.state.Asides,
	})
	if err == nil && (res.Proposal.RunID != id || !res.Proposal.Point.Finite() || len(res.Proposal.Point) != a.cfg.Campaign.Factors.Dim()) {
		err = fmt.Errorf("planner returned an unusable proposal %+v", res.Proposal)
	}
	return res, err
}

// trialsOf is the campaign's completed runs as the planner takes them:
// with several responses, each run's value of every one.
func trialsOf(cc campaign.Config, st *record.State) []campaign.Trial {
	if !cc.Several() {
		return st.Trials()
	}
	return st.TrialsOf(cc.ResponseNames())
}

// responseValue is the run's value as the journal records it: the
// response's, or with several responses the first one's, failed when any
// response failed. Implausible values are failed runs with their reason:
// kept on record, never modelled.
func responseValue(cc campaign.Config, rec parsers.Record) parsers.Value {
	var out parsers.Value
	for i, r := range cc.AllResponses() {
		v := rec.Values[r.Name]
		if v.Failed == "" {
			if why := r.Check(v.Number); why != "" {
				v.Failed, v.Number = why, 0
			}
		}
		if v.Failed != "" && cc.Several() && !strings.HasPrefix(v.Failed, r.Name) {
			v.Failed = r.Name + ": " + v.Failed
		}
		switch {
		case i == 0:
			out = v
		case v.Failed != "" && out.Failed == "":
			out.Failed, out.Number = v.Failed, 0
		case v.Failed != "":
			out.Failed += "; " + v.Failed
		}
	}
	return out
}

// readValues is every value and derived value a result file gave, with
// its unit, for the record and the export (failed ones are left out: the
// response's failure is recorded on its own).
func readValues(rec parsers.Record) map[string]record.Reading {
	out := map[string]record.Reading{}
	for name, v := range rec.Values {
		if v.Failed == "" && !math.IsNaN(v.Number) && !math.IsInf(v.Number, 0) {
			out[name] = record.Reading{Value: v.Number, Unit: v.Unit}
		}
	}
	return out
}

// planFailed counts a failed proposal, sets the time of the next attempt,
// and writes the trouble where status and the console read it (Notices):
// otherwise a campaign whose planner fails stops proposing with a word
// only in the log.
func (a *Agent) planFailed(problem string) {
	now := a.opt.Now()
	if a.planErrs == 0 {
		a.planSince = now
	}
	a.planErrs++
	a.planAfter = now.Add(backoff(a.planErrs))
	pt := PlanTrouble{Problem: problem, Since: a.planSince.UTC(), Attempts: a.planErrs, Next: a.planAfter.UTC()}
	if err := writePlanTrouble(a.cfg.Campaign.StateDir, pt); err != nil {
		a.log.Warn().Err(err).Msg("cannot write the planning trouble file")
	}
}

// backoff is 2^(n-1) seconds, capped at five minutes.
func backoff(n int) time.Duration {
	d := time.Second << min(n-1, 9)
	return min(d, 5*time.Minute)
}

func named(space campaign.Space, p campaign.Point) map[string]float64 {
	m := make(map[string]float64, len(p))
	for i, f := range space {
		if i < len(p) {
			m[f.Name] = p[i]
		}
	}
	return m
}
