// Package console serves the technician's console and writes the
// scientist's report.
//
// The console is a small set of plain HTML pages served by the daemon
// (net/http, html/template, assets embedded): the campaign at a glance,
// the runs with their files, the held moves with approve and reject, the
// model and where the optimum probably is, and the audit trail. A
// sign-off is left in the campaign's inbox exactly as `benchtender
// approve` does, and the daemon checks and applies it; the console itself
// writes nothing else.
//
// Security: loopback only unless a tokens file is configured; tokens are
// compared in constant time and never travel in URLs; every state change
// is a POST checked by Go's cross-origin protection and a form token; the
// Host header must be one of the console's own names (against DNS
// rebinding); timeouts and body limits bound every request.
//
// The report (Report) is the same content in one self-contained HTML file.
package console

import (
	"context"
	"embed"
	"encoding/base64"
	"fmt"
	"html/template"
	"net"
	"net/http"
	"os"
	"strings"
	"sync"
	"time"

	"github.com/rs/zerolog"

	"benchtender/agent"
	"benchtender/record"
)

//go:embed templates/*.html static/*
var assets embed.FS

// Options are the server's collaborators.
type Options struct {
	Logger zerolog.Logger
	// ConfigPath is reread for every sign-off, so that a sign-off is
	// bound to the limits in force (the daemon refuses one bound to
	// older limits).
	ConfigPath string
	Metrics    *Metrics
	Now        func() time.Time
}

// Server is the console.
type Server struct {
	cfg   agent.Config
	opt   Options
	log   zerolog.Logger
	users []user // nil: nobody signs in (loopback only)
	sess  *sessions
	hosts map[string]bool
	pages *template.Template
	cache viewCache
	ln    net.Listener
	srv   *http.Server
}

// Limits of every request.
const (
	maxBody       = 64 << 10
	maxHeader     = 32 << 10
	sessionLength = 12 * time.Hour
)

// New prepares the console for cfg's [console] section. It refuses a
// tokens file that others can read, and an address other than loopback
// without one.
func New(cfg agent.Config, opt Options) (*Server, error) {
	if opt.Now == nil {
		opt.Now = time.Now
	}
	cc := cfg.Console
	s := &Server{cfg: cfg, opt: opt, log: opt.Logger.With().Str("component", "console").Logger(), sess: newSessions(sessionLength)}
	if cc.TokensFile != "" {
		users, err := loadTokens(cc.TokensFile)
		if err != nil {
			return nil, err
		}
		s.users = users
	} else if !cc.Loopback() {
		return nil, fmt.Errorf("console: %s is not a loopback address; set console.tokens_file to serve it", cc.Listen)
	}
	s.hosts = map[string]bool{"localhost": true, "127.0.0.1": true, "::1": true}
	if host, _, err := net.SplitHostPort(cc.Listen); err == nil && host != "" && host != "0.0.0.0" && host != "::" {
		s.hosts[strings.ToLower(host)] = true
	}
	if name, err := os.Hostname(); err == nil {
		s.hosts[strings.ToLower(name)] = true
	}
	for _, h := range cc.Hosts {
		s.hosts[strings.ToLower(strings.TrimSpace(h))] = true
	}
	t, err := template.New("").Funcs(funcs()).ParseFS(assets, "templates/*.html")
	if err != nil {
		return nil, fmt.Errorf("console: templates: %w", err)
	}
	s.pages = t
	return s, nil
}

// Listen binds the console's address (":0" ports pick a free one).
func (s *Server) Listen() error {
	ln, err := net.Listen("tcp", s.cfg.Console.Listen)
	if err != nil {
		return fmt.Errorf("console: %w", err)
	}
	s.ln = ln
	return nil
}

// Addr is the bound address.
func (s *Server) Addr() string {
	if s.ln == nil {
		return ""
	}
	return s.ln.Addr().String()
}

