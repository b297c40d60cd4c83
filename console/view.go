package console

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"time"

	"benchtender/agent"
	"benchtender/campaign"
	"benchtender/planner"
	"benchtender/plots"
	"benchtender/record"
)

// View is everything the console's pages and the report show, read from
// the campaign's journal, audit trail and folders at one moment.
type View struct {
	Campaign  string
	Generated time.Time
	Factors   campaign.Space
	Response  campaign.Response
	Limits    string // limits version sign-offs are bound to
	// LimitsInWords are the limits and rules in force, one line each.
	LimitsInWords []string
	// AllStop, when not empty, says why every handoff is halted.
	AllStop string
	// Queued are runs cleared for handoff that wait for room on an
	// instrument, in the order they will go out.
	Queued []string
	// Quarantined are result files refused, with why.
	Quarantined []Quarantined
	Budget      int
	Proposals   int
	Handoffs    int
	Counts      []Count
	Halts       []string
	// Stopping says whether proposals stopped and why; StopRule says what
	// rule is configured.
	Stopping, StopRule string
	// StopTests is the stopping rule's verdict at the latest proposal,
	// each test with its value and threshold (empty when the rule is off
	// or proposals have stopped).
	StopTests   string
	Best        *RunRow
	Runs        []RunRow
	Held        []HeldRow
	Instruments []Instrument
	Model       *Model
	ModelNote   string // why there is no model yet
	Optimum     *Optimum
	// Front is the Pareto front of a campaign with several responses
	// (nil otherwise, and before the model is asked for).
	Front   *Front
	Figures []plots.Figure
	// PairX, PairY index the factors of the 2-D optimum plot (-1: none).
	PairX, PairY int
	Audit        []record.AuditEntry // newest first
	AuditTotal   int
	// The record, for a report that stands in a lab notebook: the build
	// that made it, the time span of the journal, every signature (from
	// the audit trail), every change to the limits and every refused
	// config edit, every all-stop and resume.
	Software     string
	From, To     time.Time
	Signatures   []record.AuditEntry
	LimitChanges []record.AuditEntry
	Stops        []StopRow
	ConfigFile   string
	ConfigSHA256 string
	ConfigText   string
	// AuditHead is the trail's last entry ("seq hash"), to be copied
	// into a notebook; RecordCheck says whether the keyed chain verified
	// and the journal agreed with it when the view was built.
	AuditHead, RecordCheck string
}

// StopRow is an all-stop or the resume that cleared it.
type StopRow struct {
	Time              time.Time
	What, Who, Reason string
}

// Count is the number of runs with one status.
type Count struct {
	Status string
	N      int
}

// RunRow is one line of the runs table.
type RunRow struct {
	ID, Status, Method string
	Setpoint           []Value
	Result             string // the response, or why it failed
	Files              []string
	Proposed           time.Time
	SignedBy           string
	// Approvers are the ids of everyone who approved the move.
	Approvers []string
	// Others are the other values the latest result file gave
	// ("name value unit"), in name order.
	Others []string
}

// Value is one factor's value, formatted.
type Value struct{ Factor, Text, Unit string }

// HeldRow is a move waiting for sign-off.
type HeldRow struct {
	RunRow
	Reasons     []string
	Alternative []Value
	NeedsTwo    bool
	Lapses      time.Time
	// First is a pending first of two approvals.
	First *FirstApproval
	// Edit are the values the approval form starts from: the first
	// approval's when there is one, else the held move's.
	Edit []EditValue
}

// FirstApproval is the first of two approvals, shown wherever the hold is.
type FirstApproval struct {
	By, Name, Reason string
	Time             time.Time
	Setpoint         []Value
	// Edited says the values are not the ones proposed.
	Edited   bool
	Replaces string
}

// EditValue is one factor's field in the approval form: Text reads back
// to the exact value; Choices are a categorical factor's categories.
type EditValue struct {
	Factor, Text, Unit string
	Choices            []string
}

