package console

import (
	"net/http"
	"net/url"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"benchtender/agent"
	"benchtender/record"
)

// Every page renders for a running campaign with a held move, with the
// security headers, and the held move carries an approve and a reject
// button.
func TestPagesRender(t *testing.T) {
	f := newFixture(t, "", nil)
	c := browser(t)
	for _, p := range []string{"/", "/runs", "/holds", "/model", "/audit", "/model?x=flow&y=temp"} {
		code, body, _ := get(t, c, f.web.URL+p)
		if code != http.StatusOK {
			t.Fatalf("%s: %d\n%s", p, code, body)
		}
		if !strings.Contains(body, "console_test") || !strings.Contains(body, "not a safety system") {
			t.Errorf("%s: no campaign name or caution", p)
		}
	}
	_, body, tok := get(t, c, f.web.URL+"/holds")
	if tok == "" || !strings.Contains(body, "Approve "+f.held) || !strings.Contains(body, "Reject "+f.held) {
		t.Errorf("holds page lacks the form for %s", f.held)
	}
	resp, err := c.Get(f.web.URL + "/")
	if err != nil {
		t.Fatal(err)
	}
	resp.Body.Close()
	for _, h := range []string{"Content-Security-Policy", "X-Content-Type-Options", "Referrer-Policy"} {
		if resp.Header.Get(h) == "" {
			t.Errorf("no %s header", h)
		}
	}
	if !strings.Contains(resp.Header.Get("Content-Security-Policy"), "default-src 'none'") {
		t.Errorf("CSP %q", resp.Header.Get("Content-Security-Policy"))
	}
}

// A sign-off from the holds page lands in the inbox and the running
// campaign applies it: the approved move is handed off. Without a reason
// it is refused on the page and nothing reaches the inbox.
func TestSignoffFromTheConsole(t *testing.T) {
	f := newFixture(t, "", nil)
	c := browser(t)
	_, _, tok := get(t, c, f.web.URL+"/holds")
	code, body, _ := post(t, c, f.web.URL+"/holds/"+f.held, url.Values{"form_token": {tok}, "action": {"reject"}, "by": {"ada"}, "name": {"Ada L."}, "reason": {"  "}})
	if code != http.StatusUnprocessableEntity || !strings.Contains(body, "needs a reason") {
		t.Fatalf("reject without reason: %d, %q", code, excerpt(body, "Not signed"))
	}
	if !strings.Contains(body, `value="ada"`) {
		t.Error("the refused form does not keep what was typed")
	}
	if n := f.inbox(t); len(n) != 0 {
		t.Fatalf("inbox holds %v after a refused sign-off", n)
	}
	code, _, hdr := post(t, c, f.web.URL+"/holds/"+f.held, url.Values{"form_token": {tok}, "action": {"approve"}, "by": {"ada"}, "name": {"Ada L."}, "reason": {"checked the vessel"}})
	if code != http.StatusSeeOther || !strings.HasPrefix(hdr.Get("Location"), "/holds?sent="+f.held) {
		t.Fatalf("approve: %d to %q", code, hdr.Get("Location"))
	}
	e := f.waitFor(t, "the approval applied", func(e record.Entry) bool { return e.Kind == record.KindSignoff })
	if e.By != "ada" || e.Name != "Ada L." || e.Reason != "checked the vessel" || e.Run != f.held {
		t.Errorf("sign-off entry %+v", e)
	}
	f.waitFor(t, "the handoff", func(e record.Entry) bool { return e.Kind == record.KindHandoffOK && e.Run == f.held })
	if _, err := os.Stat(filepath.Join(f.cfg.Instrument.HandoffDir, f.held+".csv")); err != nil {
		t.Errorf("no handoff file: %v", err)
	}
	_, body, _ = get(t, c, f.web.URL+"/holds?sent="+f.held+"&action=approve")
	if !strings.Contains(body, "inbox; the running campaign checks it") {
		t.Error("no notice after the sign-off")
	}
}