// Serve serves until ctx is done, then shuts down within 5 s.
func (s *Server) Serve(ctx context.Context) error {
	if s.ln == nil {
		if err := s.Listen(); err != nil {
			return err
		}
	}
	s.srv = &http.Server{
		Handler:           s.Handler(),
		ReadHeaderTimeout: 5 * time.Second,
		ReadTimeout:       15 * time.Second,
		WriteTimeout:      60 * time.Second,
		IdleTimeout:       2 * time.Minute,
		MaxHeaderBytes:    maxHeader,
		ErrorLog:          nil,
	}
	done := make(chan error, 1)
	go func() { done <- s.srv.Serve(s.ln) }()
	s.log.Info().Str("addr", "http://"+s.Addr()).Bool("tokens", s.users != nil).Msg("console serving")
	select {
	case err := <-done:
		return fmt.Errorf("console: %w", err)
	case <-ctx.Done():
		sctx, cancel := context.WithTimeout(context.Background(), 5*time.Second)
		defer cancel()
		err := s.srv.Shutdown(sctx)
		<-done
		return err
	}
}

// Handler is the console with every check in front of it.
func (s *Server) Handler() http.Handler {
	mux := http.NewServeMux()
	mux.HandleFunc("GET /{$}", s.page("overview"))
	mux.HandleFunc("GET /runs", s.page("runs"))
	mux.HandleFunc("GET /holds", s.page("holds"))
	mux.HandleFunc("POST /holds/{run}", s.signoff)
	mux.HandleFunc("POST /all-stop", s.allStop)
	mux.HandleFunc("POST /resume", s.resume)
	mux.HandleFunc("GET /model", s.page("model"))
	mux.HandleFunc("GET /audit", s.page("audit"))
	mux.HandleFunc("GET /static/style.css", s.style)
	mux.HandleFunc("GET /login", s.loginPage)
	mux.HandleFunc("POST /login", s.login)
	mux.HandleFunc("POST /logout", s.logout)
	if s.opt.Metrics != nil {
		mux.Handle("GET /metrics", s.opt.Metrics.Handler())
	}
	cop := http.NewCrossOriginProtection()
	cop.SetDenyHandler(http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		http.Error(w, "refused: a request from another site may not change anything here", http.StatusForbidden)
	}))
	return s.hostCheck(s.headers(cop.Handler(s.auth(mux))))
}

// hostCheck refuses requests whose Host header is not one of the
// console's names: a page elsewhere that rebinds its own name to this
// address cannot read or drive the console.
func (s *Server) hostCheck(h http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		host := r.Host
		if hh, _, err := net.SplitHostPort(host); err == nil {
			host = hh
		}
		host = strings.ToLower(strings.Trim(host, "[]"))
		if !s.hosts[host] {
			http.Error(w, "unknown host name; add it to console.hosts if it is meant", http.StatusMisdirectedRequest)
			return
		}
		h.ServeHTTP(w, r)
	})
}

// headers sets the security headers and bounds the request body.
func (s *Server) headers(h http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		hd := w.Header()
		hd.Set("Content-Security-Policy", "default-src 'none'; style-src 'self'; img-src 'self' data:; form-action 'self'; frame-ancestors 'none'; base-uri 'none'")
		hd.Set("X-Content-Type-Options", "nosniff")
		hd.Set("Referrer-Policy", "no-referrer")
		hd.Set("X-Frame-Options", "DENY")
		hd.Set("Cache-Control", "no-store")
		r.Body = http.MaxBytesReader(w, r.Body, maxBody)
		h.ServeHTTP(w, r)
	})
}

// Cookie names.
const (
	clientCookie  = "bt_client"
	sessionCookie = "bt_session"
)

type ctxKey int

const (
	keyUser ctxKey = iota
	keyClient
)