// Quarantined is a result file that was refused, with why.
type Quarantined struct {
	Time         time.Time
	File, Reason string
	Copy         string
}

// Instrument is what the folders say about the instrument and the watcher.
type Instrument struct {
	Name, ExportDir, Pattern, HandoffDir string
	ExportProblem                        string // "" when the export folder can be listed
	Notices                              []string
	LastResult                           time.Time
	LastFile                             string
	LastHandoff                          time.Time
	Waiting                              []string // setpoint files not yet taken
	InFlight                             []string // runs handed off, result awaited
}

// Model describes the fitted surrogate.
type Model struct {
	Kernel, Units     string
	Runs              int
	LogLikelihood     float64
	Scales            []string
	SignalSD, NoiseSD float64
	// Additive is planner.Diagnostics.Additive; AdditiveOn says whether the
	// fit had it (additive on).
	Additive          float64
	AdditiveOn        bool
	LOORMSE, Outside2 float64
	Worst             []string
	SetAside          string // agent.SetAsideNote
}

// Optimum is where the optimum probably is and how good it is.
type Optimum struct {
	Samples               int
	Box                   []BoxRow
	BoxMass               float64
	Median, Low, High     float64
	BestWithin, Tolerance float64
	// Bounded says the response's physical range clipped the figures.
	Bounded string
	// Beyond warns when the likely optimum lies outside the review limits
	// or far from every run: its value is then the model's extrapolation.
	Beyond []string
}

// BoxRow is one factor's side of the 90% credible box, beside the most
// likely value and the 90% highest-density region (one or more pieces,
// each with the share of draws in it).
type BoxRow struct {
	Factor, Low, High, Unit string
	Likely                  string
	Region                  []string
}

// BuildOptions choose what Build computes.
type BuildOptions struct {
	// Model fits the surrogate and draws the figures (about a second for
	// a few hundred runs).
	Model bool
	// PairX and PairY name the factors of the 2-D optimum plot ("": the
	// first two).
	PairX, PairY string
	// AuditTail is how many audit entries to keep (0: all).
	AuditTail int
	// ConfigPath, when set, puts the config file's text and SHA-256 into
	// the view (the report's record of the configuration in force).
	ConfigPath string
	// Software names the build (version and commit).
	Software string
	Now      func() time.Time
}