// The checks in front of every state change: a form token bound to the
// browser, Go's cross-origin protection, POST only, a known Host, a
// bounded body.
func TestStateChangesAreGuarded(t *testing.T) {
	f := newFixture(t, "", nil)
	c := browser(t)
	_, _, tok := get(t, c, f.web.URL+"/holds")
	good := url.Values{"form_token": {tok}, "action": {"approve"}, "by": {"ada"}, "name": {"Ada"}, "reason": {"ok"}}
	u := f.web.URL + "/holds/" + f.held

	noTok := url.Values{"action": {"approve"}, "by": {"ada"}, "name": {"Ada"}, "reason": {"ok"}}
	if code, _, _ := post(t, c, u, noTok); code != http.StatusForbidden {
		t.Errorf("no form token: %d", code)
	}
	other := browser(t) // another browser's cookie does not match tok
	get(t, other, f.web.URL+"/holds")
	if code, _, _ := post(t, other, u, good); code != http.StatusForbidden {
		t.Errorf("a form token of another browser: %d", code)
	}
	req, _ := http.NewRequest(http.MethodPost, u, strings.NewReader(good.Encode()))
	req.Header.Set("Content-Type", "application/x-www-form-urlencoded")
	req.Header.Set("Sec-Fetch-Site", "cross-site")
	if resp, err := c.Do(req); err != nil || resp.StatusCode != http.StatusForbidden {
		t.Errorf("cross-site POST: %v %v", resp.StatusCode, err)
	}
	if code, _, _ := get(t, c, u+"?"+good.Encode()); code != http.StatusMethodNotAllowed {
		t.Errorf("GET on a sign-off: %d", code)
	}
	req, _ = http.NewRequest(http.MethodGet, f.web.URL+"/", nil)
	req.Host = "attacker.example:80"
	if resp, err := c.Do(req); err != nil || resp.StatusCode != http.StatusMisdirectedRequest {
		t.Errorf("foreign Host header: %v %v", resp.StatusCode, err)
	}
	big := url.Values{"form_token": {tok}, "action": {"approve"}, "by": {"ada"}, "name": {"Ada"}, "reason": {strings.Repeat("x", 70<<10)}}
	if code, _, _ := post(t, c, u, big); code != http.StatusBadRequest {
		t.Errorf("a 70 KiB form: %d", code)
	}
	if n := f.inbox(t); len(n) != 0 {
		t.Fatalf("inbox holds %v after refused requests", n)
	}
	// And the good request still goes through.
	if code, _, _ := post(t, c, u, good); code != http.StatusSeeOther {
		t.Errorf("good sign-off: %d", code)
	}
	if n := f.inbox(t); len(n) != 1 {
		t.Errorf("inbox %v after one good sign-off", n)
	}
}