// auth gives every browser a client id (for form tokens) and, when
// tokens are configured, demands a signed-in session or an
// "Authorization: Bearer" token for everything but the sign-in page and
// the style sheet.
func (s *Server) auth(h http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		client := ""
		if c, err := r.Cookie(clientCookie); err == nil && len(c.Value) == 64 {
			client = c.Value
		} else if r.Method == http.MethodGet {
			client = randomID()
			s.setCookie(w, clientCookie, client, 0)
		}
		ctx := context.WithValue(r.Context(), keyClient, client)
		var u *user
		if s.users != nil {
			if c, err := r.Cookie(sessionCookie); err == nil {
				u = s.sess.lookup(c.Value, s.opt.Now())
			}
			if tok, ok := strings.CutPrefix(r.Header.Get("Authorization"), "Bearer "); ok && u == nil {
				u = match(s.users, strings.TrimSpace(tok))
			}
			open := r.URL.Path == "/login" || r.URL.Path == "/static/style.css"
			if u == nil && !open {
				if r.Method == http.MethodGet && r.URL.Path != "/metrics" {
					http.Redirect(w, r, "/login", http.StatusSeeOther)
					return
				}
				http.Error(w, "sign in first", http.StatusUnauthorized)
				return
			}
			ctx = context.WithValue(ctx, keyUser, u)
		}
		h.ServeHTTP(w, r.WithContext(ctx))
	})
}

func (s *Server) setCookie(w http.ResponseWriter, name, value string, maxAge int) {
	http.SetCookie(w, &http.Cookie{Name: name, Value: value, Path: "/", HttpOnly: true, SameSite: http.SameSiteStrictMode, MaxAge: maxAge})
}

func userOf(r *http.Request) *user {
	u, _ := r.Context().Value(keyUser).(*user)
	return u
}

func clientOf(r *http.Request) string {
	c, _ := r.Context().Value(keyClient).(string)
	return c
}

func (s *Server) style(w http.ResponseWriter, r *http.Request) {
	b, err := assets.ReadFile("static/style.css")
	if err != nil {
		http.Error(w, "no style sheet", http.StatusInternalServerError)
		return
	}
	w.Header().Set("Content-Type", "text/css; charset=utf-8")
	w.Header().Set("Cache-Control", "max-age=300")
	w.Write(b)
}

// page data shared by every page.
type pageData struct {
	Page      string
	V         *View
	User      *user
	SignIn    bool // tokens are in use
	FormToken string
	Notice    string
	Problem   string
	Form      map[string]string // values to show again after a refused form
	Report    bool
	CSS       template.CSS
}

func (s *Server) page(name string) http.HandlerFunc {
	return func(w http.ResponseWriter, r *http.Request) {
		s.render(w, r, name, http.StatusOK, "", nil)
	}
}

func (s *Server) render(w http.ResponseWriter, r *http.Request, name string, status int, problem string, form map[string]string) {
	opt := BuildOptions{Model: name == "overview" || name == "model", PairX: r.URL.Query().Get("x"), PairY: r.URL.Query().Get("y"), Now: s.opt.Now}
	if name == "audit" {
		opt.AuditTail = 500
	}
	v, err := s.cache.get(r.Context(), s.currentConfig(), opt)
	if err != nil {
		s.log.Error().Err(err).Msg("cannot read the campaign")
		http.Error(w, "cannot read the campaign: "+err.Error(), http.StatusInternalServerError)
		return
	}
	d := pageData{Page: name, V: v, User: userOf(r), SignIn: s.users != nil, FormToken: s.sess.formToken(clientOf(r)), Problem: problem, Form: form}
	switch sent := r.URL.Query().Get("sent"); {
	case sent == "all-stop" && name == "overview":
		d.Notice = "All-stop file written: every handoff halts at the campaign's next look (within a second or two)."
	case sent == "resume" && name == "overview":
		d.Notice = "Your resume is in the campaign's inbox; handoffs resume once the running campaign records it (within a second or two)."
	}
	if run := r.URL.Query().Get("sent"); run != "" && name == "holds" {
		for _, row := range v.Runs {
			if row.ID == run {
				d.Notice = fmt.Sprintf("Your %s of %s is in the campaign's inbox; the running campaign checks it and applies it within a second or two.", orWord(r.URL.Query().Get("action")), run)
			}
		}
	}
	w.Header().Set("Content-Type", "text/html; charset=utf-8")
	w.WriteHeader(status)
	if err := s.pages.ExecuteTemplate(w, name, d); err != nil {
		s.log.Error().Err(err).Str("page", name).Msg("page failed")
	}
}