// Build reads the campaign and computes its view.
func Build(ctx context.Context, cfg agent.Config, opt BuildOptions) (*View, error) {
	if opt.Now == nil {
		opt.Now = time.Now
	}
	sd := cfg.Campaign.StateDir
	entries, err := record.ReadJournal(filepath.Join(sd, "journal.log"))
	if err != nil && !os.IsNotExist(err) {
		return nil, fmt.Errorf("console: %w", err)
	}
	st := record.Replay(entries)
	space := cfg.Campaign.Factors
	v := &View{
		Campaign: cfg.Campaign.Name, Generated: opt.Now().UTC(), Factors: space, Response: cfg.Campaign.Response,
		Limits: cfg.Safety.Version(), Budget: cfg.Campaign.MaxRuns, Proposals: st.Proposals, Handoffs: st.Handoffs,
		Halts: agent.Halts(cfg, st), PairX: -1, PairY: -1,
	}
	counts := map[string]int{}
	for _, id := range st.Order {
		r := st.Runs[id]
		counts[r.Status]++
		v.Runs = append(v.Runs, runRow(space, cfg.Campaign.Response, r))
	}
	for _, s := range []string{record.StatusDone, record.StatusFailed, record.StatusHanded, record.StatusReady, record.StatusHeld, record.StatusRejected, record.StatusRefused, record.StatusExpired} {
		if counts[s] > 0 {
			v.Counts = append(v.Counts, Count{s, counts[s]})
		}
	}
	for _, r := range st.Held() {
		h := HeldRow{RunRow: runRow(space, cfg.Campaign.Response, r), NeedsTwo: r.Decision.NeedsTwo(cfg.Safety),
			Lapses: r.Proposed.Add(cfg.Safety.Holds())}
		start := r.Point
		if f := r.First; f != nil {
			h.First = &FirstApproval{By: f.By, Name: f.Name, Reason: f.Reason, Time: f.Time, Setpoint: values(space, f.Point),
				Edited: !f.Point.Equal(r.Point), Replaces: f.Replaces}
			start = f.Point
		}
		for i, f := range space {
			ev := EditValue{Factor: f.Name, Text: f.Format(start[i]), Unit: f.Unit}
			if f.Kind == campaign.Categorical {
				ev.Choices = f.Categories
			}
			h.Edit = append(h.Edit, ev)
		}
		for _, why := range r.Decision.Reasons {
			h.Reasons = append(h.Reasons, why.Message)
		}
		if r.Alternative != nil {
			h.Alternative = values(space, r.Alternative)
		}
		v.Held = append(v.Held, h)
	}
	v.LimitsInWords = cfg.Safety.Describe(space)
	v.Software = opt.Software
	if n := len(entries); n > 0 {
		v.From, v.To = entries[0].Time, entries[n-1].Time
	}
	for _, e := range entries {
		switch e.Kind {
		case record.KindAllStop:
			v.Stops = append(v.Stops, StopRow{Time: e.Time, What: "all-stop", Who: e.By, Reason: e.Reason})
		case record.KindResume:
			v.Stops = append(v.Stops, StopRow{Time: e.Time, What: "resumed", Who: e.By + " (" + e.Name + ")", Reason: e.Reason})
		}
	}
	if opt.ConfigPath != "" {
		if b, err := os.ReadFile(opt.ConfigPath); err == nil {
			sum := sha256.Sum256(b)
			v.ConfigFile, v.ConfigText, v.ConfigSHA256 = opt.ConfigPath, string(b), hex.EncodeToString(sum[:])
			if abs, err := filepath.Abs(opt.ConfigPath); err == nil {
				v.ConfigFile = abs
			}
		}
	}
	v.AllStop = st.AllStop
	for _, r := range st.Ready() {
		v.Queued = append(v.Queued, r.ID)
	}
	for _, e := range entries {
		if e.Kind == record.KindQuarantine {
			v.Quarantined = append(v.Quarantined, Quarantined{Time: e.Time, File: e.File, Reason: e.Reason, Copy: e.Copy})
		}
	}
	if b := st.Best(cfg.Campaign.Response); b != nil && !cfg.Campaign.Several() {
		row := runRow(space, cfg.Campaign.Response, b)
		v.Best = &row
	}
	v.Stopping, v.StopRule = stopping(cfg, st)
	if st.Stopped == "" {
		v.StopTests = st.Stopping
	}
	notices := agent.Notices(cfg)
	for _, ic := range cfg.Instruments {
		v.Instruments = append(v.Instruments, instrument(ic, len(cfg.Instruments) == 1, notices, st, entries))
	}
	if _, err := agent.CheckRecord(cfg); err != nil {
		v.RecordCheck = "does not check: " + err.Error()
	} else {
		v.RecordCheck = "the keyed chain verifies and the journal agrees with it"
	}
	if trail, err := record.ReadAudit(filepath.Join(sd, "audit.log")); err == nil {
		v.AuditTotal = len(trail)
		if n := len(trail); n > 0 {
			v.AuditHead = fmt.Sprintf("entry %d, hash %s", trail[n-1].Seq, trail[n-1].Hash)
		}
		for _, e := range trail {
			switch {
			case e.Meaning != "":
				v.Signatures = append(v.Signatures, e)
			case e.Action == "limits edited" || e.Action == "config refused":
				v.LimitChanges = append(v.LimitChanges, e)
			}
		}
		if opt.AuditTail > 0 && len(trail) > opt.AuditTail {
			trail = trail[len(trail)-opt.AuditTail:]
		}
		for i := len(trail) - 1; i >= 0; i-- {
			v.Audit = append(v.Audit, trail[i])
		}
	}
	switch {
	case opt.Model && cfg.Campaign.Several():
		// With several responses there is no single optimum: the front
		// and its figures stand in its place.
		f, figs, err := SummariseFront(ctx, cfg, st)
		if err != nil {
			v.ModelNote = "no front yet: " + err.Error()
		}
		v.Front, v.Figures = f, figs
	case opt.Model:
		if err := v.model(ctx, cfg, st, opt); err != nil {
			v.ModelNote = err.Error()
		}
	}
	return v, nil
}