// Off loopback the console needs a tokens file, private to its owner;
// with one, every page asks for sign-in, a token works only in a POST
// body or a Bearer header (never the URL), and a sign-off carries the
// token's person whatever the form says.
func TestTokens(t *testing.T) {
	cfg := agent.Config{}
	cfg.Console.Listen = "0.0.0.0:8470"
	if _, err := New(cfg, Options{}); err == nil || !strings.Contains(err.Error(), "tokens_file") {
		t.Errorf("non-loopback without tokens: %v", err)
	}
	dir := t.TempDir()
	tokens := filepath.Join(dir, "tokens")
	const token = "3f6c1a9e0b7d4c2a8e5f1b3d6a9c0e2f"
	os.WriteFile(tokens, []byte("# lab tokens\n"+token+" grace Grace H. Murray\n"), 0o644)
	cfg.Console.TokensFile = tokens
	if _, err := New(cfg, Options{}); err == nil || !strings.Contains(err.Error(), "group or others") {
		t.Errorf("world-readable tokens file: %v", err)
	}
	os.Chmod(tokens, 0o600)
	os.WriteFile(tokens, []byte("short grace Grace\n"), 0o600)
	if _, err := New(cfg, Options{}); err == nil || !strings.Contains(err.Error(), "shorter") {
		t.Errorf("short token: %v", err)
	}

	f := newFixture(t, "\n[console]\nlisten = \"127.0.0.1:0\"\ntokens_file = \"tokens\"\n", map[string]string{"tokens": token + " grace Grace H. Murray\n"})
	c := browser(t)
	for _, p := range []string{"/", "/holds", "/?token=" + token} {
		code, _, _ := get(t, c, f.web.URL+p)
		if code != http.StatusSeeOther {
			t.Errorf("%s before sign-in: %d", p, code)
		}
	}
	if code, _, _ := get(t, c, f.web.URL+"/metrics"); code != http.StatusUnauthorized {
		t.Errorf("metrics without a token: %d", code)
	}
	req, _ := http.NewRequest(http.MethodGet, f.web.URL+"/metrics", nil)
	req.Header.Set("Authorization", "Bearer "+token)
	resp, err := c.Do(req)
	if err != nil || resp.StatusCode != http.StatusOK {
		t.Fatalf("metrics with a Bearer token: %v %v", resp.StatusCode, err)
	}
	resp.Body.Close()
	_, _, tok := get(t, c, f.web.URL+"/login")
	if code, _, _ := post(t, c, f.web.URL+"/login", url.Values{"form_token": {tok}, "token": {"0000" + token[4:]}}); code != http.StatusUnauthorized {
		t.Errorf("wrong token: %d", code)
	}
	if code, _, _ := post(t, c, f.web.URL+"/login", url.Values{"form_token": {tok}, "token": {token}}); code != http.StatusSeeOther {
		t.Fatalf("sign-in: %d", code)
	}
	code, body, tok := get(t, c, f.web.URL+"/holds")
	if code != http.StatusOK || !strings.Contains(body, "Signing as <b>Grace H. Murray</b>") {
		t.Fatalf("holds after sign-in: %d", code)
	}
	code, _, _ = post(t, c, f.web.URL+"/holds/"+f.held, url.Values{"form_token": {tok}, "action": {"reject"}, "by": {"mallory"}, "name": {"Mallory"}, "reason": {"too hot"}})
	if code != http.StatusSeeOther {
		t.Fatalf("reject: %d", code)
	}
	e := f.waitFor(t, "the rejection", func(e record.Entry) bool { return e.Kind == record.KindSignoff })
	if e.By != "grace" || e.Name != "Grace H. Murray" {
		t.Errorf("signed as %s (%s), want the token's person", e.By, e.Name)
	}
}

// The metrics endpoint speaks the Prometheus text format and counts what
// the daemon reports.
func TestMetrics(t *testing.T) {
	f := newFixture(t, "", nil)
	m := NewMetrics(f.cfg)
	m.Entry(record.Entry{Kind: record.KindIngest})
	m.Entry(record.Entry{Kind: record.KindIngest, Revision: 2})
	m.Entry(record.Entry{Kind: record.KindSignoff, Action: record.ActionApprove})
	m.Planned(250e6)
	srv, err := New(f.cfg, Options{Metrics: m})
	if err != nil {
		t.Fatal(err)
	}
	f.web.Config.Handler = srv.Handler()
	_, body, _ := get(t, browser(t), f.web.URL+"/metrics")
	for _, want := range []string{
		`benchtender_journal_entries_total{campaign="console_test",kind="ingest"} 2`,
		`benchtender_journal_entries_total{campaign="console_test",kind="signoff-approve"} 1`,
		`benchtender_journal_entries_total{campaign="console_test",kind="revision"} 1`,
		`benchtender_runs_held{campaign="console_test"} 1`,
		`benchtender_plan_seconds_count{campaign="console_test"} 1`,
		"# TYPE benchtender_ingest_lag_seconds histogram",
	} {
		if !strings.Contains(body, want) {
			t.Errorf("metrics lack %q", want)
		}
	}
}

func excerpt(s, near string) string {
	i := strings.Index(s, near)
	if i < 0 {
		return "(not found)"
	}
	return s[i:min(len(s), i+200)]
}

// The report carries the audit trail's head, to be copied into a notebook,
// and whether the record checked when it was written (issue 19).
func TestReportCarriesTheAuditHead(t *testing.T) {
	f := newFixture(t, "", nil)
	v, err := Build(t.Context(), f.cfg, BuildOptions{})
	if err != nil {
		t.Fatal(err)
	}
	var b strings.Builder
	if err := Report(&b, v); err != nil {
		t.Fatal(err)
	}
	if v.AuditHead == "" || !strings.Contains(b.String(), v.AuditHead) || !strings.Contains(b.String(), "the keyed chain verifies and the journal agrees") {
		t.Errorf("report lacks the audit head %q or the check:\n%s", v.AuditHead, excerpt(b.String(), "Audit trail"))
	}
}