func orWord(a string) string {
	switch a {
	case record.ActionApprove:
		return "approval"
	case record.ActionReject:
		return "rejection"
	}
	return "sign-off"
}

// currentConfig rereads the config file when one is known, falling back
// to the config the console started with.
func (s *Server) currentConfig() agent.Config {
	if s.opt.ConfigPath == "" {
		return s.cfg
	}
	cfg, err := agent.LoadConfig(s.opt.ConfigPath, nil)
	if err != nil {
		return s.cfg
	}
	return cfg
}

// postedForm parses a POSTed form and checks its form token; on false
// the request has been answered.
func (s *Server) postedForm(w http.ResponseWriter, r *http.Request) bool {
	if err := r.ParseForm(); err != nil {
		http.Error(w, "unreadable form", http.StatusBadRequest)
		return false
	}
	if !s.sess.validForm(clientOf(r), r.PostForm.Get("form_token")) {
		http.Error(w, "refused: the form is stale or came from elsewhere; reload the page and try again", http.StatusForbidden)
		return false
	}
	return true
}

// signoff takes an approval or rejection from the holds page.
func (s *Server) signoff(w http.ResponseWriter, r *http.Request) {
	if !s.postedForm(w, r) {
		return
	}
	run := r.PathValue("run")
	action := r.PostForm.Get("action")
	form := map[string]string{"run": run, "by": r.PostForm.Get("by"), "name": r.PostForm.Get("name"), "reason": r.PostForm.Get("reason")}
	refuse := func(why string) {
		s.log.Warn().Str("run", run).Str("action", action).Str("why", why).Msg("console sign-off refused")
		s.render(w, r, "holds", http.StatusUnprocessableEntity, why, form)
	}
	if action != record.ActionApprove && action != record.ActionReject {
		refuse("choose approve or reject")
		return
	}
	cfg, problem := s.signingConfig()
	if problem != "" {
		refuse(problem)
		return
	}
	req := agent.SignoffRequest{Run: run, Action: action, Reason: strings.TrimSpace(r.PostForm.Get("reason")),
		By: strings.TrimSpace(r.PostForm.Get("by")), Name: strings.TrimSpace(r.PostForm.Get("name"))}
	if u := userOf(r); u != nil {
		// Signed in: the signature is the token's person, whatever the
		// form says.
		req.By, req.Name = u.ID, u.Name
	}
	if action == record.ActionApprove {
		// The form sends every factor's value; the ones that differ
		// from the held move are the edit.
		req.Edit = map[string]float64{}
		for _, f := range cfg.Campaign.Factors {
			text := strings.TrimSpace(r.PostForm.Get("set_" + f.Name))
			form["set_"+f.Name] = text
			if text == "" {
				continue
			}
			v, err := f.Parse(text)
			if err != nil {
				refuse("nothing signed: " + err.Error())
				return
			}
			req.Edit[f.Name] = v
		}
		req.Replace = r.PostForm.Get("replace") == "1"
	}
	switch {
	case req.By == "" || req.Name == "":
		refuse(fmt.Sprintf("the %s of %s needs your user id and printed name", orWord(action), run))
		return
	case req.Reason == "":
		refuse(fmt.Sprintf("the %s of %s needs a reason", orWord(action), run))
		return
	}
	if _, err := agent.RequestSignoff(cfg, req); err != nil {
		refuse(err.Error())
		return
	}
	s.log.Info().Str("run", run).Str("action", action).Str("by", req.By).Msg("console sign-off left in the inbox")
	http.Redirect(w, r, "/holds?sent="+run+"&action="+action, http.StatusSeeOther)
}

// signingConfig is the config a sign-off is checked against: the file as
// it is now, or why nothing can be signed.
func (s *Server) signingConfig() (agent.Config, string) {
	if s.opt.ConfigPath == "" {
		return s.cfg, ""
	}
	c, err := agent.LoadConfig(s.opt.ConfigPath, nil)
	if err != nil {
		return agent.Config{}, "the config file does not validate now, so nothing can be signed: " + strings.ReplaceAll(err.Error(), "\n", "; ")
	}
	return c, ""
}