func values(space campaign.Space, p campaign.Point) []Value {
	out := make([]Value, 0, len(p))
	for i, f := range space {
		if i >= len(p) {
			break
		}
		out = append(out, Value{Factor: f.Name, Text: f.Display(p[i]), Unit: f.Unit})
	}
	return out
}

func runRow(space campaign.Space, resp campaign.Response, r *record.Run) RunRow {
	row := RunRow{ID: r.ID, Status: r.Status, Method: r.Method, Proposed: r.Proposed, SignedBy: r.SignedBy, Approvers: r.Approvers}
	if r.Point != nil {
		row.Setpoint = values(space, r.Point)
	}
	switch r.Status {
	case record.StatusDone:
		row.Result = strings.TrimSpace(fmt.Sprintf("%.4g %s", r.Value, resp.Unit))
	case record.StatusFailed:
		row.Result = "no value: " + r.Failed
	}
	for _, f := range r.Files {
		row.Files = append(row.Files, filepath.Base(f))
	}
	for name, v := range r.Values {
		if name != resp.Name {
			row.Others = append(row.Others, strings.TrimSpace(fmt.Sprintf("%s %.4g %s", name, v.Value, v.Unit)))
		}
	}
	sort.Strings(row.Others)
	return row
}

func stopping(cfg agent.Config, st *record.State) (string, string) {
	s := cfg.Planner.Stop
	var rule []string
	rule = append(rule, fmt.Sprintf("budget of %d runs", cfg.Campaign.MaxRuns))
	if cfg.Campaign.Several() {
		// The single-response tests do not apply to a front.
		s = planner.StopConfig{HypervolumeBelow: s.HypervolumeBelow}
		if s.HypervolumeBelow > 0 {
			rule = append(rule, fmt.Sprintf("expected hypervolume improvement at most %g%% of the front's hypervolume", 100*s.HypervolumeBelow))
		}
	}
	if len(s.Tolerance) > 0 {
		var parts []string
		for _, f := range cfg.Campaign.Factors {
			if w, ok := s.Tolerance[f.Name]; ok {
				parts = append(parts, strings.TrimSpace(fmt.Sprintf("%s %g %s", f.Name, w, f.Unit)))
			}
		}
		rule = append(rule, "optimum's location known to within "+strings.Join(parts, ", "))
	}
	if s.EIBelow > 0 {
		rule = append(rule, fmt.Sprintf("expected improvement below %g %s", s.EIBelow, cfg.Campaign.Response.Unit))
	}
	if len(s.Tolerance) > 0 && cfg.Planner.SearchesElsewhere() {
		rule = append(rule, "a search outside the best run's basin found nothing better")
	}
	if s.ValueTolerance > 0 {
		rule = append(rule, fmt.Sprintf("best run within %g %s of the optimum with high probability", s.ValueTolerance, cfg.Campaign.Response.Unit))
	}
	used := 0
	for _, r := range st.Runs {
		if r.Status != record.StatusRejected && r.Status != record.StatusRefused && r.Status != record.StatusExpired && !r.External {
			used++
		}
	}
	state := fmt.Sprintf("proposing: %d of %d runs used", used, cfg.Campaign.MaxRuns)
	switch {
	case st.Stopped != "":
		state = "stopped: " + st.Stopped
	case used >= cfg.Campaign.MaxRuns:
		state = fmt.Sprintf("stopped: the budget of %d runs is spent", cfg.Campaign.MaxRuns)
	}
	return state, strings.Join(rule, "; ")
}

