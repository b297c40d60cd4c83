package console

import (
	"context"
	"io"
	"net/http"
	"net/http/cookiejar"
	"net/http/httptest"
	"net/url"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/rs/zerolog"

	"benchtender/agent"
	"benchtender/record"
)

// campaignText is a two-factor campaign whose every move is held for
// sign-off (review_min on temp sits near the top of its range).
const campaignText = `
[campaign]
name = "console_test"
state_dir = "state"
seed = 5
max_runs = 4
initial_runs = 3

[[campaign.factor]]
name = "temp"
unit = "degC"
min = 20.0
max = 80.0

[[campaign.factor]]
name = "flow"
unit = "mL/min"
min = 1.0
max = 5.0

[campaign.response]
name = "purity"
unit = "%"
goal = "maximise"

[planner]
candidates = 300
refine = 2

[instrument]
name = "bench"
handoff_dir = "handoff"
handoff_format = "csv"
format = "bench_csv"
look_every = "50ms"

[instrument.watch]
dir = "exports"
pattern = "*.csv"
settle = "100ms"
rescan = "200ms"

[formats.bench_csv]
delimiter = ";"
run_id_source = "filename"
run_id_pattern = "(R[0-9]+)"

[formats.bench_csv.values.purity]
column = "Purity"
unit = "%"

[safety.limits.temp]
hard_min = 20.0
hard_max = 80.0
review_min = 79.0

[safety.limits.flow]
hard_min = 1.0
hard_max = 5.0

[log]
file = ""
`

// fixture is a running campaign (the real agent and planner) with one
// move held, and a console in front of it.
type fixture struct {
	dir, cfgPath string
	cfg          agent.Config
	events       chan record.Entry
	srv          *Server
	web          *httptest.Server
	held         string // the held run
}

// newFixture starts the campaign; console is its [console] section
// (loopback on a free port when ""), files are written (mode 0600) into
// its folder first.
func newFixture(t *testing.T, console string, files map[string]string) *fixture {
	t.Helper()
	dir := t.TempDir()
	if console == "" {
		console = "\n[console]\nlisten = \"127.0.0.1:0\"\n"
	}
	for name, text := range files {
		if err := os.WriteFile(filepath.Join(dir, name), []byte(text), 0o600); err != nil {
			t.Fatal(err)
		}
	}
	for _, d := range []string{"exports", "handoff"} {
		if err := os.Mkdir(filepath.Join(dir, d), 0o755); err != nil {
			t.Fatal(err)
		}
	}
	f := &fixture{dir: dir, cfgPath: filepath.Join(dir, "c.toml"), events: make(chan record.Entry, 256)}
	if err := os.WriteFile(f.cfgPath, []byte(campaignText+console), 0o644); err != nil {
		t.Fatal(err)
	}
	cfg, err := agent.LoadConfig(f.cfgPath, nil)
	if err != nil {
		t.Fatal(err)
	}
	f.cfg = cfg
	a, err := agent.New(cfg, agent.Options{Logger: zerolog.New(zerolog.NewTestWriter(t)), ConfigPath: f.cfgPath, Tick: 50 * time.Millisecond,
		Notify: func(e record.Entry) { f.events <- e }})
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() { done <- a.Run(ctx) }()
	var once sync.Once
	t.Cleanup(func() {
		once.Do(func() {
			cancel()
			if err := <-done; err != nil {
				t.Errorf("agent: %v", err)
			}
		})
	})
	e := f.waitFor(t, "a held proposal", func(e record.Entry) bool { return e.Kind == record.KindProposal })
	if e.Decision == nil || e.Decision.Verdict != "hold" {
		t.Fatalf("first proposal %+v is not held", e.Decision)
	}
	f.held = e.Run
	srv, err := New(cfg, Options{Logger: zerolog.New(zerolog.NewTestWriter(t)), ConfigPath: f.cfgPath, Metrics: NewMetrics(cfg)})
	if err != nil {
		t.Fatal(err)
	}
	f.srv = srv
	f.web = httptest.NewServer(srv.Handler())
	t.Cleanup(f.web.Close)
	return f
}

func (f *fixture) waitFor(t *testing.T, what string, ok func(record.Entry) bool) record.Entry {
	t.Helper()
	deadline := time.After(20 * time.Second)
	for {
		select {
		case e := <-f.events:
			if ok(e) {
				return e
			}
		case <-deadline:
			t.Fatalf("timed out waiting for %s", what)
		}
	}
}

// browser is an HTTP client with cookies that does not follow redirects.
func browser(t *testing.T) *http.Client {
	t.Helper()
	jar, err := cookiejar.New(nil)
	if err != nil {
		t.Fatal(err)
	}
	return &http.Client{Jar: jar, CheckRedirect: func(*http.Request, []*http.Request) error { return http.ErrUseLastResponse }}
}

var tokenField = regexp.MustCompile(`name="form_token" value="([0-9a-f]+)"`)

// get fetches a page and returns its body and the form token in it.
func get(t *testing.T, c *http.Client, u string) (int, string, string) {
	t.Helper()
	resp, err := c.Get(u)
	b := body(t, resp, err)
	tok := ""
	if m := tokenField.FindSubmatch(b); m != nil {
		tok = string(m[1])
	}
	return resp.StatusCode, string(b), tok
}

func post(t *testing.T, c *http.Client, u string, form url.Values) (int, string, http.Header) {
	t.Helper()
	resp, err := c.PostForm(u, form)
	b := body(t, resp, err)
	return resp.StatusCode, string(b), resp.Header
}

// body reads a response's body, failing the test on any error.
func body(t *testing.T, resp *http.Response, err error) []byte {
	t.Helper()
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	b, err := io.ReadAll(resp.Body)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

// inbox lists the sign-off requests waiting for the daemon.
func (f *fixture) inbox(t *testing.T) []string {
	t.Helper()
	des, _ := os.ReadDir(filepath.Join(f.cfg.Campaign.StateDir, "signoff"))
	var out []string
	for _, d := range des {
		if strings.HasSuffix(d.Name(), ".json") {
			out = append(out, d.Name())
		}
	}
	return out
}