// allStop writes the all-stop file, as the all-stop command does: anyone
// may stop, with a reason.
func (s *Server) allStop(w http.ResponseWriter, r *http.Request) {
	if !s.postedForm(w, r) {
		return
	}
	by, reason := strings.TrimSpace(r.PostForm.Get("by")), strings.TrimSpace(r.PostForm.Get("reason"))
	if u := userOf(r); u != nil {
		by = u.ID + " (" + u.Name + ")"
	}
	if reason == "" {
		s.render(w, r, "overview", http.StatusUnprocessableEntity, "not stopped: say why (the reason is recorded with the all-stop)", nil)
		return
	}
	if by == "" {
		by = "(not given)"
	}
	file, err := agent.WriteAllStop(s.currentConfig(), by+" in the console", reason, s.opt.Now())
	if err != nil {
		s.log.Error().Err(err).Msg("console all-stop failed")
		s.render(w, r, "overview", http.StatusInternalServerError, "NOT STOPPED: "+err.Error()+". Use the instrument's own stop, or the all-stop command.", nil)
		return
	}
	s.log.Warn().Str("file", file).Str("by", by).Str("reason", reason).Msg("all-stop written from the console")
	http.Redirect(w, r, "/?sent=all-stop", http.StatusSeeOther)
}

// resume clears the all-stop by a named person with a reason, as the
// resume command does.
func (s *Server) resume(w http.ResponseWriter, r *http.Request) {
	if !s.postedForm(w, r) {
		return
	}
	refuse := func(why string) {
		s.render(w, r, "overview", http.StatusUnprocessableEntity, "not resumed: "+why, nil)
	}
	cfg, problem := s.signingConfig()
	if problem != "" {
		refuse(problem)
		return
	}
	req := agent.SignoffRequest{Action: agent.ActionResume, Reason: strings.TrimSpace(r.PostForm.Get("reason")),
		By: strings.TrimSpace(r.PostForm.Get("by")), Name: strings.TrimSpace(r.PostForm.Get("name"))}
	if u := userOf(r); u != nil {
		req.By, req.Name = u.ID, u.Name
	}
	if req.By == "" || req.Name == "" || req.Reason == "" {
		refuse("resuming needs your user id, printed name and a reason")
		return
	}
	if _, err := agent.RequestSignoff(cfg, req); err != nil {
		refuse(err.Error())
		return
	}
	s.log.Info().Str("by", req.By).Msg("console resume left in the inbox")
	http.Redirect(w, r, "/?sent=resume", http.StatusSeeOther)
}

func (s *Server) loginPage(w http.ResponseWriter, r *http.Request) {
	if s.users == nil {
		http.Redirect(w, r, "/", http.StatusSeeOther)
		return
	}
	s.renderLogin(w, r, http.StatusOK, "")
}

func (s *Server) renderLogin(w http.ResponseWriter, r *http.Request, status int, problem string) {
	w.Header().Set("Content-Type", "text/html; charset=utf-8")
	w.WriteHeader(status)
	d := pageData{Page: "login", V: &View{Campaign: s.cfg.Campaign.Name}, SignIn: true, FormToken: s.sess.formToken(clientOf(r)), Problem: problem}
	if err := s.pages.ExecuteTemplate(w, "login", d); err != nil {
		s.log.Error().Err(err).Msg("login page failed")
	}
}