func instrument(ic agent.InstrumentConfig, only bool, notices []string, st *record.State, entries []record.Entry) Instrument {
	in := Instrument{Name: ic.Name, ExportDir: ic.Watch.Dir, Pattern: ic.Watch.Pattern, HandoffDir: ic.HandoffDir}
	if _, err := os.ReadDir(ic.Watch.Dir); err != nil {
		in.ExportProblem = err.Error()
	}
	for _, n := range notices {
		if strings.Contains(n, ic.Watch.Dir) {
			in.Notices = append(in.Notices, n)
		}
	}
	mine := func(path string) bool {
		rel, err := filepath.Rel(ic.Watch.Dir, path)
		return err == nil && filepath.IsLocal(rel)
	}
	for _, e := range entries {
		switch {
		case e.Kind == record.KindIngest && mine(e.File):
			in.LastResult, in.LastFile = e.Time, filepath.Base(e.File)
		case e.Kind == record.KindHandoffOK && (only || filepath.Dir(e.File) == filepath.Clean(ic.HandoffDir)):
			in.LastHandoff = e.Time
		}
	}
	if des, err := os.ReadDir(ic.HandoffDir); err == nil {
		for _, d := range des {
			if d.Type().IsRegular() && !strings.HasPrefix(d.Name(), ".") && strings.HasSuffix(d.Name(), "."+ic.HandoffFormat) {
				in.Waiting = append(in.Waiting, d.Name())
			}
		}
	}
	for _, r := range st.InFlight() {
		if r.Instrument == ic.Name || (only && r.Instrument == "") {
			in.InFlight = append(in.InFlight, r.ID)
		}
	}
	return in
}

// model fits the surrogate, finds where the optimum probably is and
// draws the figures.
func (v *View) model(ctx context.Context, cfg agent.Config, st *record.State, opt BuildOptions) error {
	trials := st.Trials()
	runs := st.TrialRuns()
	resp := cfg.Campaign.Response
	space := cfg.Campaign.Factors
	values := make([]float64, len(trials))
	for i, t := range trials {
		values[i] = t.Value
	}
	if len(trials) > 0 {
		if f, err := plots.BestSoFar(resp, values); err == nil {
			v.Figures = append(v.Figures, f)
		}
	}
	pl := planner.New(cfg.Campaign, cfg.Planner)
	d, fitted, err := pl.Diagnose(ctx, trials)
	if err != nil {
		return fmt.Errorf("no model yet: %v", err)
	}
	m := &Model{Kernel: d.Kernel, Units: d.Units, Runs: d.Runs, LogLikelihood: d.LogLikelihood,
		SignalSD: d.SignalSD, NoiseSD: d.NoiseSD, Additive: d.Additive, AdditiveOn: cfg.Planner.Additive, LOORMSE: d.LOORMSE, Outside2: d.Outside2, SetAside: agent.SetAsideNote(st)}
	for _, s := range d.LengthScales {
		m.Scales = append(m.Scales, strings.TrimSpace(fmt.Sprintf("%s %.3g %s", s.Factor, s.Value, s.Unit)))
	}
	worst := append([]planner.CheckPoint(nil), d.Checks...)
	sort.Slice(worst, func(i, j int) bool { return math.Abs(worst[i].Standardised) > math.Abs(worst[j].Standardised) })
	for _, c := range worst[:min(3, len(worst))] {
		m.Worst = append(m.Worst, fmt.Sprintf("%s measured %.4g, predicted from the others %.4g (standardised error %+.2f)", runs[c.Index].ID, c.Measured, c.Predicted, c.Standardised))
	}
	v.Model = m
	o, err := pl.OptimumOf(ctx, fitted, cfg.Planner.Samples, rand.New(rand.NewPCG(cfg.Campaign.Seed, 0x0b7)))
	if err != nil {
		return fmt.Errorf("optimum not computed: %v", err)
	}
	v.Optimum = SummariseOptimum(cfg, o, trials, d.LengthScales)
	// The slices run through the predicted optimum: the median of the
	// draws' minimisers, snapped to a valid setpoint.
	centre := make(campaign.Point, len(space))
	for k := range space {
		col := make([]float64, len(o.Minimisers))
		for i, p := range o.Minimisers {
			col[i] = p[k]
		}
		sort.Float64s(col)
		centre[k] = col[len(col)/2]
	}
	centre = space.Snap(centre)
	add := func(f plots.Figure, err error) {
		if err == nil {
			v.Figures = append(v.Figures, f)
		}
	}
	for k, f := range space {
		bands, err := pl.Slice(fitted, centre, k, 121)
		if err != nil {
			continue
		}
		for i := range bands {
			bands[i].Median, bands[i].Low, bands[i].High = resp.Clamp(bands[i].Median), resp.Clamp(bands[i].Low), resp.Clamp(bands[i].High)
		}
		add(plots.Slice(f, resp, bands, trials, k))
	}
	for k, f := range space {
		if k < len(o.Marginals) {
			add(plots.Location(f, o.Marginals[k]))
		}
	}
	if len(space) >= 2 {
		v.PairX, v.PairY = 0, 1
		if i := space.Index(opt.PairX); i >= 0 {
			v.PairX = i
		}
		if j := space.Index(opt.PairY); j >= 0 && j != v.PairX {
			v.PairY = j
		} else if v.PairY == v.PairX {
			v.PairY = (v.PairX + 1) % len(space)
		}
		xs := make([]float64, len(o.Minimisers))
		ys := make([]float64, len(o.Minimisers))
		for i, p := range o.Minimisers {
			xs[i], ys[i] = p[v.PairX], p[v.PairY]
		}
		add(plots.Pair(space[v.PairX], space[v.PairY], xs, ys, trials, v.PairX, v.PairY))
	}
	best := math.NaN()
	if v.Best != nil {
		best = st.Best(resp).Value
	}
	add(plots.BestValue(resp, o.Values, best))
	add(plots.LeaveOneOut(resp, d.Checks))
	return nil
}

// Figure returns the figure with the given name, or nil.
func (v *View) Figure(name string) *plots.Figure {
	for i := range v.Figures {
		if v.Figures[i].Name == name {
			return &v.Figures[i]
		}
	}
	return nil
}

// SummariseOptimum says where the optimum probably is, per factor, and
// how good it is, for people: the best achievable value held to the
// response's physical range (the draws' values are clamped in place), the
// most likely value and highest-density region of each factor, the box,
// and cautions when the likely optimum lies beyond the review limits or
// far from every run.
func SummariseOptimum(cfg agent.Config, o *planner.Optimum, trials []campaign.Trial, scales []planner.Scale) *Optimum {
	resp, space := cfg.Campaign.Response, cfg.Campaign.Factors
	// The quantiles of clamped draws are the clamped quantiles.
	for i := range o.Values {
		o.Values[i] = resp.Clamp(o.Values[i])
	}
	ov := &Optimum{Samples: o.Samples, BoxMass: o.BoxMass, Median: resp.Clamp(o.ValueMedian), Low: resp.Clamp(o.ValueLow), High: resp.Clamp(o.ValueHigh),
		BestWithin: o.BestWithin, Tolerance: cfg.Planner.Stop.ValueTolerance}
	if resp.Min != nil || resp.Max != nil {
		ov.Bounded = fmt.Sprintf("%s is held to its physical range (%s): the model's bands and the best achievable value are clipped to it", resp.Name, resp.RangeText())
	}
	likely := make(campaign.Point, len(space))
	for k, f := range space {
		row := BoxRow{Factor: f.Name, Low: f.Display(o.Box[k][0]), High: f.Display(o.Box[k][1]), Unit: f.Unit}
		row.Likely, row.Region, likely[k] = locate(f, o.Minimisers, k)
		ov.Box = append(ov.Box, row)
	}
	ov.Beyond = beyond(cfg, likely, trials, scales)
	return ov
}