// login exchanges a token (in the POST body, never the URL) for a
// session cookie.
func (s *Server) login(w http.ResponseWriter, r *http.Request) {
	if s.users == nil {
		http.Error(w, "this console has no sign-in", http.StatusNotFound)
		return
	}
	if !s.postedForm(w, r) {
		return
	}
	u := match(s.users, strings.TrimSpace(r.PostForm.Get("token")))
	if u == nil {
		s.log.Warn().Str("remote", r.RemoteAddr).Msg("console sign-in refused: unknown token")
		time.Sleep(500 * time.Millisecond) // slows guessing
		s.renderLogin(w, r, http.StatusUnauthorized, "That token is not known.")
		return
	}
	// A new client id and session at sign-in: an id planted before
	// cannot ride on it.
	s.setCookie(w, clientCookie, randomID(), 0)
	s.setCookie(w, sessionCookie, s.sess.start(u, s.opt.Now()), int(sessionLength/time.Second))
	s.log.Info().Str("user", u.ID).Msg("console sign-in")
	http.Redirect(w, r, "/", http.StatusSeeOther)
}

func (s *Server) logout(w http.ResponseWriter, r *http.Request) {
	if !s.postedForm(w, r) {
		return
	}
	if c, err := r.Cookie(sessionCookie); err == nil {
		s.sess.end(c.Value)
	}
	s.setCookie(w, sessionCookie, "", -1)
	http.Redirect(w, r, "/login", http.StatusSeeOther)
}

// viewCache keeps the last view with a model: fitting takes a second for
// a few hundred runs, and the journal changes only when a run does.
type viewCache struct {
	mu   sync.Mutex
	key  string
	view *View
}

func (c *viewCache) get(ctx context.Context, cfg agent.Config, opt BuildOptions) (*View, error) {
	if !opt.Model {
		return Build(ctx, cfg, opt)
	}
	key := journalKey(cfg) + "|" + opt.PairX + "|" + opt.PairY + "|" + cfg.Safety.Version()
	c.mu.Lock()
	defer c.mu.Unlock()
	if c.view != nil && c.key == key {
		// The model is the same; the rest is read again.
		fresh, err := Build(ctx, cfg, BuildOptions{Now: opt.Now, AuditTail: opt.AuditTail})
		if err != nil {
			return nil, err
		}
		fresh.Model, fresh.ModelNote, fresh.Optimum, fresh.Figures = c.view.Model, c.view.ModelNote, c.view.Optimum, c.view.Figures
		fresh.Front = c.view.Front
		fresh.PairX, fresh.PairY = c.view.PairX, c.view.PairY
		return fresh, nil
	}
	v, err := Build(ctx, cfg, opt)
	if err != nil {
		return nil, err
	}
	c.key, c.view = key, v
	return v, nil
}

func journalKey(cfg agent.Config) string {
	fi, err := os.Stat(cfg.Campaign.StateDir + string(os.PathSeparator) + "journal.log")
	if err != nil {
		return "none"
	}
	return fmt.Sprintf("%d-%d", fi.Size(), fi.ModTime().UnixNano())
}

// funcs returns the templates' helpers.
func funcs() template.FuncMap {
	return template.FuncMap{
		"svg": func(b []byte) template.URL {
			// Our own SVG from gonum/plot, shown as an image: the page's
			// policy forbids inline styles, an image document keeps its own.
			return template.URL("data:image/svg+xml;base64," + base64.StdEncoding.EncodeToString(b))
		},
		// when gives a time to the second, in UTC and saying so; the
		// audit trail's times come as RFC 3339 text.
		"when": func(v any) string {
			t, ok := v.(time.Time)
			if s, isText := v.(string); isText {
				var err error
				if t, err = time.Parse(time.RFC3339Nano, s); err != nil {
					return s
				}
				ok = true
			}
			if !ok || t.IsZero() {
				return "never"
			}
			return t.UTC().Format("2006-01-02 15:04:05 UTC")
		},
		"pct":  func(f float64) string { return fmt.Sprintf("%.0f%%", 100*f) },
		"num":  func(f float64) string { return fmt.Sprintf("%.4g", f) },
		"nan":  func(f float64) bool { return f != f },
		"join": strings.Join,
		"inc":  func(i int) int { return i + 1 },
		// formval is what a refused form sent for run, so that nothing
		// typed is lost, or the default.
		"formval": func(m map[string]string, run, k, def string) string {
			if m == nil || m["run"] != run {
				return def
			}
			if v, ok := m[k]; ok {
				return v
			}
			return def
		},
	}
}