// locate summarises where the draws put factor k's optimum: the most
// likely value (the densest value of the heaviest piece of the 90%
// highest-density region; for a categorical factor the most frequent
// category) and the region's pieces with their shares of the draws.
func locate(f campaign.Factor, minimisers []campaign.Point, k int) (string, []string, float64) {
	col := make([]float64, len(minimisers))
	for i, p := range minimisers {
		col[i] = p[k]
	}
	if f.Kind == campaign.Categorical || f.Max <= f.Min {
		counts := map[float64]int{}
		for _, v := range col {
			counts[v]++
		}
		levels := make([]float64, 0, len(counts))
		for v := range counts {
			levels = append(levels, v)
		}
		sort.Slice(levels, func(a, b int) bool { return counts[levels[a]] > counts[levels[b]] })
		var region []string
		held := 0
		for _, v := range levels {
			if float64(held) >= 0.9*float64(len(col)) {
				break
			}
			held += counts[v]
			region = append(region, fmt.Sprintf("%s (%.0f%%)", f.Display(v), 100*float64(counts[v])/float64(len(col))))
		}
		if len(levels) == 0 {
			return "", nil, math.NaN()
		}
		return f.Display(levels[0]), region, levels[0]
	}
	pieces, err := planner.HighestDensity(col, f.Min, f.Max, 0.9)
	if err != nil {
		return "", nil, math.NaN()
	}
	var region []string
	for _, p := range pieces {
		region = append(region, fmt.Sprintf("%s to %s (%.0f%%)", f.Display(p.Lo), f.Display(p.Hi), 100*p.Mass))
	}
	mode := planner.Heaviest(pieces).Mode
	return f.Display(mode), region, mode
}

// beyond says when the most likely optimum lies outside the review
// limits, or farther than one length-scale from every run: what the model
// says of it there is an extrapolation, not something seen.
func beyond(cfg agent.Config, likely campaign.Point, trials []campaign.Trial, scales []planner.Scale) []string {
	var out []string
	space := cfg.Campaign.Factors
	box := cfg.Safety.ReviewBox(space)
	for k, f := range space {
		if math.IsNaN(likely[k]) || f.Kind == campaign.Categorical {
			continue
		}
		unit := ""
		if f.Unit != "" {
			unit = " " + f.Unit
		}
		switch {
		case likely[k] < box[k][0]:
			out = append(out, fmt.Sprintf("the most likely %s, %s%s, lies below the review limits (%s%s) by %s%s: runs there need a sign-off", f.Name, f.Display(likely[k]), unit, f.Display(box[k][0]), unit, f.Display(box[k][0]-likely[k]), unit))
		case likely[k] > box[k][1]:
			out = append(out, fmt.Sprintf("the most likely %s, %s%s, lies above the review limits (%s%s) by %s%s: runs there need a sign-off", f.Name, f.Display(likely[k]), unit, f.Display(box[k][1]), unit, f.Display(likely[k]-box[k][1]), unit))
		}
	}
	if len(trials) == 0 || len(scales) != len(space) {
		return out
	}
	nearest := math.Inf(1)
	for _, t := range trials {
		d := 0.0
		for k, f := range space {
			if f.Kind == campaign.Categorical || math.IsNaN(likely[k]) || !(scales[k].Value > 0) {
				continue
			}
			u := (likely[k] - t.Point[k]) / scales[k].Value
			d += u * u
		}
		nearest = math.Min(nearest, math.Sqrt(d))
	}
	if nearest > 1 {
		out = append(out, fmt.Sprintf("the most likely optimum is %.1f length-scales from the nearest run: the best achievable value there is the model's extrapolation, not a measurement", nearest))
	}
	return out
}
